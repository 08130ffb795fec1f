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
 * Local east/north (m) of the centre of cell (col, row): affine in col and
 * row for projected grids (so the hot loops step it), per cell for geographic ones.
 */
interface CellFrame {
  projected: boolean;
  e0: number;
  n0: number;
  eCol: number;
  nCol: number;
  eRow: number;
  nRow: number;
}

function cellFrame(terrain: TerrainWindow): CellFrame {
  const f = terrain.frame;
  const g = f.geoTransform;
  return {
    projected: f.kind === 'projected',
    e0: g[0] + 0.5 * g[1] + 0.5 * g[2] - f.siteX,
    n0: g[3] + 0.5 * g[4] + 0.5 * g[5] - f.siteY,
    eCol: g[1],
    nCol: g[4],
    eRow: g[2],
    nRow: g[5],
  };
}

/** Local east/north of a cell centre into out (geographic grids). */
function geographicLocal(terrain: TerrainWindow, col: number, row: number, crs: number[], out: number[]): void {
  pixelToCrs(terrain.frame, col + 0.5, row + 0.5, crs);
  crsToLocal(terrain.frame, crs[0], crs[1], out);
}

/** Local east/north (m from the site) of cell (col, row)'s centre into out; no allocation. */
function cellLocal(terrain: TerrainWindow, c: CellFrame, col: number, row: number, crs: number[], out: number[]): void {
  if (c.projected) {
    out[0] = c.e0 + col * c.eCol + row * c.eRow;
    out[1] = c.n0 + col * c.nCol + row * c.nRow;
  } else {
    geographicLocal(terrain, col, row, crs, out);
  }
}

/**
 * Index of the nearest ray sample of a cell at local (e, n), distance d (m):
 * nearest ray by azimuth, nearest sample by distance (clamped to 1..samples).
 */
function nearestSample(plan: RayPlan, e: number, n: number, d: number): number {
  let az = Math.atan2(e, n);
  if (az < 0) az += 2 * Math.PI;
  let ray = Math.round(az / plan.azStepRad);
  if (ray >= plan.rayCount) ray -= plan.rayCount;
  let k = Math.round(d / plan.stepM);
  if (k < 1) k = 1;
  else if (k > plan.sampleCount) k = plan.sampleCount;
  return ray * (plan.sampleCount + 1) + k;
}

/**
 * Visits the cells of rows [rowStart, rowEnd) inside the radius, giving the
 * cell index, its distance from the gateway (m) and the index of its nearest
 * ray sample in the rays × (samples + 1) buffer (for callers off the hot path).
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
  const c = cellFrame(terrain);
  const crs = [0, 0];
  const local = [0, 0];
  for (let row = rowStart; row < rowEnd; row++) {
    for (let col = 0; col < f.widthPx; col++) {
      const cell = row * f.widthPx + col;
      cellLocal(terrain, c, col, row, crs, local);
      const e = local[0];
      const n = local[1];
      const d = Math.sqrt(e * e + n * n);
      if (d > plan.radiusM) outside(cell);
      else visit(cell, d, nearestSample(plan, e, n, d));
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
  const width = terrain.frame.widthPx;
  const c = cellFrame(terrain);
  const crs = [0, 0];
  const local = [0, 0];
  const radiusM = plan.radiusM;
  const stepM = plan.stepM;
  const twoPi = 2 * Math.PI;
  const raysPerRad = 1 / plan.azStepRad;
  let visible = 0;
  for (let row = rowStart; row < rowEnd; row++) {
    for (let col = 0; col < width; col++) {
      const cell = row * width + col;
      cellLocal(terrain, c, col, row, crs, local);
      const e = local[0];
      const n = local[1];
      const d = Math.sqrt(e * e + n * n);
      const ground = elevation[cell];
      if (d > radiusM || ground !== ground) {
        out[cell] = BYTE_NODATA;
        continue;
      }
      const before = Math.floor(d / stepM - 0.5);
      if (before < 1) {
        out[cell] = 1;
        visible++;
        continue;
      }
      let az = Math.atan2(e, n);
      if (az < 0) az += twoPi;
      let ray = Math.round(az * raysPerRad);
      if (ray >= plan.rayCount) ray -= plan.rayCount;
      const rayBase = ray * stride;
      const target = (ground + site.targetHeightAglM - d * d * dropPerM2 - eyeM) / d;
      if (target >= horizon[rayBase + (before < plan.sampleCount ? before : plan.sampleCount)]) {
        out[cell] = 1;
        visible++;
      } else {
        out[cell] = 0;
      }
    }
  }
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
  const width = terrain.frame.widthPx;
  const c = cellFrame(terrain);
  const crs = [0, 0];
  const local = [0, 0];
  // P.525: Lbf(d) = Lbf(1 km) + 20·log10(d km).
  const atOneKmDb = freeSpaceLossDb(1, frequencyMhz);
  for (let row = rowStart; row < rowEnd; row++) {
    for (let col = 0; col < width; col++) {
      const cell = row * width + col;
      cellLocal(terrain, c, col, row, crs, local);
      const e = local[0];
      const n = local[1];
      const d = Math.sqrt(e * e + n * n);
      if (d > plan.radiusM) {
        out[cell] = Number.NaN;
        continue;
      }
      const excess = excessLossDb[nearestSample(plan, e, n, d)];
      const dKm = d / 1000;
      out[cell] = excess === excess ? atOneKmDb + 20 * Math.log10(dKm > minDistanceKm ? dKm : minDistanceKm) + excess + extraLossDb : Number.NaN;
    }
  }
}
