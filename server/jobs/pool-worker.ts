// Worker-thread side of the pool: runs one slice of an area prediction over
// shared buffers and answers with the count of visible cells (los) or nothing.
import { parentPort, threadId } from 'node:worker_threads';
import { rasteriseBasicLoss, rasteriseVisibility, sweepSector, type AreaRequest } from '../coverage/area.ts';
import type { GridFrame, RayPlan } from '../coverage/geometry.ts';
import type { TerrainWindow } from '../coverage/sweep.ts';

export interface AreaTask {
  id: number;
  phase: 'sweep' | 'rasterise';
  frame: GridFrame;
  elevation: SharedArrayBuffer;
  clutter?: SharedArrayBuffer;
  plan: RayPlan;
  /** The request without functions (full mode builds its model in the worker). */
  request: Omit<AreaRequest, 'full'>;
  samples: SharedArrayBuffer;
  out: SharedArrayBuffer;
  start: number;
  end: number;
}

export interface AreaTaskResult {
  id: number;
  /** Thread that ran the task (for load-balance checks). */
  threadId?: number;
  /** CPU time of the task in the worker, ms. */
  cpuMs?: number;
  visibleCells?: number;
  error?: string;
}

function runTask(task: AreaTask): AreaTaskResult {
  const terrain: TerrainWindow = {
    frame: task.frame,
    elevationM: new Float32Array(task.elevation),
    clutterHeightM: task.clutter ? new Float32Array(task.clutter) : undefined,
  };
  const samples = new Float32Array(task.samples);
  const request = task.request as AreaRequest;
  if (task.phase === 'sweep') {
    sweepSector(terrain, request, task.plan, task.start, task.end, samples);
    return { id: task.id };
  }
  if (request.mode === 'los') {
    const visibleCells = rasteriseVisibility(terrain, request, task.plan, samples, task.start, task.end, new Uint8Array(task.out));
    return { id: task.id, visibleCells };
  }
  rasteriseBasicLoss(terrain, request, task.plan, samples, task.start, task.end, new Float32Array(task.out));
  return { id: task.id };
}

parentPort?.on('message', (task: AreaTask) => {
  try {
    const t0 = performance.now();
    const result = runTask(task);
    parentPort!.postMessage({ ...result, threadId, cpuMs: performance.now() - t0 });
  } catch (error) {
    parentPort!.postMessage({ id: task.id, error: error instanceof Error ? error.message : String(error) });
  }
});
