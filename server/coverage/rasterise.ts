// From ray samples to cells: every cell of the window inside the radius takes
// the result of the ray sample nearest to its centre (nearest ray by azimuth,
// nearest sample by distance). With rays at most 0.9 cell apart at the rim
// and samples one cell apart, no cell is left without a sample, however far out.
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { crsToLocal, EARTH_RADIUS_M, pixelToCrs, type RayPlan } from './geometry.ts';
import { siteGroundM, type SweepSite, type TerrainWindow } from './sweep.ts';

/** Value written for cells outside the radius in byte rasters. */
export const BYTE_NODATA = 255;

/**
 * Visits the cells of rows [rowStart, rowEnd) inside the radius, giving the
 * cell index, its distance from the gateway (m) and the index of its nearest
 * ray sample in the rays × (samples + 1) buffer.
 */
export function forEachCell(
  terrain: TerrainWindow,
  plan: RayPlan,
  rowStart: number,
  rowEnd: number,
  visit: (cell: number, distanceM: number, sample: number) => void,
  outside: (cell: number) => void,
): void {
  const f = terrain.frame;
  const stride = plan.sampleCount + 1;
  const crs = [0, 0];
  const local = [0, 0];
  const twoPi = 2 * Math.PI;
  for (let row = rowStart; row < rowEnd; row++) {
    for (let col = 0; col < f.widthPx; col++) {
      const cell = row * f.widthPx + col;
      pixelToCrs(f, col + 0.5, row + 0.5, crs);
      crsToLocal(f, crs[0], crs[1], local);
      const d = Math.hypot(local[0], local[1]);
      if (d > plan.radiusM) {
        outside(cell);
        continue;
      }
      let az = Math.atan2(local[0], local[1]);
      if (az < 0) az += twoPi;
      let ray = Math.round(az / plan.azStepRad);
      if (ray >= plan.rayCount) ray -= plan.rayCount;
      let k = Math.round(d / plan.stepM);
      if (k < 1) k = 1;
      else if (k > plan.sampleCount) k = plan.sampleCount;
      visit(cell, d, ray * stride + k);
    }
  }
}

/**
 * Visibility of each cell (1 visible, 0 not, 255 outside the radius or
 * NoData): the target is the cell-centre ground (the DEM value itself) plus
 * the target height, lowered by the curvature drop at its exact distance; it
 * is compared with the running horizon of the samples at least half a step
 * closer to the gateway, so the cell's own ground does not hide it.
 */
export function rasteriseLos(
  terrain: TerrainWindow,
  plan: RayPlan,
  site: SweepSite,
  horizon: Float32Array,
  rowStart: number,
  rowEnd: number,
  out: Uint8Array,
): number {
  const eyeM = siteGroundM(terrain) + site.heightAglM;
  const dropPerM2 = 1 / (2 * site.kFactor * EARTH_RADIUS_M);
  const stride = plan.sampleCount + 1;
  const elevation = terrain.elevationM;
  let visible = 0;
  forEachCell(
    terrain,
    plan,
    rowStart,
    rowEnd,
    (cell, d, sample) => {
      const ground = elevation[cell];
      if (ground !== ground) {
        out[cell] = BYTE_NODATA;
        return;
      }
      const before = Math.floor(d / plan.stepM - 0.5);
      if (before < 1) {
        out[cell] = 1;
        visible++;
        return;
      }
      const rayBase = sample - (sample % stride);
      const target = (ground + site.targetHeightAglM - d * d * dropPerM2 - eyeM) / d;
      const seen = target >= horizon[rayBase + Math.min(before, plan.sampleCount)];
      out[cell] = seen ? 1 : 0;
      if (seen) visible++;
    },
    (cell) => {
      out[cell] = BYTE_NODATA;
    },
  );
  return visible;
}

/**
 * Basic transmission loss of each cell (dB, NaN outside the radius or on
 * NoData): free space (P.525) at the cell's own distance plus the excess
 * loss (diffraction, clutter) of its nearest ray sample plus a fixed
 * receiver-end loss.
 */
export function rasteriseLoss(
  terrain: TerrainWindow,
  plan: RayPlan,
  frequencyMhz: number,
  excessLossDb: Float32Array,
  extraLossDb: number,
  rowStart: number,
  rowEnd: number,
  out: Float32Array,
): void {
  const minDistanceKm = plan.stepM / 2000;
  forEachCell(
    terrain,
    plan,
    rowStart,
    rowEnd,
    (cell, d, sample) => {
      const excess = excessLossDb[sample];
      const dKm = d / 1000;
      out[cell] = excess === excess ? freeSpaceLossDb(dKm > minDistanceKm ? dKm : minDistanceKm, frequencyMhz) + excess + extraLossDb : Number.NaN;
    },
    (cell) => {
      out[cell] = Number.NaN;
    },
  );
}
