// Worker-thread side of the pool: runs an area prediction over shared buffers
// and answers with the count of visible cells (los) or nothing. Phase 'area'
// (what runArea sends, one task per worker): the workers take chunks of rays,
// then bands of rows, from shared counters (Atomics) until none are left, with
// a barrier between the two phases, so they finish together whatever a chunk
// costs and no message is exchanged per chunk. 'sweep' / 'rasterise' run one
// given slice.
import { parentPort, threadId } from 'node:worker_threads';
import { rasteriseBasicLoss, rasteriseVisibility, sweepSector, type AreaRequest } from '../coverage/area.ts';
import type { TerrainWindow } from '../coverage/sweep.ts';
import { p1812FullModel } from '../coverage/full-model.ts';
import { CONTROL, type AreaTask, type AreaTaskResult } from './area-protocol.ts';

function runTask(task: AreaTask): AreaTaskResult {
  const terrain: TerrainWindow = {
    frame: task.frame,
    elevationM: new Float32Array(task.elevation),
    clutterHeightM: task.clutter ? new Float32Array(task.clutter) : undefined,
  };
  const samples = new Float32Array(task.samples);
  const request = task.request as AreaRequest;
  if (task.phase === 'area') return runShare(task, terrain, request, samples);
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

/** This worker's share of a whole run: chunks of rays, barrier, bands of rows, all taken from the shared counters. */
function runShare(task: AreaTask, terrain: TerrainWindow, request: AreaRequest, samples: Float32Array): AreaTaskResult {
  const control = new Int32Array(task.control!);
  const { plan } = task;
  const raysPerChunk = task.start;
  const rowsPerBand = task.end;
  // full: the P.1812 model is built once per worker and run (not per chunk); it is a pure function of the request.
  const sweepRequest: AreaRequest = request.mode === 'full' ? { ...request, full: p1812FullModel(request, request.p1812 ?? { siteLatDeg: 0 }) } : request;
  for (;;) {
    if (Atomics.load(control, CONTROL.stop) !== 0) return { id: task.id, stopped: true };
    const start = Atomics.add(control, CONTROL.nextRay, raysPerChunk);
    if (start >= plan.rayCount) break;
    const end = Math.min(plan.rayCount, start + raysPerChunk);
    sweepSector(terrain, sweepRequest, plan, start, end, samples);
    if (Atomics.add(control, CONTROL.raysDone, end - start) + (end - start) === plan.rayCount) Atomics.notify(control, CONTROL.raysDone);
  }
  // Barrier: every ray swept (chunks still held by other workers finish) before any cell reads the buffer.
  for (;;) {
    const done = Atomics.load(control, CONTROL.raysDone);
    if (done >= plan.rayCount) break;
    if (Atomics.load(control, CONTROL.stop) !== 0) return { id: task.id, stopped: true };
    Atomics.wait(control, CONTROL.raysDone, done, 100);
  }
  const { heightPx } = terrain.frame;
  let visibleCells = 0;
  for (;;) {
    if (Atomics.load(control, CONTROL.stop) !== 0) return { id: task.id, stopped: true };
    const start = Atomics.add(control, CONTROL.nextRow, rowsPerBand);
    if (start >= heightPx) break;
    const end = Math.min(heightPx, start + rowsPerBand);
    if (request.mode === 'los') visibleCells += rasteriseVisibility(terrain, request, plan, samples, start, end, new Uint8Array(task.out));
    else rasteriseBasicLoss(terrain, request, plan, samples, start, end, new Float32Array(task.out));
    Atomics.add(control, CONTROL.rowsDone, end - start);
  }
  return { id: task.id, visibleCells };
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
