// Bullington diffraction over a terrain profile, ITU-R P.526-16 §4.5.1
// (the same construction ITU-R P.1812-8 §4.3.1 uses, ending in its Eq. (21); the step
// numbers below follow that order: Ce, Stim, Str, νmax or Srim/dbp/νb, Luc, Lbull).
import { knifeEdgeLossDb } from './knife-edge.ts';

/**
 * Bullington diffraction loss (in dB) over a profile.
 * `distanceKm`/`heightM` hold `count` points from the transmitter (index 0) to the receiver
 * (index count−1); only the intermediate points are obstacles. `txHeightAmslM`/`rxHeightAmslM`
 * are the antenna heights above the profile datum, `effectiveRadiusKm` the effective earth
 * radius (earth curvature Ce = 1/ae), `wavelengthM` the wavelength.
 * With `flat` true every intermediate height is taken as 0 (the smooth profile of P.1812 §4.3.1).
 */
export function bullingtonLossDb(
  distanceKm: ArrayLike<number>,
  heightM: ArrayLike<number>,
  count: number,
  txHeightAmslM: number,
  rxHeightAmslM: number,
  effectiveRadiusKm: number,
  wavelengthM: number,
  flat = false,
): number {
  const d = distanceKm[count - 1] - distanceKm[0];
  const d0 = distanceKm[0];
  const ce = 1 / effectiveRadiusKm; // Ce
  const hts = txHeightAmslM;
  const hrs = rxHeightAmslM;
  // Stim: highest slope of the line from the transmitter to any intermediate point (m/km).
  let stim = -Infinity;
  for (let i = 1; i < count - 1; i++) {
    const di = distanceKm[i] - d0;
    const hi = flat ? 0 : heightM[i];
    const slope = (hi + 500 * ce * di * (d - di) - hts) / di;
    if (slope > stim) stim = slope;
  }
  const str = (hrs - hts) / d; // Str
  let luc: number;
  if (stim < str) {
    // Line of sight (Stim < Str): the highest diffraction parameter over the path.
    let vmax = -Infinity;
    for (let i = 1; i < count - 1; i++) {
      const di = distanceKm[i] - d0;
      const hi = flat ? 0 : heightM[i];
      const v =
        (hi + 500 * ce * di * (d - di) - (hts * (d - di) + hrs * di) / d) *
        Math.sqrt((0.002 * d) / (wavelengthM * di * (d - di)));
      if (v > vmax) vmax = v;
    }
    luc = count > 2 ? knifeEdgeLossDb(vmax) : 0;
  } else {
    // Srim: highest slope from the receiver.
    let srim = -Infinity;
    for (let i = 1; i < count - 1; i++) {
      const di = distanceKm[i] - d0;
      const hi = flat ? 0 : heightM[i];
      const slope = (hi + 500 * ce * di * (d - di) - hrs) / (d - di);
      if (slope > srim) srim = slope;
    }
    const dbp = (hrs - hts + srim * d) / (stim + srim); // dbp: distance of the Bullington point
    const vb =
      (hts + stim * dbp - (hts * (d - dbp) + hrs * dbp) / d) *
      Math.sqrt((0.002 * d) / (wavelengthM * dbp * (d - dbp))); // νb
    luc = knifeEdgeLossDb(vb);
  }
  // P.1812-8 Eq. (21): empirical correction that grows with distance.
  return luc + (1 - Math.exp(-luc / 6)) * (10 + 0.02 * d);
}
