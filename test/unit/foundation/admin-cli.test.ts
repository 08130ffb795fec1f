// The admin commands as a user runs them: `npm run --silent earshot -- ... --json` against
// DATABASE_URL (a fresh PostgreSQL database): one JSON document on stdout, or one line on
// stderr and a non-zero exit.
import { spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { postgresAdminUrl, postgresAvailable } from '../../helpers/test-app.ts';

const root = join(import.meta.dirname, '..', '..', '..');
const databaseName = `earshot_cli_${randomBytes(5).toString('hex')}`;
const url = new URL(postgresAdminUrl);
url.pathname = `/${databaseName}`;

async function admin(sql: string) {
  const client = new pg.Client({ connectionString: postgresAdminUrl });
  await client.connect();
  try {
    await client.query(sql);
  } finally {
    await client.end();
  }
}

function earshot(...args: string[]) {
  const result = spawnSync(process.execPath, [join(root, 'node_modules', 'tsx', 'dist', 'cli.mjs'), join(root, 'server', 'cli.ts'), ...args], {
    cwd: root,
    env: { ...process.env, DATABASE_URL: url.toString() },
    encoding: 'utf8',
    timeout: 120_000,
  });
  return { code: result.status, stdout: result.stdout, stderr: result.stderr };
}

// PostgreSQL only (the embedded-folder paths are covered by server-restart.test.ts); skipped
// with a visible reason when no PostgreSQL answers outside CI, mandatory in CI.
// tsx child processes take tens of seconds on a loaded 2-core machine.
const SLOW_MS = 300_000;
const suite = postgresAvailable || process.env.CI === 'true' ? describe : describe.skip;
suite(`earshot team add / token issue / token revoke on DATABASE_URL${postgresAvailable ? '' : ` (skipped: no PostgreSQL at ${postgresAdminUrl})`}`, () => {
  beforeAll(async () => admin(`CREATE DATABASE "${databaseName}"`));
  afterAll(async () => admin(`DROP DATABASE IF EXISTS "${databaseName}" WITH (FORCE)`));

  it('prints exactly one JSON document per command and exits 0', () => {
    const team = earshot('team', 'add', '--slug', 'hill-farm', '--name', 'Hill farm', '--json');
    expect(team.code, team.stderr).toBe(0);
    expect(JSON.parse(team.stdout)).toMatchObject({ slug: 'hill-farm', name: 'Hill farm' });
    const token = earshot('token', 'issue', '--team', 'hill-farm', '--role', 'installer', '--json');
    expect(token.code, token.stderr).toBe(0);
    const issued = JSON.parse(token.stdout) as { token: string; id: string };
    expect(issued.token).toMatch(/^esk_[0-9a-f]{16}_/);
    const revoke = earshot('token', 'revoke', '--id', issued.id, '--json');
    expect(revoke.code, revoke.stderr).toBe(0);
    expect(JSON.parse(revoke.stdout)).toMatchObject({ id: issued.id, revoked: true, alreadyRevoked: false });
  }, SLOW_MS);

  it('bad input: one line on stderr naming the option, non-zero exit, nothing on stdout', () => {
    const badRole = earshot('token', 'issue', '--team', 'hill-farm', '--role', 'boss', '--json');
    expect(badRole.code).not.toBe(0);
    expect(badRole.stdout).toBe('');
    expect(badRole.stderr.trim().split('\n')).toHaveLength(1);
    expect(badRole.stderr).toMatch(/--role: must be planner, installer or viewer/);
    const both = earshot('token', 'revoke', '--json');
    expect(both.code).not.toBe(0);
    expect(both.stderr).toMatch(/give exactly one of --token or --id/);
    const duplicate = earshot('team', 'add', '--slug', 'hill-farm', '--name', 'Again', '--json');
    expect(duplicate.code).not.toBe(0);
    expect(duplicate.stderr).toMatch(/already exists/);
  }, SLOW_MS);
});
