// Database factory: embedded PGlite in <dataDir>/pglite when DATABASE_URL is unset,
// otherwise PostgreSQL through @prisma/adapter-pg. Migrations are applied on open.
// The only place (with server/db/repositories) that touches Prisma.
import { closeSync, existsSync, mkdirSync, openSync, readFileSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import { PrismaPGlite } from 'pglite-prisma-adapter';
import type pg from 'pg';
import { PrismaClient } from './generated/client.ts';
import type { Config } from '../config.ts';
import { applyMigrations, type RawSql } from './migrate.ts';
import { pgliteChangeFeed, postgresChangeFeed, type ChangeFeed } from './change-feed.ts';
import type { Database } from './database.ts';
import { commitCheckingPglite } from './pglite-commit.ts';
import { syncBuiltInKit } from './repositories/kit.ts';

export { PrismaClient };
export type { Database } from './database.ts';
export type { Prisma } from './generated/client.ts';

export interface OpenOptions {
  /**
   * Listen for committed changes (default true). One-shot commands pass false: they keep no
   * memo, so a feed would only cost its start.
   */
  changeFeed?: boolean;
  /**
   * Bring the built-in kit catalog up to date on open (default true). Commands that never read
   * the kit (the admin commands) pass false; the next server or worker start syncs it.
   */
  syncKit?: boolean;
  /** PGlite only: an in-memory database (tests); nothing is written to the data folder. */
  memory?: boolean;
  /** Skip applying migrations (the schema agreement test applies them itself). */
  skipMigrations?: boolean;
}

/** Another process already has this embedded data folder open. */
export class DatabaseBusyError extends Error {
  constructor(
    readonly lockPath: string,
    readonly pid: number,
  ) {
    super(`the data folder is in use by process ${pid} (lock ${lockPath}); stop it or use the running server`);
  }
}

function pidAlive(pid: number): boolean {
  if (!Number.isInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

export function dataFolderLockPath(dataDir: string): string {
  return join(dataDir, 'pglite.lock');
}

/** Returns the pid holding the data folder, or null when it is free. */
export function dataFolderHolder(dataDir: string): number | null {
  const lockPath = dataFolderLockPath(dataDir);
  if (!existsSync(lockPath)) return null;
  const pid = Number(readFileSync(lockPath, 'utf8').trim());
  return pidAlive(pid) && pid !== process.pid ? pid : null;
}

/** Data folders this process has open (a lock naming our own pid is stale only if it is not here). */
const openedHere = new Set<string>();

/** Takes the embedded data folder for this process (a pid lock file); returns the release function. */
function lockDataFolder(dataDir: string): () => void {
  const lockPath = dataFolderLockPath(dataDir);
  if (openedHere.has(lockPath)) throw new DatabaseBusyError(lockPath, process.pid);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      const fd = openSync(lockPath, 'wx', 0o600);
      writeSync(fd, `${process.pid}\n`);
      closeSync(fd);
      openedHere.add(lockPath);
      const release = () => {
        openedHere.delete(lockPath);
        try {
          if (existsSync(lockPath) && readFileSync(lockPath, 'utf8').trim() === String(process.pid)) rmSync(lockPath);
        } catch {
          // best effort on exit
        }
      };
      process.once('exit', release);
      return release;
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
      const pid = Number(readFileSync(lockPath, 'utf8').trim());
      if (pidAlive(pid) && pid !== process.pid) throw new DatabaseBusyError(lockPath, pid);
      rmSync(lockPath, { force: true }); // stale lock of a process that is gone
    }
  }
  throw new Error(`could not take the data folder lock ${lockPath}`);
}

function pgliteRaw(client: PGlite): RawSql {
  return {
    async exec(sql) {
      await client.exec(sql);
    },
    async query<Row>(sql: string, params: unknown[] = []) {
      const result = await client.query<Row>(sql, params);
      return result.rows;
    },
  };
}

function poolRaw(pool: pg.Pool): RawSql {
  return {
    async exec(sql) {
      await pool.query(sql);
    },
    async query<Row>(sql: string, params: unknown[] = []) {
      const result = await pool.query(sql, params);
      return result.rows as Row[];
    },
  };
}

export async function openDatabase(config: Config, options: OpenOptions = {}): Promise<Database> {
  if (config.databaseUrl) return openPostgres(config.databaseUrl, options);
  return openPglite(config, options);
}

async function openPglite(config: Config, options: OpenOptions): Promise<Database> {
  let release = () => {};
  let client: PGlite;
  if (options.memory) {
    client = new PGlite();
  } else {
    mkdirSync(config.dataDir, { recursive: true });
    release = lockDataFolder(config.dataDir);
    try {
      client = new PGlite(join(config.dataDir, 'pglite'));
    } catch (error) {
      release();
      throw error;
    }
  }
  try {
    await client.waitReady;
    const raw = pgliteRaw(client);
    if (!options.skipMigrations) await applyMigrations(raw);
    const prisma = new PrismaClient({ adapter: commitCheckingPglite(new PrismaPGlite(client)) });
    const changes = options.skipMigrations || options.changeFeed === false ? undefined : await pgliteChangeFeed(client); // the triggers come with the migrations
    const db: Database = {
      prisma,
      engine: 'pglite',
      raw,
      changes,
      async close() {
        await changes?.close();
        await prisma.$disconnect();
        await client.close();
        release();
      },
    };
    if (!options.skipMigrations && options.syncKit !== false) await syncBuiltInKit(db);
    return db;
  } catch (error) {
    await client.close().catch(() => {});
    release();
    throw error;
  }
}

async function openPostgres(url: string, options: OpenOptions): Promise<Database> {
  // Loaded here so processes on an embedded folder never load the PostgreSQL driver.
  const [{ default: pg }, { PrismaPg }] = await Promise.all([import('pg'), import('@prisma/adapter-pg')]);
  const pool = new pg.Pool({ connectionString: url, max: 10 });
  // An idle pooled connection that the server ends (a PostgreSQL restart, an administrator's
  // pg_terminate_backend, DROP DATABASE … WITH (FORCE) after a test) is emitted as an 'error' on
  // the pool; with no listener Node treats it as an uncaught exception and the process dies. The
  // pool has already discarded that connection and the next query opens a new one, and a query in
  // flight gets its own error, so there is nothing more to do here.
  pool.on('error', () => {});
  try {
    if (!options.skipMigrations) {
      // One connection for the whole run, so the advisory lock serialises concurrent starters
      // (api + workers starting together).
      const connection = await pool.connect();
      try {
        await connection.query('SELECT pg_advisory_lock(7250412)');
        const raw: RawSql = {
          async exec(sql) {
            await connection.query(sql);
          },
          async query<Row>(sql: string, params: unknown[] = []) {
            return (await connection.query(sql, params)).rows as Row[];
          },
        };
        try {
          await applyMigrations(raw);
        } finally {
          await connection.query('SELECT pg_advisory_unlock(7250412)');
        }
      } finally {
        connection.release();
      }
    }
    const prisma = new PrismaClient({ adapter: new PrismaPg(pool) });
    const changes: ChangeFeed | undefined = options.skipMigrations || options.changeFeed === false ? undefined : postgresChangeFeed(url);
    const db: Database = {
      prisma,
      engine: 'postgres',
      raw: poolRaw(pool),
      changes,
      async close() {
        await changes?.close();
        await prisma.$disconnect();
        await pool.end().catch(() => {});
      },
    };
    if (!options.skipMigrations && options.syncKit !== false) await syncBuiltInKit(db);
    return db;
  } catch (error) {
    await pool.end().catch(() => {});
    throw error;
  }
}
