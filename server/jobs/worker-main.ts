// `npm run worker`: a queue worker process. Takes coverage jobs from the
// BullMQ queue on REDIS_URL and runs them on a worker-thread pool, writing
// state to the shared PostgreSQL (DATABASE_URL) and results to the shared
// files folder (EARSHOT_DATA_DIR). Run as many as you like, on any machine
// that sees the same Redis, database and files folder.
import { hostname } from 'node:os';
import { Worker } from 'bullmq';
import { loadConfig } from '../config.ts';
import { openDatabase } from '../db/client.ts';
import { executeCoverageRun } from './coverage-job.ts';
import { WorkerPool } from './pool.ts';
import { COVERAGE_QUEUE, queuePrefix, redisConnection } from './runner.ts';

async function main(): Promise<void> {
  const config = loadConfig();
  if (!config.redisUrl) throw new Error('REDIS_URL is not set: queue workers take their jobs from Redis (without it the server runs jobs itself)');
  if (!config.databaseUrl) throw new Error('DATABASE_URL is not set: queue workers need the PostgreSQL database the server uses (the embedded one cannot be shared)');
  const db = await openDatabase(config);
  const pool = config.workerCount > 1 ? new WorkerPool(config.workerCount) : undefined;
  const workerId = `${hostname()}:${process.pid}`;
  const worker = new Worker(
    COVERAGE_QUEUE,
    async (job) => {
      const runId = String((job.data as { runId?: unknown }).runId ?? '');
      const outcome = await executeCoverageRun(db, config, runId, { pool, workers: 1, workerId });
      return { outcome };
    },
    {
      connection: redisConnection(config.redisUrl),
      prefix: queuePrefix(),
      concurrency: 1,
      // A killed worker's job is taken back after its lock lapses.
      lockDuration: Number(process.env.EARSHOT_JOB_LOCK_MS ?? 30_000),
      stalledInterval: Number(process.env.EARSHOT_JOB_STALLED_MS ?? 30_000),
      maxStalledCount: 2,
    },
  );
  worker.on('error', (error) => console.error(`worker: ${error.message}`));
  await worker.waitUntilReady();
  console.log(`earshot worker ${workerId} ready (queue ${queuePrefix()}:${COVERAGE_QUEUE}, ${pool?.size ?? 1} thread(s))`);
  const stop = async () => {
    await worker.close();
    await pool?.close();
    await db.close();
    process.exit(0);
  };
  process.on('SIGTERM', () => void stop());
  process.on('SIGINT', () => void stop());
}

main().catch((error: unknown) => {
  console.error(`earshot worker: ${error instanceof Error ? error.message : String(error)}`);
  process.exit(1);
});
