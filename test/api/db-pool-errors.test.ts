// A PostgreSQL server that ends an idle pooled connection (a restart, an administrator's
// pg_terminate_backend, DROP DATABASE … WITH (FORCE)) must not kill the process: pg emits that as
// an 'error' on the pool, which Node treats as an uncaught exception when nobody listens (three
// test files of one CI run reported exactly that, 57P01, while their databases were dropped).
// The server keeps answering: the next query opens a fresh connection.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { openDatabase } from '../../server/db/client.ts';
import { createTestApp, postgresAdminUrl, postgresAvailable, type TestApp } from '../helpers/test-app.ts';

const needPostgres = postgresAvailable || process.env.CI === 'true';

describe.skipIf(!needPostgres)('database pool on PostgreSQL', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp('postgres');
  }, 120_000);
  afterAll(async () => {
    await t?.close();
  });

  it('an idle connection ended by the server is dropped quietly, and the next query works', async () => {
    const uncaught: unknown[] = [];
    const onUncaught = (error: unknown) => uncaught.push(error);
    process.on('uncaughtException', onUncaught);
    // A second handle on the same database, as a worker or a CLI command holds. After Prisma lets go
    // of the pool (it removes its own pool listener then), the pool still keeps idle connections
    // until it ends: the window in which a test's DROP DATABASE … WITH (FORCE) ended them.
    const other = await openDatabase(t.config, { changeFeed: false, syncKit: false });
    try {
      await Promise.all(Array.from({ length: 4 }, () => other.raw.query('SELECT pg_sleep(0.05)::text AS slept')));
      await other.prisma.$disconnect();
      const database = new URL(t.config.databaseUrl!).pathname.slice(1);
      const admin = new pg.Client({ connectionString: postgresAdminUrl });
      await admin.connect();
      let ended = 0;
      try {
        const result = await admin.query('SELECT pg_terminate_backend(pid) AS ok FROM pg_stat_activity WHERE datname = $1 AND pid <> pg_backend_pid()', [database]);
        ended = result.rows.filter((row: { ok: boolean }) => row.ok).length;
      } finally {
        await admin.end();
      }
      expect(ended).toBeGreaterThan(0);
      await new Promise((resolve) => setTimeout(resolve, 300));
      expect(uncaught).toEqual([]);
      // Both handles answer again on fresh connections.
      expect(await other.raw.query<{ one: number }>('SELECT 1::int AS one')).toEqual([{ one: 1 }]);
      const rows = await t.db.prisma.$queryRaw<Array<{ one: number }>>`SELECT 1::int AS one`;
      expect(rows[0].one).toBe(1);
    } finally {
      await other.close();
      process.off('uncaughtException', onUncaught);
    }
  }, 60_000);
});
