// Terrain profiles along the WGS 84 geodesic between two positions: the
// input of every path method (P.1812, Bullington, Deygout) and of link checks.
import { CLUTTER_CLASSES, NO_CLUTTER_CLASS, type ClutterClass } from './clutter.ts';
import { geodesicInverse, geodesicPoints, type LatLon } from './geodesic.ts';
import type { GeoRaster } from './raster.ts';
import type { Interpolation, TerrainStore } from './store.ts';

export interface ProfileOptions {
  /** Distance between points (m); default: the finest elevation resolution under the path. The points are spaced evenly at ≤ stepM. */
  stepM?: number;
  /** Default 'bilinear'. */
  interpolation?: Interpolation;
  /** Upper bound on the number of points (default 1 000 001); a smaller step is refused with a RangeError. */
  maxPoints?: number;
}

export interface TerrainProfile {
  /** Geodesic length from `from` to `to` (m). */
  lengthM: number;
  /** Forward azimuths of the geodesic at `from` and at `to` (degrees from north), from the same inverse solution as lengthM. */
  azimuthFromDeg: number;
  azimuthToDeg: number;
  /** Spacing actually used (m): lengthM / (points − 1). */
  stepM: number;
  /** Distance of each point from `from` along the geodesic (m). */
  distanceM: Float64Array;
  lat: Float64Array;
  lon: Float64Array;
  /** Ground height above the DEM's vertical datum (m); NaN where no layer has data. */
  groundM: Float64Array;
  /** With a clutter layer: representative clutter height (m; NaN where unclassified). */
  clutterHeightM?: Float64Array;
  /** With a clutter layer: index into CLUTTER_CLASSES, NO_CLUTTER_CLASS (255) where unclassified. */
  clutterClass?: Uint8Array;
  /** Number of points whose ground height is NoData. */
  noDataPoints: number;
}

/** Name of a clutter class index of a profile (null for NO_CLUTTER_CLASS). */
export function clutterClassName(index: number): ClutterClass | null {
  return index === NO_CLUTTER_CLASS ? null : (CLUTTER_CLASSES[index] ?? null);
}

function validPosition(name: string, p: LatLon): void {
  if (!Number.isFinite(p.lat) || p.lat < -90 || p.lat > 90) throw new RangeError(`${name}.lat must be within ±90° (got ${p.lat})`);
  if (!Number.isFinite(p.lon) || p.lon < -180 || p.lon > 180) throw new RangeError(`${name}.lon must be within ±180° (got ${p.lon})`);
}

// Exact CRS transforms every this many points; pixel coordinates in between are linear (projected CRSs only;
// error below a millimetre at ~30 m steps, checked in test/unit/terrain/profile.test.ts).
const TRANSFORM_EVERY = 16;

function pixelsAlong(lat: Float64Array, lon: Float64Array) {
  return (raster: GeoRaster, indices: Int32Array, px: Float64Array, py: Float64Array): void => {
    const gt = raster.geoTransform;
    const transform = raster.transform;
    const m = indices.length;
    if (transform.identity) {
      for (let k = 0; k < m; k++) {
        const i = indices[k];
        px[k] = (lon[i] - gt[0]) / gt[1];
        py[k] = (lat[i] - gt[3]) / gt[5];
      }
      return;
    }
    // Indices are ascending; consecutive runs are transformed at nodes and interpolated linearly between.
    let k = 0;
    while (k < m) {
      const start = k;
      const end = Math.min(m - 1, start + TRANSFORM_EVERY);
      const [x0, y0] = transform.forward(lon[indices[start]], lat[indices[start]]);
      px[start] = (x0 - gt[0]) / gt[1];
      py[start] = (y0 - gt[3]) / gt[5];
      if (end === start) break;
      const [x1, y1] = transform.forward(lon[indices[end]], lat[indices[end]]);
      px[end] = (x1 - gt[0]) / gt[1];
      py[end] = (y1 - gt[3]) / gt[5];
      const i0 = indices[start];
      const span = indices[end] - i0;
      const contiguous = span === end - start;
      for (let j = start + 1; j < end; j++) {
        if (contiguous) {
          const t = (indices[j] - i0) / span;
          px[j] = px[start] + t * (px[end] - px[start]);
          py[j] = py[start] + t * (py[end] - py[start]);
        } else {
          const [x, y] = transform.forward(lon[indices[j]], lat[indices[j]]);
          px[j] = (x - gt[0]) / gt[1];
          py[j] = (y - gt[3]) / gt[5];
        }
      }
      k = end === m - 1 ? m : end;
    }
  };
}

/**
 * Profile between two WGS 84 positions: evenly spaced points along the geodesic (first at `from`, last at
 * `to`), each with its distance, position, ground height (NaN = NoData) and, with a clutter layer, clutter
 * class and representative clutter height. Reads terrain only through the store (its cache bounds memory).
 */
export async function extractProfile(store: TerrainStore, from: LatLon, to: LatLon, options: ProfileOptions = {}): Promise<TerrainProfile> {
  validPosition('from', from);
  validPosition('to', to);
  const interpolation = options.interpolation ?? 'bilinear';
  const { distanceM: lengthM, azimuthFromDeg, azimuthToDeg } = geodesicInverse(from, to);
  let stepM = options.stepM;
  if (stepM === undefined) {
    const box = {
      west: Math.min(from.lon, to.lon),
      east: Math.max(from.lon, to.lon),
      south: Math.min(from.lat, to.lat),
      north: Math.max(from.lat, to.lat),
    };
    stepM = store.finestResolutionM(box);
    if (!Number.isFinite(stepM)) stepM = store.finestResolutionM();
    if (!Number.isFinite(stepM)) throw new RangeError('no elevation layer loaded, so there is no default step; give stepM');
  }
  if (!Number.isFinite(stepM) || stepM <= 0) throw new RangeError(`stepM must be a positive number of metres (got ${stepM})`);
  const maxPoints = options.maxPoints ?? 1_000_001;
  const segments = Math.max(1, Math.ceil(lengthM / stepM - 1e-9));
  const count = segments + 1;
  if (count > maxPoints) throw new RangeError(`a ${Math.round(lengthM)} m path at ${stepM} m steps needs ${count} points, more than the limit of ${maxPoints}`);

  const lat = new Float64Array(count);
  const lon = new Float64Array(count);
  const distanceM = new Float64Array(count);
  const spacing = lengthM / segments;
  if (lengthM === 0) {
    lat.fill(from.lat);
    lon.fill(from.lon);
  } else {
    geodesicPoints(from, to, count, lat, lon);
  }
  for (let i = 0; i < count; i++) distanceM[i] = i * spacing;
  distanceM[count - 1] = lengthM;

  const pixels = pixelsAlong(lat, lon);
  const groundM = await store.sampleElevations(lat, lon, interpolation, pixels);
  let noDataPoints = 0;
  for (let i = 0; i < count; i++) if (Number.isNaN(groundM[i])) noDataPoints++;
  const profile: TerrainProfile = { lengthM, azimuthFromDeg, azimuthToDeg, stepM: spacing, distanceM, lat, lon, groundM, noDataPoints };
  const clutter = await store.sampleClutters(lat, lon, pixels);
  if (clutter) {
    profile.clutterClass = clutter.classIndex;
    profile.clutterHeightM = clutter.heightM;
  }
  return profile;
}
