// The application's logs: building the app emits no Fastify deprecation warning (the request
// log switch goes through a LogController, not the deprecated top-level disableRequestLogging,
// FSTDEP023), and each request leaves exactly one line, at the configured request level
// (default debug), with the token of a sign-in URL redacted.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../server/api/app.ts';
import { loadConfig } from '../../server/config.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';

interface Entry {
  level: number;
  msg: string;
  req?: { method: string; url: string };
  res?: { statusCode: number };
}

describe('app logs', () => {
  let db: Database;
  let dataDir: string;
  beforeAll(async () => {
    dataDir = mkdtempSync(join(tmpdir(), 'earshot-logs-'));
    db = await openDatabase({ ...loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off' }), databaseUrl: undefined }, { memory: true });
  });
  afterAll(async () => {
    await db?.close();
    rmSync(dataDir, { recursive: true, force: true });
  });

  async function run(env: Record<string, string>): Promise<{ entries: Entry[]; warnings: Error[] }> {
    const lines: string[] = [];
    const stream = new Writable({
      write(chunk, _encoding, done) {
        lines.push(...String(chunk).split('\n').filter((line) => line.trim() !== ''));
        done();
      },
    });
    const warnings: Error[] = [];
    const onWarning = (warning: Error) => warnings.push(warning);
    process.on('warning', onWarning);
    try {
      const config = loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off', ...env });
      const app = await buildApp({ db, config, logger: { stream } });
      await app.ready();
      await app.inject({ method: 'GET', url: '/api/v1/health' });
      await app.inject({ method: 'GET', url: '/signin?token=abc123secret' });
      await app.close();
      // process.emitWarning dispatches on the next tick.
      await new Promise((resolve) => setImmediate(resolve));
    } finally {
      process.off('warning', onWarning);
    }
    return { entries: lines.map((line) => JSON.parse(line) as Entry), warnings };
  }

  it('no deprecation warning; one request line per request at debug by default, secrets redacted', async () => {
    const { entries, warnings } = await run({ EARSHOT_LOG_LEVEL: 'debug' });
    expect(warnings.map((w) => `${(w as { code?: string }).code ?? ''} ${w.message}`).filter((text) => /FSTDEP|deprecat/i.test(text))).toEqual([]);
    const requests = entries.filter((entry) => entry.req);
    expect(requests.map((entry) => [entry.msg, entry.level, entry.req?.method, entry.req?.url])).toEqual([
      ['request', 20, 'GET', '/api/v1/health'],
      ['request', 20, 'GET', '/signin?token=[redacted]'],
    ]);
    // Fastify's own pair of lines per request is off.
    expect(entries.some((entry) => entry.msg === 'incoming request' || entry.msg === 'request completed')).toBe(false);
  });

  it('at the default info level the request lines are hidden; EARSHOT_REQUEST_LOG_LEVEL=info shows them', async () => {
    expect((await run({})).entries.filter((entry) => entry.req)).toEqual([]);
    const shown = (await run({ EARSHOT_REQUEST_LOG_LEVEL: 'info' })).entries.filter((entry) => entry.req);
    expect(shown.map((entry) => entry.level)).toEqual([30, 30]);
  });
});
