// Runs one area prediction either in the calling thread or split over the
// worker pool (chunks of rays, then bands of rows, taken by the workers from
// shared counters), with progress and cancel.
import { planArea, rasteriseBasicLoss, rasteriseVisibility, sampleBufferLength, sweepSector, type AreaRequest, type AreaResult } from '../coverage/area.ts';
import type { TerrainWindow } from '../coverage/sweep.ts';
import { defaultWorkerCount, WorkerPool } from './pool.ts';
import { CONTROL, type AreaTask, type AreaTaskResult } from './area-protocol.ts';

/** A worker pool running coverage area tasks (pool-worker.ts). */
export type AreaPool = WorkerPool<AreaTask, AreaTaskResult>;

/** A pool of `size` threads (default: every core) running coverage area tasks. */
export function createAreaPool(size = defaultWorkerCount()): AreaPool {
  return new WorkerPool<AreaTask, AreaTaskResult>(size, new URL('./pool-worker.ts', import.meta.url));
}

export class RunCancelledError extends Error {
  constructor() {
    super('coverage run cancelled');
    this.name = 'RunCancelledError';
  }
}

export interface RunOptions {
  /** Worker threads (default: in the calling thread when no pool is given and workers ≤ 1). */
  workers?: number;
  /** A pool to use instead of creating one. */
  pool?: AreaPool;
  /** Progress 0..1. */
  onProgress?: (fraction: number) => void;
  signal?: AbortSignal;
}

/** Share of the work done by the sweep phase (the rest is rasterisation), for progress. */
const SWEEP_SHARE = 0.85;

/** Chunks of rays (and bands of rows) per run: small enough that the workers end within one chunk of each other. */
const CHUNKS_PER_PHASE = 96;

function shared(bytes: number): SharedArrayBuffer {
  return new SharedArrayBuffer(Math.max(4, bytes));
}

export async function runArea(terrain: TerrainWindow, request: AreaRequest, options: RunOptions = {}): Promise<AreaResult> {
  const plan = planArea(terrain, request);
  const { widthPx, heightPx } = terrain.frame;
  const cells = widthPx * heightPx;
  const checkCancel = () => {
    if (options.signal?.aborted) throw new RunCancelledError();
  };
  const progress = options.onProgress ?? (() => {});
  const workers = options.pool ? options.pool.size : (options.workers ?? 1);

  if (!options.pool && workers <= 1) {
    // In the calling thread, yielding between chunks of rays so progress and cancel get through.
    const samples = new Float32Array(sampleBufferLength(plan));
    const chunk = Math.max(16, Math.ceil(plan.rayCount / 50));
    for (let r = 0; r < plan.rayCount; r += chunk) {
      checkCancel();
      sweepSector(terrain, request, plan, r, Math.min(plan.rayCount, r + chunk), samples);
      progress((SWEEP_SHARE * Math.min(plan.rayCount, r + chunk)) / plan.rayCount);
      await new Promise((resolve) => setImmediate(resolve));
    }
    checkCancel();
    const result: AreaResult = { mode: request.mode, plan };
    if (request.mode === 'los') {
      result.visible = new Uint8Array(cells);
      result.visibleCells = rasteriseVisibility(terrain, request, plan, samples, 0, heightPx, result.visible);
    } else {
      result.lossDb = new Float32Array(cells);
      rasteriseBasicLoss(terrain, request, plan, samples, 0, heightPx, result.lossDb);
    }
    progress(1);
    return result;
  }

  checkCancel();
  const pool = options.pool ?? createAreaPool(workers);
  try {
    // The window goes to the workers as shared memory (no copy when it already is). Window, clutter and
    // ray-sample buffers are internal to the run and are reused by the pool's next run of the same size;
    // the output is returned to the caller, so it is always fresh.
    const reused: SharedArrayBuffer[] = [];
    const take = (bytes: number): SharedArrayBuffer => {
      const buffer = pool.takeShared(Math.max(4, bytes));
      reused.push(buffer);
      return buffer;
    };
    const toShared = (values: Float32Array): SharedArrayBuffer => {
      if (values.buffer instanceof SharedArrayBuffer && values.byteOffset === 0 && values.byteLength === values.buffer.byteLength) return values.buffer;
      const buffer = take(values.byteLength);
      new Float32Array(buffer).set(values);
      return buffer;
    };
    const elevation = toShared(terrain.elevationM);
    const clutter = terrain.clutterHeightM ? toShared(terrain.clutterHeightM) : undefined;
    const samples = take(sampleBufferLength(plan) * 4);
    const out = shared(request.mode === 'los' ? cells : cells * 4);
    const control = new SharedArrayBuffer(CONTROL.length * 4);
    const counters = new Int32Array(control);
    const { full: _full, ...plainRequest } = request;
    // One task per worker; the workers take chunks of rays, then bands of rows, from the shared counters
    // (pool-worker.ts runShare). The chunks do not depend on the pool size, and every ray and cell is
    // computed by the same code whoever takes it, so 1, 2 or n workers give the same bytes.
    const raysPerChunk = Math.max(4, Math.ceil(plan.rayCount / CHUNKS_PER_PHASE));
    const rowsPerBand = Math.max(2, Math.ceil(heightPx / CHUNKS_PER_PHASE));
    const stop = () => {
      Atomics.store(counters, CONTROL.stop, 1);
      Atomics.notify(counters, CONTROL.raysDone);
    };
    const onAbort = () => stop();
    options.signal?.addEventListener('abort', onAbort);
    let reported = 0;
    const report = () => {
      const rays = Math.min(plan.rayCount, Atomics.load(counters, CONTROL.raysDone));
      const rows = Math.min(heightPx, Atomics.load(counters, CONTROL.rowsDone));
      const fraction = (SWEEP_SHARE * rays) / plan.rayCount + ((1 - SWEEP_SHARE) * rows) / heightPx;
      if (fraction > reported && fraction < 1) {
        reported = fraction;
        progress(fraction);
      }
    };
    const timer = setInterval(report, 50);
    let results: PromiseSettledResult<AreaTaskResult>[];
    try {
      const tasks: Promise<AreaTaskResult>[] = [];
      for (let i = 0; i < pool.size; i++) {
        const task: AreaTask = { id: i, phase: 'area', frame: terrain.frame, elevation, clutter, plan, request: plainRequest, samples, out, start: raysPerChunk, end: rowsPerBand, control };
        // A failed worker (error, or a thread that died) stops the others, which may be waiting at the barrier for its chunk.
        tasks.push(pool.exec(task).catch((error: unknown) => {
          stop();
          throw error;
        }));
      }
      results = await Promise.allSettled(tasks);
      // Every task has answered (or its thread is gone), so no worker reads these buffers any more.
      for (const buffer of reused) pool.giveBackShared(buffer);
    } finally {
      clearInterval(timer);
      options.signal?.removeEventListener('abort', onAbort);
    }
    const failed = results.find((r): r is PromiseRejectedResult => r.status === 'rejected');
    if (failed) throw failed.reason instanceof Error ? failed.reason : new Error(String(failed.reason));
    checkCancel();
    if (Atomics.load(counters, CONTROL.rowsDone) !== heightPx) throw new RunCancelledError();
    const visibleCells = results.reduce((sum, r) => sum + (r.status === 'fulfilled' ? (r.value.visibleCells ?? 0) : 0), 0);
    progress(1);
    if (request.mode === 'los') return { mode: request.mode, plan, visible: new Uint8Array(out), visibleCells };
    return { mode: request.mode, plan, lossDb: new Float32Array(out) };
  } finally {
    if (!options.pool) await pool.close();
  }
}
