// Server start: config -> database (migrations applied) -> demo on an empty database ->
// API + web front end -> listen -> print a one-time sign-in URL.
// Writes <dataDir>/admin.json (port + a random local admin secret, mode 0600) so the
// `earshot` CLI can reach this process instead of opening the embedded data folder twice.
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import fastifyStatic from '@fastify/static';
import type { FastifyInstance } from 'fastify';
import { buildApp } from './api/app.ts';
import { ConfigError, loadConfig, type Config } from './config.ts';
import { DatabaseBusyError, openDatabase, type Database } from './db/client.ts';
import { issueToken } from './db/repositories/accounts.ts';
import { seedDemoIfEmpty } from './demo.ts';
import { projectRoot } from './paths.ts';
import { humanLogStream, wantsHumanLogs } from './api/log-format.ts';

export const webDistDir = join(projectRoot, 'web', 'dist');

export function adminFilePath(config: Config): string {
  return join(config.dataDir, 'admin.json');
}

export interface RunningServer {
  app: FastifyInstance;
  db: Database;
  config: Config;
  url: string;
  signInUrl: string | null;
  demoSeeded: boolean;
  startupMs: number;
  stop(): Promise<void>;
}

function baseUrl(config: Config, port: number): string {
  if (config.publicBaseUrl) return config.publicBaseUrl.replace(/\/$/, '');
  const host = config.host === '0.0.0.0' || config.host === '::' ? 'localhost' : config.host.includes(':') ? `[${config.host}]` : config.host;
  return `http://${host}:${port}`;
}

/** Lines inside a plain frame (one blank line before and after). */
function framed(lines: string[]): string {
  const rule = '─'.repeat(Math.min(100, Math.max(...lines.map((line) => line.length)) + 2));
  return ['', `┌${rule}`, ...lines.map((line) => `│ ${line}`), `└${rule}`, ''].join('\n') + '\n';
}

export async function startServer(config: Config, options: { logger?: boolean | object } = {}): Promise<RunningServer> {
  const started = performance.now();
  mkdirSync(config.dataDir, { recursive: true });
  mkdirSync(config.filesDir, { recursive: true });
  const db = await openDatabase(config);
  let app: FastifyInstance | null = null;
  try {
    const demo = config.seedDemo ? await seedDemoIfEmpty(db, config) : null;
    const adminSecret = randomBytes(32).toString('base64url');
    app = await buildApp({ db, config, logger: options.logger ?? true, adminSecret });
    if (existsSync(join(webDistDir, 'index.html'))) {
      await app.register(fastifyStatic, { root: webDistDir, prefix: '/', index: ['index.html'], wildcard: true });
    } else {
      app.get('/', { schema: { hide: true } }, async (_request, reply) =>
        reply.type('text/html; charset=utf-8').send('<!doctype html><meta charset="utf-8"><title>earshot</title><p>earshot API is running. The web front end is not built (run <code>npm test</code> or <code>cd web &amp;&amp; npx vite build</code>). API: <a href="/api/v1/openapi.json">/api/v1/openapi.json</a></p>'),
      );
    }
    await app.listen({ port: config.port, host: config.host });
    const address = app.server.address();
    const port = typeof address === 'object' && address ? address.port : config.port;
    const adminFile = adminFilePath(config);
    writeFileSync(adminFile, `${JSON.stringify({ port, host: '127.0.0.1', pid: process.pid, secret: adminSecret })}\n`, { mode: 0o600 });

    const url = baseUrl(config, port);
    let signInUrl: string | null = null;
    if (demo) {
      const link = await issueToken(db, { userId: demo.plannerUserId, oneTime: true, label: 'start-up sign-in link', expiresAt: new Date(Date.now() + 7 * 86_400_000) });
      signInUrl = `${url}/signin?token=${link.token}`;
    }
    const running: RunningServer = {
      app,
      db,
      config,
      url,
      signInUrl,
      demoSeeded: demo?.seeded ?? false,
      startupMs: Math.round(performance.now() - started),
      async stop() {
        rmSync(adminFile, { force: true });
        await app?.close();
        await db.close();
      },
    };
    return running;
  } catch (error) {
    await app?.close().catch(() => {});
    await db.close().catch(() => {});
    throw error;
  }
}

async function main(): Promise<void> {
  let config: Config;
  try {
    config = loadConfig();
  } catch (error) {
    process.stderr.write(`earshot: ${error instanceof ConfigError ? error.message : String(error)}\n`);
    process.exit(2);
  }
  let server: RunningServer;
  try {
    // A terminal gets one human line per log entry; files and collectors get pino's JSON.
    const logger = wantsHumanLogs(config.logFormat, process.stdout) ? { stream: humanLogStream(process.stdout) } : true;
    server = await startServer(config, { logger });
  } catch (error) {
    const message = error instanceof DatabaseBusyError ? error.message : error instanceof Error ? error.message : String(error);
    process.stderr.write(`earshot: could not start: ${message.split('\n')[0]}\n`);
    process.exit(1);
  }
  const engine = server.db.engine === 'pglite' ? `embedded PGlite in ${join(config.dataDir, 'pglite')}` : 'PostgreSQL (DATABASE_URL)';
  // Printed last and framed, so the sign-in link is the last thing on the screen.
  process.stdout.write(
    framed([
      `earshot is listening on ${server.url} (database: ${engine}; ready in ${server.startupMs} ms${server.demoSeeded ? '; demo plan created' : ''})`,
      ...(server.signInUrl
        ? ['Sign in (one-time link, valid 7 days):', server.signInUrl]
        : ['No demo team: issue a token with `npm run --silent earshot -- token issue --team <slug> --role planner`.']),
      ...(config.requestLogLevel !== 'info' && config.logLevel === 'info' ? [`(request lines are logged at ${config.requestLogLevel}: EARSHOT_LOG_LEVEL=${config.requestLogLevel} shows them)`] : []),
    ]),
  );
  let stopping = false;
  const stop = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    server.app.log.info({ signal }, 'shutting down');
    await server.stop().catch(() => {});
    process.exit(0);
  };
  process.on('SIGINT', () => void stop('SIGINT'));
  process.on('SIGTERM', () => void stop('SIGTERM'));
}

const isMain = process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1];
if (isMain) void main();
