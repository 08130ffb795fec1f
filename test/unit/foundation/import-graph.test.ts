// Import shape of the server, read from the sources (test/helpers/import-graph.ts):
// no import circles (type-only imports included: they tie modules together just the same),
// and the CLI loads a command's module only when that command runs, so the dispatcher and the
// smallest commands never load the database, Fastify, turf or geotiff.
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { projectRoot } from '../../../server/paths.ts';
import { findCircles, importGraph, staticallyLoaded } from '../../helpers/import-graph.ts';

const heavy = ['@prisma/client', '@electric-sql/pglite', 'pglite-prisma-adapter', 'pg', '@prisma/adapter-pg', 'fastify', 'bullmq', 'ioredis', '@turf/turf', 'geotiff', 'pdfkit', 'highs', 'qrcode'];

describe('import graph', () => {
  const scratch = mkdtempSync(join(tmpdir(), 'earshot-import-graph-'));
  afterAll(() => rmSync(scratch, { recursive: true, force: true }));

  it('finds a planted circle, also one made only of type imports', () => {
    mkdirSync(join(scratch, 'src'));
    writeFileSync(join(scratch, 'src', 'a.ts'), "import { b } from './b.ts';\nexport const a = b;\n");
    writeFileSync(join(scratch, 'src', 'b.ts'), "import type { C } from './c.ts';\nexport const b: C = 1;\n");
    writeFileSync(join(scratch, 'src', 'c.ts'), "import {\n  a,\n} from './a.ts';\nexport type C = typeof a;\n");
    const graph = importGraph(scratch, ['src']);
    expect(findCircles(graph, { includeTypes: true })).toEqual([['src/a.ts', 'src/b.ts', 'src/c.ts', 'src/a.ts']]);
    expect(findCircles(graph, { includeTypes: false })).toEqual([]);
  });

  it('server/, web/src and scripts have no import circle', () => {
    const graph = importGraph(projectRoot, ['server', 'web/src', 'scripts']);
    expect(graph.size).toBeGreaterThan(150);
    expect(findCircles(graph, { includeTypes: true })).toEqual([]);
  });

  it('the CLI dispatcher loads no command module at start (commands come through import())', () => {
    const { files, packages } = staticallyLoaded(projectRoot, 'server/cli.ts');
    expect([...files].sort()).toEqual(['server/cli.ts', 'server/cli/commands.ts', 'server/cli/framework.ts', 'server/cli/help-texts.ts']);
    expect([...packages]).toEqual(['zod']);
  });

  it('the radio and admin commands load neither the database client nor any heavy package at start', () => {
    for (const module of ['server/cli/radio.ts', 'server/cli/admin.ts']) {
      const { files, packages } = staticallyLoaded(projectRoot, module);
      expect([...files].filter((file) => file === 'server/db/client.ts'), module).toEqual([]);
      expect([...packages].filter((name) => heavy.includes(name)), module).toEqual([]);
    }
  });
});
