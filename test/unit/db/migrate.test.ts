// The migration runner: each migration once, in name order, in a transaction, with a
// checksum that catches an applied migration being edited.
import { PGlite } from '@electric-sql/pglite';
import { afterAll, beforeAll, expect, it, describe } from 'vitest';
import { applyMigrations, loadMigrations, MigrationError, type Migration, type RawSql } from '../../../server/db/migrate.ts';

function rawOf(client: PGlite): RawSql {
  return {
    exec: async (sql) => {
      await client.exec(sql);
    },
    query: async <Row>(sql: string, params: unknown[] = []) => (await client.query<Row>(sql, params)).rows,
  };
}
const migration = (name: string, sql: string): Migration => ({ name, sql, checksum: `sum-of-${sql}` });

describe('migration runner', () => {
  let client: PGlite;
  let raw: RawSql;
  beforeAll(async () => {
    client = new PGlite();
    await client.waitReady;
    raw = rawOf(client);
  });
  afterAll(async () => client.close());

  it('finds the repository migrations in Prisma folder layout, sorted by name', () => {
    const names = loadMigrations().map((m) => m.name);
    expect(names.length).toBeGreaterThanOrEqual(1);
    expect(names).toEqual([...names].sort());
    for (const name of names) expect(name).toMatch(/^\d{14}_[a-z0-9_]+$/);
  });

  it('applies each migration once and records it', async () => {
    const list = [migration('001_a', 'CREATE TABLE a (x int);'), migration('002_b', 'CREATE TABLE b (y int);')];
    expect(await applyMigrations(raw, list)).toEqual(['001_a', '002_b']);
    expect(await applyMigrations(raw, list)).toEqual([]);
    const recorded = await raw.query<{ name: string }>('SELECT name FROM "_earshot_migrations" ORDER BY name');
    expect(recorded.map((r) => r.name)).toEqual(['001_a', '002_b']);
  });

  it('refuses a migration whose file changed after it was applied', async () => {
    await expect(applyMigrations(raw, [{ ...migration('001_a', 'CREATE TABLE a (x int);'), checksum: 'edited' }])).rejects.toThrow(/changed after it was applied/);
  });

  it('rolls a failing migration back completely and reports which one failed', async () => {
    const failing = migration('003_c', 'CREATE TABLE c (z int); INSERT INTO c VALUES (1); SELECT * FROM no_such_table;');
    const error = await applyMigrations(raw, [failing]).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(MigrationError);
    expect(String((error as Error).message)).toMatch(/003_c failed/);
    const tables = await raw.query<{ n: number }>("SELECT count(*)::int AS n FROM information_schema.tables WHERE table_name = 'c'");
    expect(tables[0].n).toBe(0);
    const recorded = await raw.query<{ n: number }>("SELECT count(*)::int AS n FROM \"_earshot_migrations\" WHERE name = '003_c'");
    expect(recorded[0].n).toBe(0);
  });
});
