// Server configuration from environment variables. Every value has a default so
// `npm start` works with no set-up; README.md lists them in its configuration table.
import { availableParallelism } from 'node:os';
import { join, resolve } from 'node:path';

export interface Config {
  port: number;
  host: string;
  /** Data folder: embedded database (`<dataDir>/pglite`), files (`<dataDir>/files`), admin.json. */
  dataDir: string;
  /** PostgreSQL connection string; unset = embedded PGlite in the data folder. */
  databaseUrl?: string;
  /** Redis connection string; set = BullMQ queues and `npm run worker` processes. */
  redisUrl?: string;
  maxUploadBytes: number;
  maxRasterCells: number;
  tileCacheBytes: number;
  workerCount: number;
  publicBaseUrl?: string;
  onlineBaseLayerUrl?: string;
  /** Largest JSON request body in bytes (bigger bodies get 413). */
  maxJsonBodyBytes: number;
  /** Log level for the request log (pino). */
  logLevel: string;
  /** Request lines (method, url, status, time) are logged at this level; `debug` keeps them out of a terminal by default. */
  requestLogLevel: 'trace' | 'debug' | 'info';
  /** `auto`: one human line per entry on a terminal, JSON otherwise; `pretty` or `json` to force one (EARSHOT_LOG_FORMAT). */
  logFormat: 'auto' | 'pretty' | 'json';
  /** Seed the demo team and plan on an empty database. */
  seedDemo: boolean;
  /** Folder holding files: `<dataDir>/files`. */
  filesDir: string;
  /**
   * Which proxies in front may set X-Forwarded-For/-Proto (Fastify `trustProxy`): false (the
   * default: the socket is the client), true (any), a hop count, or a comma list of addresses
   * and CIDR ranges. Decides the client address (rate limits, logs) and whether the sign-in
   * cookie is `Secure` (X-Forwarded-Proto: https).
   */
  trustProxy: boolean | number | string;
}

function trustProxyOf(raw: string | undefined): boolean | number | string {
  if (raw === undefined) return false;
  const value = raw.trim().toLowerCase();
  if (['', 'off', 'false', 'no', '0'].includes(value)) return false;
  if (['on', 'true', 'yes'].includes(value)) return true;
  if (/^[1-9]\d?$/.test(value)) return Number(value);
  const entries = value.split(',').map((entry) => entry.trim()).filter(Boolean);
  const address = /^(\d{1,3}(\.\d{1,3}){3}(\/\d{1,2})?|[0-9a-f:]+(\/\d{1,3})?|loopback|linklocal|uniquelocal)$/;
  const bad = entries.find((entry) => !address.test(entry));
  if (bad !== undefined) throw new ConfigError(`EARSHOT_TRUST_PROXY: "${bad}" is not an address, a CIDR range, loopback, linklocal or uniquelocal (or use on/off or a hop count)`);
  return entries.join(',');
}

export class ConfigError extends Error {}

function positiveNumber(env: NodeJS.ProcessEnv, name: string, fallback: number): number {
  const raw = env[name];
  if (raw === undefined || raw.trim() === '') return fallback;
  const value = Number(raw);
  if (!Number.isFinite(value) || value <= 0) throw new ConfigError(`${name}: must be a positive number (got "${raw}")`);
  return value;
}

function optional(env: NodeJS.ProcessEnv, name: string): string | undefined {
  const raw = env[name];
  return raw === undefined || raw.trim() === '' ? undefined : raw.trim();
}

function choiceOf<T extends string>(env: NodeJS.ProcessEnv, name: string, choices: readonly T[], fallback: T): T {
  const raw = optional(env, name);
  if (raw === undefined) return fallback;
  if (!(choices as readonly string[]).includes(raw)) throw new ConfigError(`${name}: must be one of ${choices.join(', ')} (got "${raw}")`);
  return raw as T;
}

export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const port = positiveNumber(env, 'PORT', 8080);
  if (!Number.isInteger(port) || port > 65535) throw new ConfigError(`PORT: must be a whole number 1-65535 (got "${env.PORT}")`);
  const dataDir = resolve(optional(env, 'EARSHOT_DATA_DIR') ?? './data');
  const workers = positiveNumber(env, 'EARSHOT_WORKERS', Math.max(1, availableParallelism()));
  if (!Number.isInteger(workers)) throw new ConfigError(`EARSHOT_WORKERS: must be a whole number (got "${env.EARSHOT_WORKERS}")`);
  const databaseUrl = optional(env, 'DATABASE_URL');
  if (databaseUrl && !/^postgres(ql)?:\/\//.test(databaseUrl)) {
    throw new ConfigError('DATABASE_URL: must start with postgres:// or postgresql://');
  }
  return {
    port,
    host: optional(env, 'HOST') ?? '127.0.0.1',
    dataDir,
    databaseUrl,
    redisUrl: optional(env, 'REDIS_URL'),
    maxUploadBytes: Math.round(positiveNumber(env, 'EARSHOT_MAX_UPLOAD_MB', 512) * 1024 * 1024),
    maxRasterCells: Math.round(positiveNumber(env, 'EARSHOT_MAX_RASTER_CELLS', 40000 * 40000)),
    tileCacheBytes: Math.round(positiveNumber(env, 'EARSHOT_TILE_CACHE_MB', 256) * 1024 * 1024),
    workerCount: workers,
    publicBaseUrl: optional(env, 'EARSHOT_PUBLIC_URL'),
    onlineBaseLayerUrl: optional(env, 'EARSHOT_BASE_LAYER_URL'),
    maxJsonBodyBytes: Math.round(positiveNumber(env, 'EARSHOT_MAX_JSON_KB', 1024) * 1024),
    logLevel: optional(env, 'EARSHOT_LOG_LEVEL') ?? 'info',
    requestLogLevel: choiceOf(env, 'EARSHOT_REQUEST_LOG_LEVEL', ['trace', 'debug', 'info'] as const, 'debug'),
    logFormat: choiceOf(env, 'EARSHOT_LOG_FORMAT', ['auto', 'pretty', 'json'] as const, 'auto'),
    seedDemo: (optional(env, 'EARSHOT_DEMO') ?? 'on') !== 'off',
    filesDir: join(dataDir, 'files'),
    trustProxy: trustProxyOf(optional(env, 'EARSHOT_TRUST_PROXY')),
  };
}
