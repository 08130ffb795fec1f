// Spherical-earth diffraction loss, ITU-R P.1812-8 §4.3.2–4.3.3, Eqs (22)–(36):
// the loss Ldsph over a smooth sphere of radius ap, built from the first-term
// residue formula Ldft for land (εr 22, σ 0.003 S/m) and sea (εr 80, σ 5 S/m),
// for horizontal or vertical polarisation.
import type { Polarisation } from './types.ts';

/** First-term spherical-earth diffraction loss (dB) for one ground type, Eqs (29)–(36). */
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
  // Eq. (30a): normalised surface admittance for horizontal polarisation; (30b) for vertical.
  let k = 0.036 * Math.pow(adftKm * f, -1 / 3) * Math.pow((epsilonR - 1) * (epsilonR - 1) + s * s, -0.25);
  if (polarisation === 'vertical') k *= Math.sqrt(epsilonR * epsilonR + s * s);
  const k2 = k * k;
  const k4 = k2 * k2;
  const betaDft = (1 + 1.6 * k2 + 0.67 * k4) / (1 + 4.5 * k2 + 1.53 * k4); // Eq. (31)
  const x = 21.88 * betaDft * Math.pow(f / (adftKm * adftKm), 1 / 3) * distanceKm; // Eq. (32)
  const y = 0.9575 * betaDft * Math.pow((f * f) / adftKm, 1 / 3); // Eq. (33)
  // Eq. (34): distance term.
  const fx = x >= 1.6 ? 11 + 10 * Math.log10(x) - 17.6 * x : -20 * Math.log10(x) - 5.6488 * Math.pow(x, 1.425);
  const gMin = 2 + 20 * Math.log10(k);
  return -fx - heightGainDb(y * htsEffM, betaDft, gMin) - heightGainDb(y * hrsEffM, betaDft, gMin);
}

/** Height-gain term G(Y) (dB), Eq. (35), limited below by 2 + 20·log10(K). */
function heightGainDb(y: number, betaDft: number, gMinDb: number): number {
  const b = betaDft * y;
  const g = b > 2 ? 17.6 * Math.sqrt(b - 1.1) - 5 * Math.log10(b - 1.1) - 8 : 20 * Math.log10(b + 0.1 * b * b * b);
  return g < gMinDb ? gMinDb : g;
}

/** Ldft (dB), Eq. (29): land and sea first-term losses weighted by the sea fraction ω. */
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
 * Spherical-earth diffraction loss Ldsph (dB), Eqs (22)–(28), for the effective radius `apKm`
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
  // Eq. (22): marginal line-of-sight distance over the smooth earth.
  const dlos = Math.sqrt(2 * apKm) * (Math.sqrt(0.001 * htsEffM) + Math.sqrt(0.001 * hrsEffM));
  if (d >= dlos) return firstTermLossDb(apKm, d, htsEffM, hrsEffM, frequencyGhz, omega, polarisation);
  // Eqs (23)–(26): smallest clearance between the curved path and the ray.
  const c = (htsEffM - hrsEffM) / (htsEffM + hrsEffM);
  const m = (250 * d * d) / (apKm * (htsEffM + hrsEffM));
  const b =
    2 *
    Math.sqrt((m + 1) / (3 * m)) *
    Math.cos(Math.PI / 3 + Math.acos(((3 * c) / 2) * Math.sqrt((3 * m) / Math.pow(m + 1, 3))) / 3);
  const dse1 = (d / 2) * (1 + b);
  const dse2 = d - dse1;
  const hse = ((htsEffM - (500 * dse1 * dse1) / apKm) * dse2 + (hrsEffM - (500 * dse2 * dse2) / apKm) * dse1) / d;
  // Eq. (26): clearance needed for zero diffraction loss.
  const wavelengthM = 0.2998 / frequencyGhz;
  const hreq = 17.456 * Math.sqrt((dse1 * dse2 * wavelengthM) / d);
  if (hse > hreq) return 0;
  // Eq. (27)–(28): modified effective radius for marginal LoS and the interpolated loss.
  const sum = Math.sqrt(htsEffM) + Math.sqrt(hrsEffM);
  const aem = 500 * (d / sum) * (d / sum);
  const ldft = firstTermLossDb(aem, d, htsEffM, hrsEffM, frequencyGhz, omega, polarisation);
  if (ldft < 0) return 0;
  return (1 - hse / hreq) * ldft;
}
