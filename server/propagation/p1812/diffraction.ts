// Diffraction, ITU-R P.1812-8 §4.3: the delta-Bullington model. Bullington over
// the actual profile (terrain plus representative clutter, §4.3.1), Bullington
// over a smooth profile of zero heights with the terminals at h'ts, h'rs
// (Eq. (37)), and the spherical-earth loss Ldsph; Ld = Lbulla + max(Ldsph − Lbulls, 0)
// (Eq. (39)), for the median radius ae and for aβ; then Ldp for p % (Eqs (40)–(41)).
import { bullingtonLossDb } from '../bullington.ts';
import { sphericalEarthLossDb } from './spherical-earth.ts';
import { inverseComplementaryNormal } from './statistics.ts';
import type { Polarisation } from './types.ts';

export interface DeltaBullingtonTerms {
  lbullaDb: number;
  lbullsDb: number;
  ldsphDb: number;
  ldDb: number;
}

/**
 * Delta-Bullington diffraction loss for the effective radius `apKm`, written into `out`.
 * `surfaceM` is the profile used for the actual-profile Bullington (terrain + clutter);
 * `htsDiffM`/`hrsDiffM` are h'ts and h'rs of Eq. (37).
 */
export function deltaBullington(
  distanceKm: Float64Array,
  surfaceM: Float64Array,
  count: number,
  htsM: number,
  hrsM: number,
  htsDiffM: number,
  hrsDiffM: number,
  apKm: number,
  frequencyGhz: number,
  omega: number,
  polarisation: Polarisation,
  out: DeltaBullingtonTerms,
): DeltaBullingtonTerms {
  const wavelengthM = 0.2998 / frequencyGhz;
  const d = distanceKm[count - 1];
  out.lbullaDb = bullingtonLossDb(distanceKm, surfaceM, count, htsM, hrsM, apKm, wavelengthM);
  out.lbullsDb = bullingtonLossDb(distanceKm, surfaceM, count, htsDiffM, hrsDiffM, apKm, wavelengthM, true);
  out.ldsphDb = sphericalEarthLossDb(d, htsDiffM, hrsDiffM, apKm, frequencyGhz, omega, polarisation);
  const excess = out.ldsphDb - out.lbullsDb;
  out.ldDb = out.lbullaDb + (excess > 0 ? excess : 0); // Eq. (39)
  return out;
}

/** Interpolation factor Fi, Eq. (40): 1 for p ≤ β0, I(p/100)/I(β0/100) for β0 < p ≤ 50. */
export function interpolationFactorFi(timePercent: number, beta0Percent: number): number {
  if (timePercent <= beta0Percent) return 1;
  return inverseComplementaryNormal(timePercent / 100) / inverseComplementaryNormal(beta0Percent / 100);
}

/** Diffraction loss not exceeded for p % of time, Eq. (41). */
export function diffractionLossForTimeDb(ld50Db: number, ldBetaDb: number, fi: number): number {
  return ld50Db + fi * (ldBetaDb - ld50Db);
}
