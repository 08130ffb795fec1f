// Path geometry for installers: earth bulge for a k-factor, the first Fresnel
// zone along the straight ray, line of sight and the worst Fresnel clearance.
// Formulas: earth bulge h = d1·d2/(2·k·a) (geometry of a sphere of radius k·a);
// Fresnel zone radius rn = √(n·λ·d1·d2/d) (ITU-R P.530-18 Eq. (2) gives the
// first zone as r1 = 17.3·√(d1·d2/(f·d)) m with d in km and f in GHz).

export const EARTH_RADIUS_KM = 6371;
/** Median k-factor (common practice for temperate climates; ITU-R P.453 ΔN ≈ 40 N-units/km). */
export const DEFAULT_K_FACTOR = 4 / 3;
const SPEED_OF_LIGHT_M_S = 299_792_458;

/** Earth bulge (in metres) at `d1Km` from one end and `d2Km` from the other for a k-factor. */
export function earthBulgeM(d1Km: number, d2Km: number, kFactor = DEFAULT_K_FACTOR): number {
  return (1000 * d1Km * d2Km) / (2 * kFactor * EARTH_RADIUS_KM);
}

/** Radius (in metres) of Fresnel zone `zone` (1 = first) at d1/d2 (km) from the ends, at `frequencyMhz`. */
export function fresnelZoneRadiusM(d1Km: number, d2Km: number, frequencyMhz: number, zone = 1): number {
  const wavelengthM = SPEED_OF_LIGHT_M_S / (frequencyMhz * 1e6);
  const dKm = d1Km + d2Km;
  return Math.sqrt((zone * wavelengthM * (d1Km * 1000) * (d2Km * 1000)) / (dKm * 1000));
}

export interface PathGeometryInput {
  distanceKm: ArrayLike<number>;
  groundM: ArrayLike<number>;
  /** Clutter (trees, buildings) above the ground at each point (m); omitted = none. */
  clutterM?: ArrayLike<number>;
  txHeightAglM: number;
  rxHeightAglM: number;
  frequencyMhz: number;
  kFactor?: number;
  /** Clearance ratio below which a point is listed as an obstruction (common practice: 0.6 of zone 1). */
  obstructionRatio?: number;
}

export interface ObstructionPoint {
  index: number;
  distanceKm: number;
  /** Ground + clutter + earth bulge at the point (m, same datum as the ground). */
  obstacleM: number;
  /** Height of the straight ray above the obstacle (m); negative = blocks the ray. */
  clearanceM: number;
  /** clearanceM divided by the first Fresnel zone radius. */
  clearanceRatio: number;
}

export interface PathGeometry {
  distanceKm: number;
  txAntennaM: number;
  rxAntennaM: number;
  kFactor: number;
  /** Per point (same length as the profile): the ray, the Fresnel bounds and the obstacle surface. */
  rayM: Float64Array;
  fresnelRadiusM: Float64Array;
  fresnelUpperM: Float64Array;
  fresnelLowerM: Float64Array;
  obstacleM: Float64Array;
  clearanceRatio: Float64Array;
  lineOfSight: boolean;
  /** Smallest clearance ratio over the intermediate points (+Infinity for a 2-point profile). */
  worstClearanceRatio: number;
  worstIndex: number;
  worstDistanceKm: number;
  /** Points whose clearance ratio is below `obstructionRatio` (default 0.6), worst first. */
  obstructions: ObstructionPoint[];
}

/**
 * The straight ray, first Fresnel zone bounds and obstruction points of a path. Heights are
 * drawn on a flat baseline with the earth bulge added to the obstacles (the usual profile chart).
 */
export function analysePathGeometry(input: PathGeometryInput): PathGeometry {
  const n = input.distanceKm.length;
  const k = input.kFactor ?? DEFAULT_K_FACTOR;
  const limit = input.obstructionRatio ?? 0.6;
  const d0 = input.distanceKm[0];
  const total = input.distanceKm[n - 1] - d0;
  const tx = input.groundM[0] + input.txHeightAglM;
  const rx = input.groundM[n - 1] + input.rxHeightAglM;
  const rayM = new Float64Array(n);
  const fresnelRadius = new Float64Array(n);
  const upper = new Float64Array(n);
  const lower = new Float64Array(n);
  const obstacle = new Float64Array(n);
  const ratio = new Float64Array(n);
  let worst = Infinity;
  let worstIndex = -1;
  let lineOfSight = true;
  const obstructions: ObstructionPoint[] = [];
  for (let i = 0; i < n; i++) {
    const d1 = input.distanceKm[i] - d0;
    const d2 = total - d1;
    const ray = tx + ((rx - tx) * d1) / total;
    const r1 = i === 0 || i === n - 1 ? 0 : fresnelZoneRadiusM(d1, d2, input.frequencyMhz);
    const surface = input.groundM[i] + (input.clutterM ? input.clutterM[i] : 0) + earthBulgeM(d1, d2, k);
    rayM[i] = ray;
    fresnelRadius[i] = r1;
    upper[i] = ray + r1;
    lower[i] = ray - r1;
    obstacle[i] = surface;
    if (i === 0 || i === n - 1) {
      ratio[i] = Infinity;
      continue;
    }
    const clearance = ray - surface;
    const q = clearance / r1;
    ratio[i] = q;
    if (clearance < 0) lineOfSight = false;
    if (q < worst) {
      worst = q;
      worstIndex = i;
    }
    if (q < limit) obstructions.push({ index: i, distanceKm: d1, obstacleM: surface, clearanceM: clearance, clearanceRatio: q });
  }
  obstructions.sort((a, b) => a.clearanceRatio - b.clearanceRatio);
  return {
    distanceKm: total,
    txAntennaM: tx,
    rxAntennaM: rx,
    kFactor: k,
    rayM,
    fresnelRadiusM: fresnelRadius,
    fresnelUpperM: upper,
    fresnelLowerM: lower,
    obstacleM: obstacle,
    clearanceRatio: ratio,
    lineOfSight,
    worstClearanceRatio: worst,
    worstIndex,
    worstDistanceKm: worstIndex >= 0 ? input.distanceKm[worstIndex] - d0 : 0,
    obstructions,
  };
}

export interface PathClearance {
  lineOfSight: boolean;
  worstClearanceRatio: number;
  worstDistanceKm: number;
  /** The `keep` points of lowest clearance ratio below `obstructionRatio`, worst first (ties in path order). */
  obstructions: Array<{ distanceKm: number; clearanceM: number; clearanceRatio: number }>;
}

/**
 * What a path prediction needs of analysePathGeometry (line of sight, the worst
 * clearance, the worst few obstructions) without its per-point arrays and
 * objects: the same expressions point by point, so the same numbers
 * (checked against analysePathGeometry in test/unit/propagation/path-geometry.test.ts),
 * with nothing allocated per point. The top `keep` obstructions equal a stable sort
 * of every obstruction by ratio cut to `keep`.
 */
export function pathClearance(input: PathGeometryInput, keep = 10): PathClearance {
  const n = input.distanceKm.length;
  const k = input.kFactor ?? DEFAULT_K_FACTOR;
  const limit = input.obstructionRatio ?? 0.6;
  const d0 = input.distanceKm[0];
  const total = input.distanceKm[n - 1] - d0;
  const tx = input.groundM[0] + input.txHeightAglM;
  const rx = input.groundM[n - 1] + input.rxHeightAglM;
  let worst = Infinity;
  let worstIndex = -1;
  let lineOfSight = true;
  const obstructions: PathClearance['obstructions'] = [];
  for (let i = 1; i < n - 1; i++) {
    const d1 = input.distanceKm[i] - d0;
    const d2 = total - d1;
    const ray = tx + ((rx - tx) * d1) / total;
    const r1 = fresnelZoneRadiusM(d1, d2, input.frequencyMhz);
    const surface = input.groundM[i] + (input.clutterM ? input.clutterM[i] : 0) + earthBulgeM(d1, d2, k);
    const clearance = ray - surface;
    const q = clearance / r1;
    if (clearance < 0) lineOfSight = false;
    if (q < worst) {
      worst = q;
      worstIndex = i;
    }
    if (q < limit && (obstructions.length < keep || q < obstructions[obstructions.length - 1].clearanceRatio)) {
      // Insert after every kept point of equal or lower ratio (a stable sort keeps path order among ties).
      let at = obstructions.length;
      while (at > 0 && obstructions[at - 1].clearanceRatio > q) at--;
      obstructions.splice(at, 0, { distanceKm: d1, clearanceM: clearance, clearanceRatio: q });
      if (obstructions.length > keep) obstructions.pop();
    }
  }
  return { lineOfSight, worstClearanceRatio: worst, worstDistanceKm: worstIndex >= 0 ? input.distanceKm[worstIndex] - d0 : 0, obstructions };
}
