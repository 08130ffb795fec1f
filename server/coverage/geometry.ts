// Geometry of a coverage sweep: a local east/north frame in metres centred on
// the gateway, mapped onto the pixel grid of a DEM window, and the plan of
// radial rays (how many, how far apart, how finely sampled).
//
// Pixel coordinates are fractional with (0, 0) the outer corner of the
// window's first cell, so the centre of cell (col, row) is (col + 0.5, row + 0.5)
// (GDAL's convention for an "area" raster).
import { metresPerDegree } from '../terrain/raster.ts';
import type { GeoTransform } from '../terrain/geotiff-writer.ts';

export type { GeoTransform };

/** Mean earth radius in metres (IUGG mean radius R1, from memory), used for the k-factor bulge. */
export const EARTH_RADIUS_M = 6_371_008.8;

/**
 * How local metres (east, north from the gateway) map to window pixels.
 * `projected`: the DEM's CRS is metric and the map plane is taken as the
 * local plane (straight rays in the plane). `geographic`: lon/lat degrees;
 * north is scaled with the meridian radius at the gateway and east with the
 * parallel radius at each point's own latitude (error well under 0.1 % of the
 * distance inside 50 km).
 */
export interface GridFrame {
  kind: 'projected' | 'geographic';
  /** Window size in cells. */
  widthPx: number;
  heightPx: number;
  /** Geotransform of the window (origin at the window's corner). */
  geoTransform: GeoTransform;
  /** Gateway in CRS coordinates (x/y, or lon/lat degrees when geographic). */
  siteX: number;
  siteY: number;
  /** Precomputed inverse of the geotransform's 2×2 part. */
  inv: [number, number, number, number];
  /** Geographic only: metres per degree of latitude at the gateway. */
  metresPerDegLat: number;
  /** Geographic only: site latitude in radians. */
  siteLatRad: number;
}

export function invertGeoTransform(g: GeoTransform): [number, number, number, number] {
  const det = g[1] * g[5] - g[2] * g[4];
  if (det === 0 || !Number.isFinite(det)) throw new Error('geotransform is singular');
  return [g[5] / det, -g[2] / det, -g[4] / det, g[1] / det];
}

export function makeGridFrame(input: {
  kind: 'projected' | 'geographic';
  widthPx: number;
  heightPx: number;
  geoTransform: GeoTransform;
  siteX: number;
  siteY: number;
}): GridFrame {
  const siteLatRad = (input.siteY * Math.PI) / 180;
  const metresPerDegLat = input.kind === 'geographic' ? metresPerDegree(input.siteY).lat : 1;
  return { ...input, inv: invertGeoTransform(input.geoTransform), metresPerDegLat, siteLatRad };
}

/** CRS coordinates → fractional window pixel; writes into out[0], out[1]. */
export function crsToPixel(frame: GridFrame, x: number, y: number, out: Float64Array | number[]): void {
  const g = frame.geoTransform;
  const dx = x - g[0];
  const dy = y - g[3];
  out[0] = frame.inv[0] * dx + frame.inv[1] * dy;
  out[1] = frame.inv[2] * dx + frame.inv[3] * dy;
}

/** Fractional window pixel → CRS coordinates. */
export function pixelToCrs(frame: GridFrame, px: number, py: number, out: Float64Array | number[]): void {
  const g = frame.geoTransform;
  out[0] = g[0] + px * g[1] + py * g[2];
  out[1] = g[3] + px * g[4] + py * g[5];
}

/** Local east/north metres from the gateway → CRS coordinates. */
export function localToCrs(frame: GridFrame, eastM: number, northM: number, out: Float64Array | number[]): void {
  if (frame.kind === 'projected') {
    out[0] = frame.siteX + eastM;
    out[1] = frame.siteY + northM;
    return;
  }
  const latDeg = frame.siteY + northM / frame.metresPerDegLat;
  out[0] = frame.siteX + eastM / metresPerDegree(latDeg).lon;
  out[1] = latDeg;
}

/** CRS coordinates → local east/north metres from the gateway (inverse of localToCrs). */
export function crsToLocal(frame: GridFrame, x: number, y: number, out: Float64Array | number[]): void {
  if (frame.kind === 'projected') {
    out[0] = x - frame.siteX;
    out[1] = y - frame.siteY;
    return;
  }
  out[0] = (x - frame.siteX) * metresPerDegree(y).lon;
  out[1] = (y - frame.siteY) * frame.metresPerDegLat;
}

/** Ground size of one cell in metres at the gateway (x and y). */
export function cellSizeM(frame: GridFrame): { xM: number; yM: number } {
  const g = frame.geoTransform;
  const sx = Math.hypot(g[1], g[4]);
  const sy = Math.hypot(g[2], g[5]);
  if (frame.kind === 'projected') return { xM: sx, yM: sy };
  return { xM: sx * metresPerDegree(frame.siteY).lon, yM: sy * frame.metresPerDegLat };
}

/** The rays of one sweep. */
export interface RayPlan {
  rayCount: number;
  /** Azimuth step between rays, radians (ray r points at r·azStepRad, clockwise from grid north). */
  azStepRad: number;
  /** Samples per ray (sample k ≥ 1 lies at k·stepM from the gateway). */
  sampleCount: number;
  stepM: number;
  radiusM: number;
}

/**
 * Enough rays that neighbours are at most `raySpacingCells` cells apart at
 * the rim, samples every `sampleStepCells` cells along each ray, so that every
 * cell inside the radius has a ray sample within about half a cell.
 */
export function planRays(frame: GridFrame, radiusM: number, options: { raySpacingCells?: number; sampleStepCells?: number } = {}): RayPlan {
  const { xM, yM } = cellSizeM(frame);
  const cellM = Math.min(xM, yM);
  const spacing = options.raySpacingCells ?? 0.9;
  const step = options.sampleStepCells ?? 1;
  const rayCount = Math.max(8, Math.ceil((2 * Math.PI * radiusM) / (cellM * spacing)));
  const stepM = cellM * step;
  const sampleCount = Math.max(1, Math.ceil(radiusM / stepM));
  return { rayCount, azStepRad: (2 * Math.PI) / rayCount, sampleCount, stepM, radiusM };
}

/**
 * Fills px/py (length ≥ sampleCount + 1) with the fractional window pixel of
 * every sample of ray `ray` (index 0 is the gateway itself).
 */
export function rayPixels(frame: GridFrame, plan: RayPlan, ray: number, px: Float64Array, py: Float64Array): void {
  const az = ray * plan.azStepRad;
  const sinAz = Math.sin(az);
  const cosAz = Math.cos(az);
  const tmp = [0, 0];
  if (frame.kind === 'projected') {
    // Straight line in the map plane: pixel coordinates are affine in distance.
    crsToPixel(frame, frame.siteX, frame.siteY, tmp);
    const x0 = tmp[0];
    const y0 = tmp[1];
    const e = sinAz * plan.stepM;
    const n = cosAz * plan.stepM;
    const dpx = frame.inv[0] * e + frame.inv[1] * n;
    const dpy = frame.inv[2] * e + frame.inv[3] * n;
    for (let k = 0; k <= plan.sampleCount; k++) {
      px[k] = x0 + k * dpx;
      py[k] = y0 + k * dpy;
    }
    return;
  }
  for (let k = 0; k <= plan.sampleCount; k++) {
    const d = k * plan.stepM;
    localToCrs(frame, d * sinAz, d * cosAz, tmp);
    crsToPixel(frame, tmp[0], tmp[1], tmp);
    px[k] = tmp[0];
    py[k] = tmp[1];
  }
}

/**
 * Bilinear height at a fractional pixel from cell-centre values; NaN outside
 * the window or when every neighbour is NoData (NaN); NoData neighbours are
 * left out of the weighting.
 */
export function sampleBilinear(grid: Float32Array, widthPx: number, heightPx: number, px: number, py: number): number {
  const u = px - 0.5;
  const v = py - 0.5;
  if (u < -0.5 || v < -0.5 || u > widthPx - 0.5 || v > heightPx - 0.5) return Number.NaN;
  let i0 = Math.floor(u);
  let j0 = Math.floor(v);
  let fu = u - i0;
  let fv = v - j0;
  // Clamp at the outer half cell: use the edge cell's value.
  if (i0 < 0) { i0 = 0; fu = 0; }
  if (j0 < 0) { j0 = 0; fv = 0; }
  if (i0 >= widthPx - 1) { i0 = widthPx - 1; fu = 0; }
  if (j0 >= heightPx - 1) { j0 = heightPx - 1; fv = 0; }
  const i1 = fu > 0 ? i0 + 1 : i0;
  const j1 = fv > 0 ? j0 + 1 : j0;
  const a = grid[j0 * widthPx + i0];
  const b = grid[j0 * widthPx + i1];
  const c = grid[j1 * widthPx + i0];
  const d = grid[j1 * widthPx + i1];
  const wa = (1 - fu) * (1 - fv);
  const wb = fu * (1 - fv);
  const wc = (1 - fu) * fv;
  const wd = fu * fv;
  // Fast path: all four present.
  if (a === a && b === b && c === c && d === d) return a * wa + b * wb + c * wc + d * wd;
  let sum = 0;
  let weight = 0;
  if (a === a) { sum += a * wa; weight += wa; }
  if (b === b) { sum += b * wb; weight += wb; }
  if (c === c) { sum += c * wc; weight += wc; }
  if (d === d) { sum += d * wd; weight += wd; }
  return weight > 1e-9 ? sum / weight : Number.NaN;
}
