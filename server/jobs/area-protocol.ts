// What the coverage area tasks send between area-runner.ts (the calling thread) and
// pool-worker.ts (the worker threads): the task and result shapes and the slots of the
// shared control buffer. A module of its own, so the generic pool (pool.ts) knows nothing
// of coverage and the worker does not import the pool.
import type { AreaRequest } from '../coverage/area.ts';
import type { GridFrame, RayPlan } from '../coverage/geometry.ts';

/** Int32 slots of the shared control buffer of an 'area' task (area-runner.ts ↔ pool-worker.ts). */
export const CONTROL = { nextRay: 0, raysDone: 1, nextRow: 2, rowsDone: 3, stop: 4, length: 8 } as const;

export interface AreaTask {
  id: number;
  phase: 'sweep' | 'rasterise' | 'area';
  frame: GridFrame;
  elevation: SharedArrayBuffer;
  clutter?: SharedArrayBuffer;
  plan: RayPlan;
  /** The request without functions (full mode builds its model in the worker). */
  request: Omit<AreaRequest, 'full'>;
  samples: SharedArrayBuffer;
  out: SharedArrayBuffer;
  /** 'sweep'/'rasterise': the slice; 'area': rays per chunk (start) and rows per band (end). */
  start: number;
  end: number;
  /** 'area': Int32Array(CONTROL.length) over a SharedArrayBuffer, shared by every worker of the run. */
  control?: SharedArrayBuffer;
}

export interface AreaTaskResult {
  id: number;
  /** Thread that ran the task (for load-balance checks). */
  threadId?: number;
  /** CPU time of the task in the worker, ms. */
  cpuMs?: number;
  visibleCells?: number;
  /** 'area': the run was stopped (cancelled, or another worker failed) before this worker finished. */
  stopped?: boolean;
  error?: string;
}
