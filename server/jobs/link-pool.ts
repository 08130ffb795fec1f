// Link paths on the worker-thread pool (server/jobs/pool.ts): a cold fleet
// table spreads its node → gateway paths (terrain profile + the plan's path
// method, the expensive part of a link) over every core. Each worker opens
// the plan's terrain files itself (kept per terrain signature) and runs the
// same function as the in-thread path (server/planning/link-path.ts), so the
// numbers do not depend on where a path was predicted. Budgets (microseconds
// each) and database writes stay on the calling thread.
// This one module is both sides: imported normally it exports LinkPathPool;
// started by the pool as a worker entry it answers tasks.
import { parentPort, threadId, workerData } from 'node:worker_threads';
import { computeLinkPath, type LinkPathSettings } from '../planning/link-path.ts';
import { newPathScratch, type PathEnd, type PathPrediction } from '../planning/path.ts';
import { openTerrainStore, type TerrainFile, type TerrainStore, type TerrainStoreOptions } from '../terrain/store.ts';
import { defaultWorkerCount, WorkerPool } from './pool.ts';

/** The terrain a worker opens for a plan: its files and store options, named by a signature. */
export interface LinkTerrainSpec {
  signature: string;
  files: TerrainFile[];
  options: TerrainStoreOptions;
}

export interface LinkPathPair {
  node: PathEnd;
  gateway: PathEnd;
}

interface LinkPathTask {
  id: number;
  terrain: LinkTerrainSpec | null;
  /** null only in the empty readiness task. */
  settings: LinkPathSettings | null;
  pairs: LinkPathPair[];
}

interface LinkPathTaskResult {
  id: number;
  threadId?: number;
  paths?: PathPrediction[];
  error?: string;
}

/**
 * Pairs per task: at least 12 (small enough to balance two to many cores, large enough that
 * messages cost little); a big call (the siting matrix's groups) gets tasks of up to 96, about
 * 4 per worker, so each holds a worker for ~10 ms and the worker rarely waits for the calling
 * thread (busy with budgets) to hand it the next task.
 */
const MIN_PAIRS_PER_TASK = 12;
const MAX_PAIRS_PER_TASK = 96;

export class LinkPathPool {
  private pool: WorkerPool<LinkPathTask, LinkPathTaskResult> | null = null;
  private nextId = 1;
  /** Threads that answered in the last run (for load-balance checks). */
  lastThreads = new Set<number>();

  constructor(readonly size = defaultWorkerCount()) {
    if (!Number.isInteger(size) || size < 1) throw new RangeError('link pool size must be a whole number ≥ 1');
  }

  /**
   * Starts the workers (loading their modules takes seconds on a busy machine), so
   * they are ready when a cold fleet asks; idempotent.
   */
  warm(): void {
    this.pool ??= new WorkerPool<LinkPathTask, LinkPathTaskResult>(this.size, new URL(import.meta.url));
  }

  /**
   * Resolves once every worker has loaded its modules and answered one empty task, so a
   * caller (the benchmark, a health check) can tell start-up cost from steady state.
   */
  async ready(): Promise<void> {
    this.warm();
    const pool = this.pool!;
    // All workers are idle here (no fleet runs yet), so each one takes one empty task.
    await Promise.all(Array.from({ length: this.size }, () => pool.exec({ id: this.nextId++, terrain: null, settings: null, pairs: [] })));
  }

  /** Paths of `pairs` in their order, spread over the workers (started on first use). */
  async computePaths(terrain: LinkTerrainSpec | null, settings: LinkPathSettings, pairs: readonly LinkPathPair[]): Promise<PathPrediction[]> {
    if (pairs.length === 0) return [];
    this.warm();
    const pool = this.pool!;
    const plain: LinkPathSettings = { path: settings.path, profileStepM: settings.profileStepM, profileInterpolation: settings.profileInterpolation };
    const chunks: Promise<LinkPathTaskResult>[] = [];
    const perTask = Math.max(MIN_PAIRS_PER_TASK, Math.min(MAX_PAIRS_PER_TASK, Math.ceil(pairs.length / (4 * this.size))));
    for (let start = 0; start < pairs.length; start += perTask) {
      chunks.push(pool.exec({ id: this.nextId++, terrain, settings: plain, pairs: pairs.slice(start, start + perTask) }));
    }
    const results = await Promise.all(chunks);
    this.lastThreads = new Set(results.map((r) => r.threadId ?? -1));
    return results.flatMap((r) => r.paths ?? []);
  }

  async close(): Promise<void> {
    const pool = this.pool;
    this.pool = null;
    await pool?.close();
  }
}

// ---- worker side ----

const stores = new Map<string, Promise<TerrainStore>>();
/** This worker's P.1812 scratch, reused by every path it predicts. */
const scratch = newPathScratch();

function storeFor(spec: LinkTerrainSpec): Promise<TerrainStore> {
  let store = stores.get(spec.signature);
  if (!store) {
    store = openTerrainStore(spec.files, spec.options);
    store.catch(() => stores.delete(spec.signature));
    stores.set(spec.signature, store);
    // Two plans' terrain at most per worker; the oldest is closed.
    if (stores.size > 2) {
      const [oldKey, old] = stores.entries().next().value as [string, Promise<TerrainStore>];
      stores.delete(oldKey);
      void old.then((s) => s.close()).catch(() => undefined);
    }
  }
  return store;
}

async function runTask(task: LinkPathTask): Promise<LinkPathTaskResult> {
  const terrain = task.terrain ? await storeFor(task.terrain) : null;
  const paths: PathPrediction[] = [];
  if (task.pairs.length > 0 && !task.settings) throw new Error('link path task without settings');
  for (const pair of task.pairs) paths.push(await computeLinkPath(terrain, task.settings!, pair.node, pair.gateway, scratch));
  return { id: task.id, paths };
}

const isLinkWorker = parentPort !== null && (workerData as { entry?: unknown } | null)?.entry === import.meta.url;
if (isLinkWorker) {
  parentPort!.on('message', (task: LinkPathTask) => {
    runTask(task).then(
      (result) => parentPort!.postMessage({ ...result, threadId }),
      (error: unknown) => parentPort!.postMessage({ id: task.id, error: error instanceof Error ? error.message : String(error) }),
    );
  });
}
