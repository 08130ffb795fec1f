// Area prediction for one gateway: plan the rays, sweep them (in one piece or
// in ray sectors handed to workers), then give every cell its nearest ray
// sample. Pure: typed arrays in, typed arrays out.
import { planRays, type RayPlan } from './geometry.ts';
import { rasteriseLos, rasteriseLoss } from './rasterise.ts';
import { makeScratch, sweepBullington, sweepLos, type TerrainWindow } from './sweep.ts';
import { sweepFull, type FullModel } from './full.ts';
import { p1812FullModel, type P1812Options } from './full-model.ts';

export type CoverageMode = 'los' | 'fast' | 'full';

export interface AreaRequest {
  mode: CoverageMode;
  radiusM: number;
  /** Gateway antenna height above ground, metres. */
  heightAglM: number;
  /** Node antenna height above ground, metres (default 1.5). */
  targetHeightAglM: number;
  /** Effective earth-radius factor (default 4/3). */
  kFactor: number;
  frequencyMhz: number;
  /** Fixed loss added at the receiver end (e.g. terminal clutter), dB. */
  receiverLossDb?: number;
  /** Ray spacing at the rim in cells (≤ 1 so that no cell is skipped). */
  raySpacingCells?: number;
  /** Sample step along rays in cells. */
  sampleStepCells?: number;
  /** `full` mode: a per-profile model; when absent, P.1812-8 built from `p1812` (plain data, so it can cross to worker threads). */
  full?: FullModel;
  p1812?: P1812Options;
}

/** Buffer sizes and plan for a request on a terrain window. */
export function planArea(terrain: TerrainWindow, request: AreaRequest): RayPlan {
  // Visibility is a yes/no per cell and flips on single ridge cells, so los
  // samples twice as densely (half-cell rays and steps); losses vary smoothly
  // enough for one-cell steps.
  const dense = request.mode === 'los';
  return planRays(terrain.frame, request.radiusM, {
    raySpacingCells: request.raySpacingCells ?? (dense ? 0.5 : 0.9),
    sampleStepCells: request.sampleStepCells ?? (dense ? 0.5 : 1),
  });
}

/** Size of the per-sample buffer (Float32 elements) a sweep writes. */
export function sampleBufferLength(plan: RayPlan): number {
  return plan.rayCount * (plan.sampleCount + 1);
}

/** Phase 1: sweep rays [rayStart, rayEnd) into `samples` (horizon slopes for los, excess loss in dB otherwise). */
export function sweepSector(
  terrain: TerrainWindow,
  request: AreaRequest,
  plan: RayPlan,
  rayStart: number,
  rayEnd: number,
  samples: Float32Array,
  onRay?: (done: number) => void,
): void {
  const scratch = makeScratch(plan);
  const chunk = 64;
  let model: FullModel | undefined;
  for (let r = rayStart; r < rayEnd; r += chunk) {
    const end = Math.min(rayEnd, r + chunk);
    if (request.mode === 'los') sweepLos(terrain, plan, request, r, end, samples, scratch);
    else if (request.mode === 'fast') sweepBullington(terrain, plan, request, r, end, samples, scratch);
    else {
      model ??= request.full ?? p1812FullModel(request, request.p1812 ?? { siteLatDeg: 0 });
      sweepFull(terrain, plan, request, model, r, end, samples);
    }
    onRay?.(end - r);
  }
}

/** Phase 2 for los: rows [rowStart, rowEnd) of the visibility raster; returns the number of visible cells. */
export function rasteriseVisibility(terrain: TerrainWindow, request: AreaRequest, plan: RayPlan, samples: Float32Array, rowStart: number, rowEnd: number, out: Uint8Array): number {
  return rasteriseLos(terrain, plan, request, samples, rowStart, rowEnd, out);
}

/** Phase 2 for fast/full: rows [rowStart, rowEnd) of the basic loss raster (dB). */
export function rasteriseBasicLoss(terrain: TerrainWindow, request: AreaRequest, plan: RayPlan, samples: Float32Array, rowStart: number, rowEnd: number, out: Float32Array): void {
  rasteriseLoss(terrain, plan, request.frequencyMhz, samples, request.receiverLossDb ?? 0, rowStart, rowEnd, out);
}

export interface AreaResult {
  mode: CoverageMode;
  plan: RayPlan;
  /** los: 1 visible, 0 hidden, 255 outside/NoData. */
  visible?: Uint8Array;
  visibleCells?: number;
  /** fast/full: basic transmission loss, dB (NaN outside). */
  lossDb?: Float32Array;
}

/** Whole prediction in the calling thread (the worker pool splits the same two phases). */
export function predictArea(terrain: TerrainWindow, request: AreaRequest): AreaResult {
  const plan = planArea(terrain, request);
  const samples = new Float32Array(sampleBufferLength(plan));
  sweepSector(terrain, request, plan, 0, plan.rayCount, samples);
  const cells = terrain.frame.widthPx * terrain.frame.heightPx;
  if (request.mode === 'los') {
    const visible = new Uint8Array(cells);
    const visibleCells = rasteriseVisibility(terrain, request, plan, samples, 0, terrain.frame.heightPx, visible);
    return { mode: request.mode, plan, visible, visibleCells };
  }
  const lossDb = new Float32Array(cells);
  rasteriseBasicLoss(terrain, request, plan, samples, 0, terrain.frame.heightPx, lossDb);
  return { mode: request.mode, plan, lossDb };
}
