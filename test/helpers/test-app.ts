// Shared API test set-up: a fresh database (in-memory PGlite, or a uniquely named
// PostgreSQL database on 127.0.0.1:5432 that is dropped on close) with migrations applied,
// two teams ("acme": planner, installer, viewer; "other": planner) and their tokens.
// Share one TestApp per test file: PGlite start costs seconds.
import { randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { describe, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../server/api/app.ts';
import { loadConfig, type Config } from '../../server/config.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { createTeam, createUser, issueToken } from '../../server/db/repositories/accounts.ts';

export type Engine = 'pglite' | 'postgres';

export interface TestApp {
  app: FastifyInstance;
  db: Database;
  config: Config;
  tokens: { planner: string; installer: string; viewer: string; otherTeamPlanner: string };
  teamId: string;
  otherTeamId: string;
  /** Removes everything the tests wrote (plans, team kit, audit, extra teams/users/tokens); keeps the fixture teams and tokens. */
  reset(): Promise<void>;
  close(): Promise<void>;
}

/** Admin connection for creating and dropping test databases. */
export const postgresAdminUrl = process.env.EARSHOT_TEST_DATABASE_URL ?? 'postgresql://postgres@127.0.0.1:5432/postgres';
const inCi = process.env.CI === 'true';

async function checkPostgres(): Promise<boolean> {
  const client = new pg.Client({ connectionString: postgresAdminUrl, connectionTimeoutMillis: 2000 });
  try {
    await client.connect();
    await client.query('SELECT 1');
    return true;
  } catch {
    return false;
  } finally {
    await client.end().catch(() => {});
  }
}

/** Whether PostgreSQL answers at EARSHOT_TEST_DATABASE_URL (default 127.0.0.1:5432). */
export const postgresAvailable: boolean = await checkPostgres();

/** `url` with its database name replaced (a fresh test database on the admin connection's server). */
export function withDatabase(url: string, database: string): string {
  const parsed = new URL(url);
  parsed.pathname = `/${database}`;
  return parsed.toString();
}

/** One statement on the admin connection (CREATE / DROP DATABASE of the tests and benches). */
export async function adminQuery(sql: string): Promise<void> {
  const client = new pg.Client({ connectionString: postgresAdminUrl });
  await client.connect();
  try {
    await client.query(sql);
  } finally {
    await client.end();
  }
}

export async function createTestApp(engine: Engine, options: { env?: NodeJS.ProcessEnv } = {}): Promise<TestApp> {
  const dataDir = mkdtempSync(join(tmpdir(), 'earshot-test-'));
  let databaseName: string | null = null;
  let config = loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off', ...options.env });
  let db: Database;
  if (engine === 'postgres') {
    if (!postgresAvailable) throw new Error(`PostgreSQL is not reachable at ${postgresAdminUrl}`);
    databaseName = `earshot_test_${randomBytes(6).toString('hex')}`;
    await adminQuery(`CREATE DATABASE "${databaseName}"`);
    config = { ...config, databaseUrl: withDatabase(postgresAdminUrl, databaseName) };
    db = await openDatabase(config);
  } else {
    config = { ...config, databaseUrl: undefined };
    db = await openDatabase(config, { memory: true });
  }

  const team = await createTeam(db, { slug: 'acme', name: 'Acme Test Team' });
  const other = await createTeam(db, { slug: 'other', name: 'Other Test Team' });
  const tokenFor = async (teamId: string, role: 'planner' | 'installer' | 'viewer') => {
    const user = await createUser(db, { teamId, name: `${role} of ${teamId === team.id ? 'acme' : 'other'}`, role });
    return (await issueToken(db, { userId: user.id, label: 'test' })).token;
  };
  const tokens = {
    planner: await tokenFor(team.id, 'planner'),
    installer: await tokenFor(team.id, 'installer'),
    viewer: await tokenFor(team.id, 'viewer'),
    otherTeamPlanner: await tokenFor(other.id, 'planner'),
  };
  const fixtureTokenIds = (await db.prisma.apiToken.findMany({ select: { id: true } })).map((row) => row.id);
  const fixtureUserIds = (await db.prisma.user.findMany({ select: { id: true } })).map((row) => row.id);

  const app = await buildApp({ db, config, logger: false });
  await app.ready();

  return {
    app,
    db,
    config,
    tokens,
    teamId: team.id,
    otherTeamId: other.id,
    async reset() {
      await db.prisma.plan.deleteMany({});
      await db.prisma.auditEntry.deleteMany({});
      await db.prisma.antennaDesign.deleteMany({ where: { teamId: { not: null } } });
      await db.prisma.feedlineType.deleteMany({ where: { teamId: { not: null } } });
      await db.prisma.mastOption.deleteMany({ where: { teamId: { not: null } } });
      await db.prisma.apiToken.deleteMany({ where: { id: { notIn: fixtureTokenIds } } });
      await db.prisma.user.deleteMany({ where: { id: { notIn: fixtureUserIds } } });
      await db.prisma.team.deleteMany({ where: { id: { notIn: [team.id, other.id] } } });
    },
    async close() {
      await app.close();
      await db.close();
      if (databaseName) await adminQuery(`DROP DATABASE IF EXISTS "${databaseName}" WITH (FORCE)`);
      rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

/**
 * Runs a suite against both engines. The PostgreSQL run is skipped with a visible reason
 * when no server answers, except in CI (CI=true), where it fails instead.
 */
export function describeEngines(name: string, fn: (engine: Engine) => void): void {
  describe(`${name} [pglite]`, () => fn('pglite'));
  if (postgresAvailable) {
    describe(`${name} [postgres]`, () => fn('postgres'));
  } else if (inCi) {
    describe(`${name} [postgres]`, () => {
      it('needs PostgreSQL (CI=true makes the PostgreSQL suites mandatory)', () => {
        throw new Error(`PostgreSQL is not reachable at ${postgresAdminUrl}`);
      });
    });
  } else {
    describe.skip(`${name} [postgres] (skipped: no PostgreSQL reachable at ${postgresAdminUrl})`, () => fn('postgres'));
  }
}

/** Authorization header for a token. */
export function bearer(token: string): { Authorization: string } {
  return { Authorization: `Bearer ${token}` };
}
