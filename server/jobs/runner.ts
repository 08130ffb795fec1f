// The coverage job runner the API hands runs to. Without configuration: an
// in-process queue over the worker-thread pool (one run at a time, each
// using every thread). With REDIS_URL: a BullMQ queue; `npm run worker`
// processes (server/jobs/worker-main.ts) on any machine take the jobs.
// Job state always lives in the CoverageRun row, so a restart loses nothing:
// unfinished rows are queued again when the runner starts. A run of several
// gateways is split into a child per gateway on the link-tiles runner
// (`parts`: this process, or the BullMQ link-tiles queue), see coverage-split.ts.
import { hostname } from 'node:os';
import { Queue } from 'bullmq';
import type { Database } from '../db/client.ts';
import type { Config } from '../config.ts';
import { unfinishedCoverageRuns } from '../db/repositories/coverage-runs.ts';
import { executeCoverageRun } from './coverage-job.ts';
import { createAreaPool, type AreaPool } from './area-runner.ts';
import type { LinkEngine } from './link-engine.ts';
import { linkRunJobsFor } from './link-runs.ts';
import type { LinkRunJobs } from './link-run-jobs.ts';
import { queuePrefix, redisConnection } from './queue-connection.ts';

export const COVERAGE_QUEUE = 'coverage';
/** Attempts per coverage job on the queue: a worker that dies, or cannot read a layer, hands the run to another. */
export const COVERAGE_ATTEMPTS = 3;

export interface CoverageJobs {
  readonly kind: 'in-process' | 'bullmq';
  /** Where the children of split runs go (cancel takes the queued ones off it). */
  readonly parts: LinkRunJobs;
  enqueue(runId: string): Promise<void>;
  close(): Promise<void>;
}

class InProcessJobs implements CoverageJobs {
  readonly kind = 'in-process' as const;
  private pool: AreaPool | null = null;
  private queue: string[] = [];
  private running: Promise<void> | null = null;
  private closed = false;
  private readonly shutdown = new AbortController();
  readonly parts: LinkRunJobs;

  constructor(
    private readonly db: Database,
    private readonly config: Config,
    engine: LinkEngine,
  ) {
    // The children run in this process too, on the same area pool, while their parent waits.
    this.parts = linkRunJobsFor(config, engine, { areaPool: () => this.pool ?? undefined });
  }

  async enqueue(runId: string): Promise<void> {
    if (this.closed) throw new Error('job runner is closed');
    if (!this.queue.includes(runId)) this.queue.push(runId);
    if (!this.running) this.running = this.drain();
  }

  private async drain(): Promise<void> {
    try {
      while (this.queue.length > 0 && !this.closed) {
        const runId = this.queue.shift()!;
        // Small windows run faster in the calling thread than the pool can start up.
        this.pool ??= this.config.workerCount > 1 ? createAreaPool(this.config.workerCount) : null;
        await executeCoverageRun(this.db, this.config, runId, { pool: this.pool ?? undefined, workers: 1, workerId: `${hostname()}:${process.pid}`, parts: this.parts, pollMs: 100, shutdown: this.shutdown.signal }).catch(() => undefined);
      }
    } finally {
      this.running = null;
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    this.queue = [];
    // A parent waiting for its children stops waiting (the run stays running: the next start resumes it).
    this.shutdown.abort();
    await this.running?.catch(() => undefined);
    await this.parts.close();
    await this.pool?.close();
    this.pool = null;
  }
}

class BullJobs implements CoverageJobs {
  readonly kind = 'bullmq' as const;
  private readonly queue: Queue;

  constructor(
    redisUrl: string,
    prefix: string,
    readonly parts: LinkRunJobs,
  ) {
    this.queue = new Queue(COVERAGE_QUEUE, { connection: redisConnection(redisUrl), prefix });
  }

  async enqueue(runId: string): Promise<void> {
    // jobId = run id: a run is never queued twice; attempts cover a worker that dies.
    await this.queue.add('run', { runId }, { jobId: runId, attempts: COVERAGE_ATTEMPTS, backoff: { type: 'fixed', delay: 1000 }, removeOnComplete: 1000, removeOnFail: 1000 });
  }

  async close(): Promise<void> {
    await this.queue.close();
    await this.parts.close();
  }
}

/** The runner for this configuration; unfinished runs of a previous process are queued again. */
export async function createCoverageJobs(db: Database, config: Config, engine: LinkEngine, env: NodeJS.ProcessEnv = process.env): Promise<CoverageJobs> {
  const jobs: CoverageJobs = config.redisUrl ? new BullJobs(config.redisUrl, queuePrefix(env), linkRunJobsFor(config, engine, {}, env)) : new InProcessJobs(db, config, engine);
  for (const run of await unfinishedCoverageRuns(db)) await jobs.enqueue(run.id);
  return jobs;
}
