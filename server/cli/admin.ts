// Admin commands: `earshot team add`, `earshot token issue`, `earshot token revoke`.
// They work on DATABASE_URL (PostgreSQL: opened directly, safe alongside running servers)
// and on the embedded data folder (EARSHOT_DATA_DIR). An embedded PGlite folder must never
// be opened by two processes: when a server runs on it (it wrote <dataDir>/admin.json),
// the command goes through that server's loopback admin endpoint with the local secret;
// otherwise the command opens the folder itself under the pid lock (server/db/client.ts).
import { setFlagsFromString } from 'node:v8';
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import type { Database } from '../db/client.ts';
import { adminTeamAdd, adminTokenIssue, adminTokenRevoke, teamAddInput, tokenIssueInput, tokenRevokeInput } from '../db/repositories/admin-ops.ts';
import { ConflictError, NotFoundError } from '../db/errors.ts';
import { CliUsageError, defineCommand, describeOptionError, flagOption, integerOption, stringOption, type CommandDefinition } from './framework.ts';
import { invitationDays, publicBaseUrl, signInLink } from '../app/team-access.ts';
import { callRunningServer, readRunningServer } from './running-server.ts';

function pidAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/**
 * A one-shot command runs a few queries: V8's optimising WebAssembly tier (compiled in the
 * background for PGlite's and Prisma's query compiler's modules) costs it more CPU than it
 * ever wins back, so only the baseline compiler is used (set before either module is compiled;
 * about 1.3 s of CPU less for `token issue`, measured with /usr/bin/time). Long-running
 * programs (server, workers) keep the default.
 */
function preferQuickWasmStart(): void {
  setFlagsFromString('--liftoff-only');
}

export type AdminOperation = 'team-add' | 'token-issue' | 'token-revoke';

async function direct(db: Database, operation: AdminOperation, body: never): Promise<unknown> {
  try {
    if (operation === 'team-add') return await adminTeamAdd(db, body);
    if (operation === 'token-issue') return await adminTokenIssue(db, body);
    return await adminTokenRevoke(db, body);
  } catch (error) {
    if (error instanceof NotFoundError || error instanceof ConflictError) throw new CliUsageError(error.message);
    throw error;
  }
}

/** Runs an admin operation against the configured database, the safe way (see the header). */
export async function runAdminOperation(operation: AdminOperation, body: unknown, env: NodeJS.ProcessEnv = process.env): Promise<unknown> {
  const config = loadConfig(env);
  // The database client (Prisma, PGlite, pg) is loaded only when this command opens the database itself.
  preferQuickWasmStart();
  const { dataFolderHolder, openDatabase } = await import('../db/client.ts');
  if (!config.databaseUrl) {
    const admin = readRunningServer(config);
    if (admin && admin.pid !== undefined && pidAlive(admin.pid)) {
      const answer = await callRunningServer(admin, operation, body, 30_000);
      if (answer !== null) return answer;
    }
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder} and no server answers for it; wait and retry`);
    }
  }
  const db = await openDatabase(config, { changeFeed: false, syncKit: false });
  try {
    return await direct(db, operation, body as never);
  } finally {
    await db.close();
  }
}

const roleOption = z.enum(['planner', 'installer', 'viewer'], { error: 'must be planner, installer or viewer' });

export const adminCommands: CommandDefinition[] = [
  defineCommand({
    words: 'team add',
    options: z.strictObject({ slug: stringOption(), name: stringOption() }),
    async run(options) {
      const input = teamAddInput.safeParse(options);
      if (!input.success) throw new CliUsageError(`--${String(input.error.issues[0].path[0] ?? 'slug')}: ${input.error.issues[0].message}`);
      return runAdminOperation('team-add', input.data);
    },
    formatText: (result) => {
      const team = result as { slug: string; name: string; id: string };
      return `team ${team.slug} (${team.name}) created, id ${team.id}`;
    },
  }),
  defineCommand({
    words: 'token issue',
    options: z.strictObject({
      team: stringOption().describe('team slug'),
      role: roleOption.describe('role of the user'),
      name: stringOption().optional().describe('user name (default: the team\'s first user of that role)'),
      link: flagOption().describe('issue a one-time sign-in link (valid --days days) instead of an API token'),
      days: integerOption().optional().describe('days the token or link stays valid (link default 7)'),
    }),
    examples: ['earshot token issue --team demo --role installer --name "Ana (field)" --link --json'],
    async run(options) {
      const oneTime = options.link;
      const input = tokenIssueInput.safeParse({ team: options.team, role: options.role, name: options.name, oneTime: oneTime || undefined, expiresInDays: options.days ?? (oneTime ? invitationDays : undefined) });
      if (!input.success) throw new CliUsageError(describeOptionError(input.error).replace('--expiresInDays', '--days'));
      const issued = (await runAdminOperation('token-issue', input.data)) as { token: string; role: string; team: string; expiresAt: string | Date | null };
      if (!oneTime) return issued;
      const config = loadConfig();
      const port = readRunningServer(config)?.port ?? config.port;
      return { ...issued, link: signInLink(publicBaseUrl(config, port), issued.token) };
    },
    formatText: (result) => {
      const issued = result as { token: string; role: string; team: string; link?: string; expiresAt: string | Date | null };
      const until = issued.expiresAt ? `valid until ${new Date(issued.expiresAt).toLocaleString()}` : 'valid until revoked';
      if (issued.link) return `${issued.link}\n(one-time sign-in link for a ${issued.role} of team ${issued.team}; works once, ${until})`;
      return `${issued.token}\n(${issued.role} token for team ${issued.team}; shown once, ${until})`;
    },
  }),
  defineCommand({
    words: 'token revoke',
    options: z.strictObject({ token: stringOption().optional(), id: stringOption().optional() }),
    async run(options) {
      const input = tokenRevokeInput.safeParse(options);
      if (!input.success) throw new CliUsageError(input.error.issues[0].message);
      return runAdminOperation('token-revoke', input.data);
    },
    formatText: (result) => {
      const revoked = result as { id: string; alreadyRevoked: boolean };
      return revoked.alreadyRevoked ? `token ${revoked.id} was already revoked` : `token ${revoked.id} revoked`;
    },
  }),
];
