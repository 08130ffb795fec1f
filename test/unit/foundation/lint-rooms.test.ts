// The rule of the rooms is enforced by the lint (eslint.config.js), not only written down:
// a planted wrong-direction import in each kind of room fails, the allowed direction passes.
import { ESLint } from 'eslint';
import { describe, expect, it } from 'vitest';

const eslint = new ESLint({ cwd: process.cwd() });

async function restrictedImports(filePath: string, code: string): Promise<string[]> {
  const [result] = await eslint.lintText(code, { filePath });
  return result.messages.filter((message) => message.ruleId === 'no-restricted-imports').map((message) => message.message);
}

describe('rule of the rooms (eslint no-restricted-imports)', () => {
  const planted: Array<[string, string, RegExp]> = [
    ['server/radio/planted.ts', "import { openDatabase } from '../db/client.ts';\nexport const x = openDatabase;\n", /pure computation/],
    ['server/propagation/planted.ts', "import { buildApp } from '../api/app.ts';\nexport const x = buildApp;\n", /pure computation/],
    ['server/coverage/planted.ts', "import { WorkerPool } from '../jobs/pool.ts';\nexport const x = WorkerPool;\n", /pure computation/],
    ['server/planning/planted.ts', "import Fastify from 'fastify';\nexport const x = Fastify;\n", /HTTP server, database or queue/],
    ['server/terrain/planted.ts', "import { PrismaPg } from '@prisma/adapter-pg';\nexport const x = PrismaPg;\n", /HTTP server, database or queue/],
    ['server/siting/planted.ts', "import { Queue } from 'bullmq';\nexport const x = Queue;\n", /HTTP server, database or queue/],
    ['server/cli/planted.ts', "import { buildApp } from '../api/app.ts';\nexport const x = buildApp;\n", /never the API/],
    ['server/api/routes/planted.ts', "import type { Prisma } from '../../db/generated/client.ts';\nexport type X = Prisma.InputJsonValue;\n", /Prisma-generated types/],
  ];
  for (const [filePath, code, message] of planted) {
    it(`refuses a wrong-direction import in ${filePath}`, async () => {
      const messages = await restrictedImports(filePath, code);
      expect(messages).toHaveLength(1);
      expect(messages[0]).toMatch(message);
    });
  }

  it('allows the right directions: engines import engines, the CLI and API import app and db', async () => {
    expect(await restrictedImports('server/coverage/planted.ts', "import { freeSpaceLossDb } from '../propagation/p525.ts';\nexport const x = freeSpaceLossDb;\n")).toEqual([]);
    expect(await restrictedImports('server/cli/planted.ts', "import { openDatabase } from '../db/client.ts';\nexport const x = openDatabase;\n")).toEqual([]);
    expect(await restrictedImports('server/api/routes/planted.ts', "import type { JsonValue } from '../../db/types.ts';\nexport type X = JsonValue;\n")).toEqual([]);
  });
});
