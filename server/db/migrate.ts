// Our migration runner: applies prisma/migrations/<timestamp>_<name>/migration.sql in
// name order, each once, each in its own transaction, recording name + sha256 checksum
// in _earshot_migrations. A recorded migration whose file changed is an error (edit by
// adding a new migration, never by rewriting an applied one). Works on PGlite and PostgreSQL.
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { projectRoot } from '../paths.ts';

/** The minimum a raw SQL connection must offer (PGlite and a pg client both fit). */
export interface RawSql {
  /** Runs one or more statements without parameters. */
  exec(sql: string): Promise<void>;
  /** Runs one statement with $1.. parameters and returns its rows. */
  query<Row = Record<string, unknown>>(sql: string, params?: unknown[]): Promise<Row[]>;
}

export interface Migration {
  name: string;
  sql: string;
  checksum: string;
}

export const migrationsDir = join(projectRoot, 'prisma', 'migrations');

export function loadMigrations(dir = migrationsDir): Migration[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir, { withFileTypes: true })
    .filter((entry) => entry.isDirectory() && existsSync(join(dir, entry.name, 'migration.sql')))
    .map((entry) => entry.name)
    .sort()
    .map((name) => {
      const sql = readFileSync(join(dir, name, 'migration.sql'), 'utf8');
      return { name, sql, checksum: createHash('sha256').update(sql).digest('hex') };
    });
}

export class MigrationError extends Error {}

/** Applies pending migrations; returns the names applied now. */
export async function applyMigrations(raw: RawSql, migrations = loadMigrations()): Promise<string[]> {
  await raw.exec(
    `CREATE TABLE IF NOT EXISTS "_earshot_migrations" (
       "name" TEXT PRIMARY KEY,
       "checksum" TEXT NOT NULL,
       "appliedAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP
     )`,
  );
  const applied = new Map(
    (await raw.query<{ name: string; checksum: string }>('SELECT "name", "checksum" FROM "_earshot_migrations"')).map(
      (row) => [row.name, row.checksum],
    ),
  );
  const done: string[] = [];
  for (const migration of migrations) {
    const recorded = applied.get(migration.name);
    if (recorded !== undefined) {
      if (recorded !== migration.checksum) {
        throw new MigrationError(
          `migration ${migration.name} was changed after it was applied (checksum differs); add a new migration instead`,
        );
      }
      continue;
    }
    await raw.exec('BEGIN');
    try {
      await raw.exec(migration.sql);
      await raw.query('INSERT INTO "_earshot_migrations" ("name", "checksum") VALUES ($1, $2)', [
        migration.name,
        migration.checksum,
      ]);
      await raw.exec('COMMIT');
    } catch (error) {
      await raw.exec('ROLLBACK');
      throw new MigrationError(`migration ${migration.name} failed: ${error instanceof Error ? error.message : String(error)}`);
    }
    done.push(migration.name);
  }
  return done;
}
