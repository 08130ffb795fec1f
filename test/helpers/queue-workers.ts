// Shared set-up of the tests that run jobs on BullMQ queue workers (Redis on
// 127.0.0.1:6379 by default, EARSHOT_TEST_REDIS_URL; PostgreSQL as in
// test-app.ts): whether both answer, the suite function (mandatory with
// CI=true, a visible skip elsewhere), `npm run worker` processes started
// against a test app's database and files folder under a queue prefix of
// their own, and the clean-up of that prefix's keys and of the workers.
import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { Redis } from 'ioredis';
import { describe } from 'vitest';
import { postgresAvailable, type TestApp } from './test-app.ts';

export const REDIS_URL = process.env.EARSHOT_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
export const inCi = process.env.CI === 'true';

async function redisReachable(): Promise<boolean> {
  const client = new Redis(REDIS_URL, { lazyConnect: true, connectTimeout: 1500, maxRetriesPerRequest: 0, retryStrategy: () => null });
  try {
    await client.connect();
    return (await client.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    client.disconnect();
  }
}

const redisOk = await redisReachable();
/** Redis answers (at EARSHOT_TEST_REDIS_URL, default 127.0.0.1:6379). */
export const redisReady = redisOk;
/** Redis and PostgreSQL both answer. */
export const queueReady = redisOk && postgresAvailable;

/** `describe` when the queue can run (or CI demands it: the suite then fails loudly), else a visible skip. */
export function queueSuite(name: string): typeof describe | typeof describe.skip {
  if (!queueReady && !inCi) console.warn(`SKIPPED ${name}: needs Redis at ${REDIS_URL} (${redisOk ? 'ok' : 'unreachable'}) and PostgreSQL (${postgresAvailable ? 'ok' : 'unreachable'})`);
  return queueReady || inCi ? describe : describe.skip;
}

/** Throws the message CI needs when the queue cannot run (call first in beforeAll / the test). */
export function requireQueue(): void {
  if (!queueReady) throw new Error(`CI=true needs Redis at ${REDIS_URL} and PostgreSQL`);
}

/** Worker processes of one suite under one queue prefix. */
export class QueueWorkers {
  readonly prefix = `earshot-test-${randomBytes(5).toString('hex')}`;
  readonly children: ChildProcess[] = [];

  /** Sets this suite's prefix for the API process (read when its queues are made). */
  usePrefix(): void {
    process.env.EARSHOT_QUEUE_PREFIX = this.prefix;
  }

  /** Starts `npm run worker`'s entry against the app's database; `dataDir` defaults to the app's. */
  spawn(config: TestApp['config'], dataDir = config.dataDir): ChildProcess {
    const child = spawn(process.execPath, ['--import', 'tsx', 'server/jobs/worker-main.ts'], {
      env: { ...process.env, DATABASE_URL: config.databaseUrl, REDIS_URL, EARSHOT_DATA_DIR: dataDir, EARSHOT_QUEUE_PREFIX: this.prefix, EARSHOT_WORKERS: '1', EARSHOT_JOB_LOCK_MS: '4000', EARSHOT_JOB_STALLED_MS: '1500' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    this.children.push(child);
    child.stderr?.on('data', (chunk: Buffer) => process.stderr.write(`[worker ${child.pid}] ${chunk}`));
    return child;
  }

  /** Starts a worker and resolves once it says it is ready. */
  start(config: TestApp['config'], dataDir?: string): Promise<ChildProcess> {
    const child = this.spawn(config, dataDir);
    return new Promise((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error('worker did not start in 90 s')), 90_000);
      child.stdout?.on('data', (chunk: Buffer) => {
        if (chunk.toString().includes('ready')) {
          clearTimeout(timer);
          resolve(child);
        }
      });
      child.once('exit', (code) => reject(new Error(`worker exited with ${code}`)));
    });
  }

  /** Workers still alive. */
  alive(): ChildProcess[] {
    return this.children.filter((child) => child.exitCode === null && child.signalCode === null);
  }

  /** Stops every live worker with SIGTERM and waits for them. */
  async stopAll(): Promise<void> {
    const live = this.alive();
    for (const child of live) child.kill('SIGTERM');
    await Promise.all(live.map((child) => new Promise((resolve) => child.once('exit', resolve))));
  }

  /** SIGKILLs what is left and removes the prefix's keys from Redis. */
  async cleanUp(): Promise<void> {
    for (const child of this.alive()) child.kill('SIGKILL');
    const redis = new Redis(REDIS_URL);
    try {
      const keys = await redis.keys(`${this.prefix}:*`);
      if (keys.length > 0) await redis.del(...keys);
    } finally {
      redis.disconnect();
    }
  }
}
