// Spherical-earth diffraction loss, ITU-R P.1812-8 §4.3.2–4.3.3 (Ldsph is Eq. (27); the
// first-term formula follows in Eqs (28)–(36); sub-equations are cited by role, not number):
// the loss Ldsph over a smooth sphere of radius ap, built from the first-term
// residue formula Ldft for land (εr 22, σ 0.003 S/m) and sea (εr 80, σ 5 S/m),
// for horizontal or vertical polarisation.
import type { Polarisation } from './types.ts';

/** First-term spherical-earth diffraction loss (dB) for one ground type (P.1812-8 §4.3.3). */
export function firstTermLossForGroundDb(
  adftKm: number,
  distanceKm: number,
  htsEffM: number,
  hrsEffM: number,
  frequencyGhz: number,
  epsilonR: number,
  sigmaSm: number,
  polarisation: Polarisation,
): number {
  const f = frequencyGhz;
  const s = (18 * sigmaSm) / f;
  // Normalised surface admittance K for horizontal polarisation; for vertical, times √(εr² + (18σ/f)²).
  let k = 0.036 * Math.pow(adftKm * f, -1 / 3) * Math.pow((epsilonR - 1) * (epsilonR - 1) + s * s, -0.25);
  if (polarisation === 'vertical') k *= Math.sqrt(epsilonR * epsilonR + s * s);
  const k2 = k * k;
  const k4 = k2 * k2;
  const betaDft = (1 + 1.6 * k2 + 0.67 * k4) / (1 + 4.5 * k2 + 1.53 * k4); // β_dft
  const x = 21.88 * betaDft * Math.pow(f / (adftKm * adftKm), 1 / 3) * distanceKm; // normalised distance X
  const y = 0.9575 * betaDft * Math.pow((f * f) / adftKm, 1 / 3); // normalised height factor Y
  // Distance term F(X).
  const fx = x >= 1.6 ? 11 + 10 * Math.log10(x) - 17.6 * x : -20 * Math.log10(x) - 5.6488 * Math.pow(x, 1.425);
  const gMin = 2 + 20 * Math.log10(k);
  return -fx - heightGainDb(y * htsEffM, betaDft, gMin) - heightGainDb(y * hrsEffM, betaDft, gMin);
}

/** Height-gain term G(Y) (dB), limited below by 2 + 20·log10(K) (P.1812-8 §4.3.3). */
function heightGainDb(y: number, betaDft: number, gMinDb: number): number {
  const b = betaDft * y;
  const g = b > 2 ? 17.6 * Math.sqrt(b - 1.1) - 5 * Math.log10(b - 1.1) - 8 : 20 * Math.log10(b + 0.1 * b * b * b);
  return g < gMinDb ? gMinDb : g;
}

/** Ldft (dB): land and sea first-term losses weighted by the sea fraction ω (P.1812-8 §4.3.3). */
export function firstTermLossDb(
  adftKm: number,
  distanceKm: number,
  htsEffM: number,
  hrsEffM: number,
  frequencyGhz: number,
  omega: number,
  polarisation: Polarisation,
): number {
  const land = firstTermLossForGroundDb(adftKm, distanceKm, htsEffM, hrsEffM, frequencyGhz, 22, 0.003, polarisation);
  if (omega <= 0) return land;
  const sea = firstTermLossForGroundDb(adftKm, distanceKm, htsEffM, hrsEffM, frequencyGhz, 80, 5, polarisation);
  return omega * sea + (1 - omega) * land;
}

/**
 * Spherical-earth diffraction loss Ldsph (dB), Eqs (22)–(27), for the effective radius `apKm`
 * and the terminal heights `htsEffM`/`hrsEffM` above the smooth surface (h'ts, h'rs of Eq. (37)).
 */
export function sphericalEarthLossDb(
  distanceKm: number,
  htsEffM: number,
  hrsEffM: number,
  apKm: number,
  frequencyGhz: number,
  omega: number,
  polarisation: Polarisation,
): number {
  const d = distanceKm;
  // Marginal line-of-sight distance over the smooth earth (first step of §4.3.2).
  const dlos = Math.sqrt(2 * apKm) * (Math.sqrt(0.001 * htsEffM) + Math.sqrt(0.001 * hrsEffM));
  if (d >= dlos) return firstTermLossDb(apKm, d, htsEffM, hrsEffM, frequencyGhz, omega, polarisation);
  // Smallest clearance hse between the curved earth and the ray, at dse1/dse2 from the ends.
  const c = (htsEffM - hrsEffM) / (htsEffM + hrsEffM);
  const m = (250 * d * d) / (apKm * (htsEffM + hrsEffM));
  const b =
    2 *
    Math.sqrt((m + 1) / (3 * m)) *
    Math.cos(Math.PI / 3 + Math.acos(((3 * c) / 2) * Math.sqrt((3 * m) / Math.pow(m + 1, 3))) / 3);
  const dse1 = (d / 2) * (1 + b);
  const dse2 = d - dse1;
  const hse = ((htsEffM - (500 * dse1 * dse1) / apKm) * dse2 + (hrsEffM - (500 * dse2 * dse2) / apKm) * dse1) / d;
  // Clearance hreq needed for zero diffraction loss.
  const wavelengthM = 0.2998 / frequencyGhz;
  const hreq = 17.456 * Math.sqrt((dse1 * dse2 * wavelengthM) / d);
  if (hse > hreq) return 0;
  // Modified effective radius aem for marginal LoS, and the interpolated loss Ldsph (Eq. (27)).
  const sum = Math.sqrt(htsEffM) + Math.sqrt(hrsEffM);
  const aem = 500 * (d / sum) * (d / sum);
  const ldft = firstTermLossDb(aem, d, htsEffM, hrsEffM, frequencyGhz, omega, polarisation);
  if (ldft < 0) return 0;
  return (1 - hse / hreq) * ldft;
}
