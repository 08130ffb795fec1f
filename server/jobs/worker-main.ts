// `npm run worker`: a queue worker process. Takes coverage jobs and the tiles
// of fleet link table runs, siting matrices and split coverage runs (one gateway
// each; server/jobs/link-runs.ts, coverage-split.ts) from the BullMQ queues on
// REDIS_URL and runs them on a worker-thread pool, writing
// state to the shared PostgreSQL (DATABASE_URL) and results to the shared
// files folder (EARSHOT_DATA_DIR). Run as many as you like, on any machine
// that sees the same Redis, database and files folder.
import { hostname } from 'node:os';
import { Worker } from 'bullmq';
import { loadConfig } from '../config.ts';
import { openDatabase } from '../db/client.ts';
import { executeCoverageRun } from './coverage-job.ts';
import { createAreaPool } from './area-runner.ts';
import { COVERAGE_ATTEMPTS, COVERAGE_QUEUE } from './runner.ts';
import { queuePrefix, redisConnection } from './queue-connection.ts';
import { LinkEngine } from './link-engine.ts';
import { LINK_TILE_QUEUE, LinkTileExecutor, linkRunJobsFor, TILE_ATTEMPTS } from './link-runs.ts';
import { failLinkTile, findLinkTile } from '../db/repositories/link-runs.ts';
import { failCoverageRun } from '../db/repositories/coverage-runs.ts';

async function main(): Promise<void> {
  const config = loadConfig();
  if (!config.redisUrl) throw new Error('REDIS_URL is not set: queue workers take their jobs from Redis (without it the server runs jobs itself)');
  if (!config.databaseUrl) throw new Error('DATABASE_URL is not set: queue workers need the PostgreSQL database the server uses (the embedded one cannot be shared)');
  const db = await openDatabase(config);
  const pool = config.workerCount > 1 ? createAreaPool(config.workerCount) : undefined;
  const workerId = `${hostname()}:${process.pid}`;
  const engine = new LinkEngine(db, config);
  // A split coverage run's parent queues its children (one gateway each) on the link-tiles queue.
  const parts = linkRunJobsFor(config, engine);
  const shutdown = new AbortController();
  const worker = new Worker(
    COVERAGE_QUEUE,
    async (job) => {
      const runId = String((job.data as { runId?: unknown }).runId ?? '');
      const final = job.attemptsMade + 1 >= (job.opts.attempts ?? COVERAGE_ATTEMPTS);
      // A CoverageAttemptFailed (a layer or part this worker cannot read, or this worker stopping) goes to the queue: another worker retries.
      const outcome = await executeCoverageRun(db, config, runId, { pool, workers: 1, workerId, parts, final, shutdown: shutdown.signal });
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
  // A run the queue gives up on without our processor (stalled too often: its workers keep dying) fails, once.
  worker.on('failed', (job, error) => {
    if (!job || !/stalled/i.test(error.message)) return;
    const runId = String((job.data as { runId?: unknown }).runId ?? '');
    void failCoverageRun(db, runId, `the run's workers stopped responding (${error.message})`).catch((failure: unknown) => console.error(`worker: could not record a stalled run: ${String(failure)}`));
  });
  // Tiles of fleet link table runs: the link engine of this process (its paths on
  // EARSHOT_WORKERS threads), one tile at a time; a tile is idempotent and written in one transaction.
  // Tiles of split coverage runs (a gateway each) run on this process's coverage threads.
  const executor = new LinkTileExecutor(engine, { config, areaPool: () => pool });
  const tiles = new Worker(
    LINK_TILE_QUEUE,
    async (job) => {
      const { runId, index } = job.data as { runId: string; index: number };
      const final = job.attemptsMade + 1 >= (job.opts.attempts ?? TILE_ATTEMPTS);
      const outcome = await executor.execute(String(runId), Number(index), { workerId, final });
      // A retry is the queue's: another worker (on another machine, maybe) takes the tile.
      if (outcome.kind === 'retry') throw new Error(outcome.error);
      return outcome;
    },
    {
      connection: redisConnection(config.redisUrl),
      prefix: queuePrefix(),
      concurrency: 1,
      lockDuration: Number(process.env.EARSHOT_JOB_LOCK_MS ?? 30_000),
      stalledInterval: Number(process.env.EARSHOT_JOB_STALLED_MS ?? 30_000),
      maxStalledCount: 3,
    },
  );
  tiles.on('error', (error) => console.error(`worker (link tiles): ${error.message}`));
  // A tile the queue gives up on without our processor (stalled too often: its workers keep dying) fails its run, once.
  tiles.on('failed', (job, error) => {
    if (!job || !/stalled/i.test(error.message)) return;
    const { runId, index } = job.data as { runId: string; index: number };
    void findLinkTile(db, String(runId), Number(index))
      .then((tile) => tile && failLinkTile(db, { runId: tile.runId, index: tile.index, attempt: tile.attempts, error: `the tile's workers stopped responding ${tile.attempts} times (${error.message})`, final: true }))
      .catch((failure: unknown) => console.error(`worker: could not record a stalled tile: ${String(failure)}`));
  });
  await Promise.all([worker.waitUntilReady(), tiles.waitUntilReady()]);
  console.log(`earshot worker ${workerId} ready (queues ${queuePrefix()}:${COVERAGE_QUEUE}, ${queuePrefix()}:${LINK_TILE_QUEUE}; ${pool?.size ?? 1} coverage thread(s), ${engine.workerCount || 1} link thread(s))`);
  const stop = async () => {
    // A parent waiting for its children hands its run back to the queue (another worker resumes it).
    shutdown.abort();
    await Promise.all([worker.close(), tiles.close()]);
    await parts.close();
    await engine.close();
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
