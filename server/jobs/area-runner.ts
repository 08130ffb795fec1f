// Runs one area prediction either in the calling thread or split over the
// worker pool (ray sectors, then bands of rows), with progress and cancel.
import { planArea, rasteriseBasicLoss, rasteriseVisibility, sampleBufferLength, sweepSector, type AreaRequest, type AreaResult } from '../coverage/area.ts';
import type { TerrainWindow } from '../coverage/sweep.ts';
import { WorkerPool } from './pool.ts';
import type { AreaTask } from './pool-worker.ts';

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
  pool?: WorkerPool;
  /** Progress 0..1. */
  onProgress?: (fraction: number) => void;
  signal?: AbortSignal;
}

/** Share of the work done by the sweep phase (the rest is rasterisation), for progress. */
const SWEEP_SHARE = 0.85;

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

  const pool = options.pool ?? new WorkerPool(workers);
  try {
    const elevation = shared(terrain.elevationM.byteLength);
    new Float32Array(elevation).set(terrain.elevationM);
    let clutter: SharedArrayBuffer | undefined;
    if (terrain.clutterHeightM) {
      clutter = shared(terrain.clutterHeightM.byteLength);
      new Float32Array(clutter).set(terrain.clutterHeightM);
    }
    const samples = shared(sampleBufferLength(plan) * 4);
    const out = shared(request.mode === 'los' ? cells : cells * 4);
    const { full: _full, ...plainRequest } = request;
    let id = 0;
    const base = { frame: terrain.frame, elevation, clutter, plan, request: plainRequest, samples, out };

    // Phase 1: sectors of rays; several per worker so a slow sector does not hold the others up.
    const sectors = Math.min(plan.rayCount, pool.size * 8);
    const raysPerSector = Math.ceil(plan.rayCount / sectors);
    let raysDone = 0;
    const sweeps: Promise<unknown>[] = [];
    for (let r = 0; r < plan.rayCount; r += raysPerSector) {
      const end = Math.min(plan.rayCount, r + raysPerSector);
      const task: AreaTask = { ...base, id: id++, phase: 'sweep', start: r, end };
      sweeps.push(
        pool.exec(task).then(() => {
          raysDone += end - r;
          progress((SWEEP_SHARE * raysDone) / plan.rayCount);
          checkCancel();
        }),
      );
    }
    await Promise.all(sweeps);
    checkCancel();

    // Phase 2: bands of rows.
    const bands = Math.min(heightPx, pool.size * 4);
    const rowsPerBand = Math.ceil(heightPx / bands);
    let visibleCells = 0;
    const rasters: Promise<unknown>[] = [];
    for (let row = 0; row < heightPx; row += rowsPerBand) {
      const task: AreaTask = { ...base, id: id++, phase: 'rasterise', start: row, end: Math.min(heightPx, row + rowsPerBand) };
      rasters.push(pool.exec(task).then((result) => (visibleCells += result.visibleCells ?? 0)));
    }
    await Promise.all(rasters);
    progress(1);
    if (request.mode === 'los') return { mode: request.mode, plan, visible: new Uint8Array(out), visibleCells };
    return { mode: request.mode, plan, lossDb: new Float32Array(out) };
  } finally {
    if (!options.pool) await pool.close();
  }
}
