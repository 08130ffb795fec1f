// `full` mode: a complete path method (ITU-R P.1812, supplied by the
// propagation room through a FullModel) evaluated for ray samples. Each
// ray's profile is sampled once and every receiver on it uses a prefix of
// that same profile, so no per-cell profile extraction is done; the path
// method itself still costs O(n) per receiver, hence O(R³) overall — see
// README.md. `everySamples` trades accuracy for time by evaluating every
// m-th sample and interpolating the excess loss in between.
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { rayPixels, sampleBilinear, type RayPlan } from './geometry.ts';
import type { TerrainWindow } from './sweep.ts';

/** One ray's profile, gateway first; a receiver at sample k uses points 0..k. */
export interface RayProfile {
  distanceKm: Float64Array;
  heightM: Float64Array;
  /** Representative clutter height per point (0 where no clutter layer). */
  clutterHeightM: Float64Array;
}

export interface FullModel {
  /** Basic transmission loss (dB) to a receiver at the last of the first `count` points of `profile`. */
  lossDb: (profile: RayProfile, count: number) => number;
  /** Evaluate every m-th sample (default 1: all). */
  everySamples?: number;
}

export function sweepFull(
  terrain: TerrainWindow,
  plan: RayPlan,
  request: { frequencyMhz: number },
  model: FullModel,
  rayStart: number,
  rayEnd: number,
  excessOut: Float32Array,
): void {
  const n = plan.sampleCount + 1;
  const px = new Float64Array(n);
  const py = new Float64Array(n);
  const profile: RayProfile = { distanceKm: new Float64Array(n), heightM: new Float64Array(n), clutterHeightM: new Float64Array(n) };
  const f = terrain.frame;
  const every = Math.max(1, Math.floor(model.everySamples ?? 1));
  for (let k = 0; k < n; k++) profile.distanceKm[k] = (k * plan.stepM) / 1000;
  for (let ray = rayStart; ray < rayEnd; ray++) {
    rayPixels(f, plan, ray, px, py);
    for (let k = 0; k < n; k++) {
      profile.heightM[k] = sampleBilinear(terrain.elevationM, f.widthPx, f.heightPx, px[k], py[k]);
      const c = terrain.clutterHeightM ? sampleBilinear(terrain.clutterHeightM, f.widthPx, f.heightPx, px[k], py[k]) : 0;
      profile.clutterHeightM[k] = c === c ? c : 0;
    }
    const base = ray * n;
    excessOut[base] = 0;
    // Profiles with NoData cut the ray there: P.1812 needs a complete profile.
    let valid = n - 1;
    for (let k = 0; k < n; k++) {
      const h = profile.heightM[k];
      if (h !== h) {
        valid = k - 1;
        break;
      }
    }
    let lastK = 0;
    let lastExcess = 0;
    for (let k = every; ; k += every) {
      const kk = Math.min(k, valid);
      if (kk <= lastK) break;
      const excess = model.lossDb(profile, kk + 1) - freeSpaceLossDb(profile.distanceKm[kk], request.frequencyMhz);
      // Linear interpolation of the excess loss between evaluated samples.
      for (let j = lastK + 1; j <= kk; j++) {
        const t = (j - lastK) / (kk - lastK);
        excessOut[base + j] = lastK === 0 ? excess : lastExcess + t * (excess - lastExcess);
      }
      lastK = kk;
      lastExcess = excess;
      if (kk === valid) break;
    }
    for (let k = valid + 1; k < n; k++) excessOut[base + k] = Number.NaN;
  }
}
