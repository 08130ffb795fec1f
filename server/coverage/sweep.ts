// Radial sweeps: each ray from the gateway is sampled once, outwards, and
// every sample's result is computed from running state in O(1) amortised
// (O(log n) worst case for the hull query), instead of extracting a fresh
// profile for every cell. See README.md for the derivations.
//
// Results are written per ray sample into a rays × (samples + 1) buffer;
// rasterise.ts then gives every cell the result of its nearest ray sample.
import { knifeEdgeLossDb } from '../propagation/knife-edge.ts';
import { EARTH_RADIUS_M, rayPixels, sampleBilinear, type GridFrame, type RayPlan } from './geometry.ts';

/** The DEM window a sweep runs over (NaN = NoData), with an optional clutter height layer on the same grid. */
export interface TerrainWindow {
  frame: GridFrame;
  elevationM: Float32Array;
  /** Representative clutter height above ground, added to intermediate profile points (P.1812-8 §3.2). */
  clutterHeightM?: Float32Array;
}

export interface SweepSite {
  /** Gateway antenna height above ground, metres. */
  heightAglM: number;
  /** Receiver (node) antenna height above ground, metres. */
  targetHeightAglM: number;
  /** Effective earth-radius factor k (4/3 for the standard atmosphere). */
  kFactor: number;
}

/** Ground height under the gateway (bilinear at its exact position). */
export function siteGroundM(terrain: TerrainWindow): number {
  const out = [0, 0];
  const f = terrain.frame;
  const g = f.geoTransform;
  const dx = f.siteX - g[0];
  const dy = f.siteY - g[3];
  out[0] = f.inv[0] * dx + f.inv[1] * dy;
  out[1] = f.inv[2] * dx + f.inv[3] * dy;
  return sampleBilinear(terrain.elevationM, f.widthPx, f.heightPx, out[0], out[1]);
}

/** Scratch arrays reused across rays (no per-sample allocation). */
export interface SweepScratch {
  px: Float64Array;
  py: Float64Array;
  groundM: Float64Array;
  hullXKm: Float64Array;
  hullY: Float64Array;
  /** Sample index of each hull vertex. */
  hullK: Int32Array;
}

export function makeScratch(plan: RayPlan): SweepScratch {
  const n = plan.sampleCount + 1;
  return { px: new Float64Array(n), py: new Float64Array(n), groundM: new Float64Array(n), hullXKm: new Float64Array(n), hullY: new Float64Array(n), hullK: new Int32Array(n) };
}

function sampleRayGround(terrain: TerrainWindow, plan: RayPlan, ray: number, s: SweepScratch): void {
  const f = terrain.frame;
  rayPixels(f, plan, ray, s.px, s.py);
  for (let k = 0; k <= plan.sampleCount; k++) {
    s.groundM[k] = sampleBilinear(terrain.elevationM, f.widthPx, f.heightPx, s.px[k], s.py[k]);
  }
}

/**
 * Line-of-sight sweep. For every sample k of rays [rayStart, rayEnd) writes
 * the running horizon: the largest elevation slope (m per m, from the
 * observer's eye) of the terrain samples 1..k, with the earth's surface
 * dropped by d²/(2·k·R) for curvature and refraction. A target at distance d
 * and height z is visible when (z − eye)/d ≥ the horizon of the samples before it.
 */
export function sweepLos(
  terrain: TerrainWindow,
  plan: RayPlan,
  site: SweepSite,
  rayStart: number,
  rayEnd: number,
  horizonOut: Float32Array,
  scratch: SweepScratch = makeScratch(plan),
): void {
  const eyeM = siteGroundM(terrain) + site.heightAglM;
  const dropPerM2 = 1 / (2 * site.kFactor * EARTH_RADIUS_M);
  const stride = plan.sampleCount + 1;
  const f = terrain.frame;
  const w = f.widthPx;
  const hgt = f.heightPx;
  const grid = terrain.elevationM;
  for (let ray = rayStart; ray < rayEnd; ray++) {
    rayPixels(f, plan, ray, scratch.px, scratch.py);
    const base = ray * stride;
    let horizon = -Infinity;
    horizonOut[base] = horizon;
    const px = scratch.px;
    const py = scratch.py;
    for (let k = 1; k <= plan.sampleCount; k++) {
      // Bilinear height, inlined for the common case of four valid interior neighbours.
      const u = px[k] - 0.5;
      const v = py[k] - 0.5;
      const i0 = Math.floor(u);
      const j0 = Math.floor(v);
      let h: number;
      if (i0 >= 0 && j0 >= 0 && i0 < w - 1 && j0 < hgt - 1) {
        const fu = u - i0;
        const fv = v - j0;
        const at = j0 * w + i0;
        const a = grid[at];
        const b = grid[at + 1];
        const c = grid[at + w];
        const d4 = grid[at + w + 1];
        h = (a * (1 - fu) + b * fu) * (1 - fv) + (c * (1 - fu) + d4 * fu) * fv;
        if (h !== h) h = sampleBilinear(grid, w, hgt, px[k], py[k]);
      } else {
        h = sampleBilinear(grid, w, hgt, px[k], py[k]);
      }
      if (h === h) {
        const d = k * plan.stepM;
        const slope = (h - d * d * dropPerM2 - eyeM) / d;
        if (slope > horizon) horizon = slope;
      }
      horizonOut[base + k] = horizon;
    }
  }
}

export interface BullingtonSite extends SweepSite {
  frequencyMhz: number;
}

/**
 * Bullington diffraction sweep (ITU-R P.1812-8 §4.3.1, the Bullington
 * construction of ITU-R P.526 for a general terrestrial path; equation
 * numbers below are those of P.1812-8, where Lbull is Eq. (21)):
 * for every sample k, the diffraction loss Lbull (dB, including the
 * (1 − e^(−Luc/6))·(10 + 0.02·d) correction) of the path from the gateway
 * to a receiver at sample k, over the intermediate samples 1..k−1.
 *
 * Incremental form (derivation in README.md): with the earth-bulge
 * transform Y = h − 500·Ce·d², the gateway-side slope Stim is a running
 * maximum of (Yi − hts)/di plus 500·Ce·d, and the receiver-side slope Srim
 * is the tangent from the receiver to the upper convex hull of the points
 * (di, Yi), kept by a monotone chain and queried by binary search.
 * In the line-of-sight case νmax is exact: hull vertices first, then only
 * the hull edges whose bound could beat the best ν so far are scanned.
 */
export function sweepBullington(
  terrain: TerrainWindow,
  plan: RayPlan,
  site: BullingtonSite,
  rayStart: number,
  rayEnd: number,
  lossOut: Float32Array,
  scratch: SweepScratch = makeScratch(plan),
): void {
  const hts = siteGroundM(terrain) + site.heightAglM;
  const hr = site.targetHeightAglM;
  const ce = 1 / (site.kFactor * (EARTH_RADIUS_M / 1000)); // 1/km
  const c500 = 500 * ce;
  const lambdaM = 299.792458 / site.frequencyMhz;
  const stepKm = plan.stepM / 1000;
  const stride = plan.sampleCount + 1;
  const clutter = terrain.clutterHeightM;
  const f = terrain.frame;
  const hx = scratch.hullXKm;
  const hy = scratch.hullY;
  const hk = scratch.hullK;
  // Intermediate-point height: ground plus representative clutter height (P.1812-8 §3.2).
  const obstacleM = (j: number, ground: number): number => {
    if (!clutter) return ground;
    const c = sampleBilinear(clutter, f.widthPx, f.heightPx, scratch.px[j], scratch.py[j]);
    return c === c ? ground + c : ground;
  };
  for (let ray = rayStart; ray < rayEnd; ray++) {
    sampleRayGround(terrain, plan, ray, scratch);
    const base = ray * stride;
    lossOut[base] = 0;
    let hullSize = 0;
    let bestA = -Infinity; // max over intermediate points of (Yi − hts)/di
    for (let k = 1; k <= plan.sampleCount; k++) {
      const ground = scratch.groundM[k];
      const d = k * stepKm;
      if (ground !== ground) {
        lossOut[base + k] = Number.NaN;
        continue;
      }
      const hrs = ground + hr;
      let luc = 0;
      if (hullSize > 0) {
        const stim = bestA + c500 * d; // P.1812-8 Eq. (13)
        const srimDirect = (hrs - hts) / d; // Eq. (14)
        const yq = hrs - c500 * d * d;
        // Tangent from the receiver to the upper hull: the vertex of largest back slope.
        let lo = 0;
        let hi = hullSize - 1;
        while (lo < hi) {
          const mid = (lo + hi) >> 1;
          const fm = (hy[mid] - yq) / (d - hx[mid]);
          const fn = (hy[mid + 1] - yq) / (d - hx[mid + 1]);
          if (fn >= fm) lo = mid + 1;
          else hi = mid;
        }
        const tx = hx[lo];
        const ty = hy[lo];
        if (stim < srimDirect) {
          // Line of sight: Eq. (15) νmax, exactly, without visiting every point:
          // first every hull vertex, then the raw samples under a hull edge only
          // when a bound says one of them could beat the best ν so far (and −0.78,
          // below which J(ν) = 0). Under edge (a, b) the clearance is at most the
          // larger end clearance (the hull is above every point) and the factor
          // √(0.002·d/(λ·di·(d − di))) is at least its minimum over [da, db].
          let nuMax = -Infinity;
          for (let j = 0; j < hullSize; j++) {
            const nu = nuAt(hx[j], hy[j] + c500 * hx[j] * hx[j], d, hts, hrs, c500, lambdaM);
            if (nu > nuMax) nuMax = nu;
          }
          const half = d / 2;
          for (let j = 0; j + 1 < hullSize; j++) {
            const ka = hk[j];
            const kb = hk[j + 1];
            if (kb - ka < 2) continue;
            const xa = hx[j];
            const xb = hx[j + 1];
            const ca = hy[j] + c500 * xa * d - lineAt(xa, d, hts, hrs);
            const cb = hy[j + 1] + c500 * xb * d - lineAt(xb, d, hts, hrs);
            const cMax = ca > cb ? ca : cb;
            const xNearMid = half < xa ? xa : half > xb ? xb : half;
            const bound = cMax * Math.sqrt((0.002 * d) / (lambdaM * xNearMid * (d - xNearMid)));
            if (bound <= nuMax || bound <= -0.78) continue;
            for (let m = ka + 1; m < kb; m++) {
              const gm = scratch.groundM[m];
              if (gm !== gm) continue;
              const nu = nuAt(m * stepKm, obstacleM(m, gm), d, hts, hrs, c500, lambdaM);
              if (nu > nuMax) nuMax = nu;
            }
          }
          luc = knifeEdgeLossDb(nuMax); // Eq. (16)
        } else {
          const srim = (ty - yq) / (d - tx) - c500 * d; // Eq. (17)
          const db = (hrs - hts + srim * d) / (stim + srim); // Eq. (18)
          const nub = (hts + stim * db - (hts * (d - db) + hrs * db) / d) * Math.sqrt((0.002 * d) / (lambdaM * db * (d - db))); // Eq. (19)
          luc = knifeEdgeLossDb(nub); // Eq. (20)
        }
      }
      lossOut[base + k] = luc + (1 - Math.exp(-luc / 6)) * (10 + 0.02 * d); // Eq. (21)
      // This sample becomes an intermediate point for every receiver further out.
      const obstacle = obstacleM(k, ground);
      const y = obstacle - c500 * d * d;
      const a = (y - hts) / d;
      if (a > bestA) {
        bestA = a;
      }
      // Monotone chain, upper hull: drop vertices on or below the new chord.
      while (hullSize >= 2) {
        const x1 = hx[hullSize - 2];
        const y1 = hy[hullSize - 2];
        const x2 = hx[hullSize - 1];
        const y2 = hy[hullSize - 1];
        if ((x2 - x1) * (y - y1) - (y2 - y1) * (d - x1) >= 0) hullSize--;
        else break;
      }
      hx[hullSize] = d;
      hy[hullSize] = y;
      hk[hullSize] = k;
      hullSize++;
    }
  }
}

/** Height of the direct gateway–receiver line at di (m): (hts·(d − di) + hrs·di)/d. */
function lineAt(diKm: number, dKm: number, hts: number, hrs: number): number {
  return (hts * (dKm - diKm) + hrs * diKm) / dKm;
}

/** ν of one intermediate point (distance dKm from the gateway, height hM), P.1812-8 Eq. (15). */
function nuAt(diKm: number, hM: number, dKm: number, hts: number, hrs: number, c500: number, lambdaM: number): number {
  const clearance = hM + c500 * diKm * (dKm - diKm) - (hts * (dKm - diKm) + hrs * diKm) / dKm;
  return clearance * Math.sqrt((0.002 * dKm) / (lambdaM * diKm * (dKm - diKm)));
}
