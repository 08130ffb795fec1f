// How far apart two antennas can be before the earth's bulge alone hides one
// from the other: the smooth-earth radio horizon over an effective earth of
// radius k·a. d = √(2·k·a·h1) + √(2·k·a·h2) (the tangent-line geometry of a
// sphere; with k = 4/3 this is the familiar d[km] ≈ 4.12·(√h1 + √h2), h in m).
import { EARTH_RADIUS_KM } from '../propagation/path-geometry.ts';
import { freeSpaceLossDb } from '../propagation/free-space.ts';

/** Smooth-earth radio horizon between antennas `h1M` and `h2M` above a common reference, m. */
export function radioHorizonM(h1M: number, h2M: number, kFactor: number): number {
  const aeM = kFactor * EARTH_RADIUS_KM * 1000;
  return Math.sqrt(2 * aeM * Math.max(0, h1M)) + Math.sqrt(2 * aeM * Math.max(0, h2M));
}

/**
 * The least basic transmission loss any path method of the link engine can predict between
 * antennas `distanceM` apart on the ground, dB: a floor under every prediction, so a pair whose
 * link fails the plan's served rule even at this loss fails it whatever the terrain.
 *
 * - Free space, ITU-R P.525-4 Eq. (9): Lbf = 32.45 + 20·log10(f MHz) + 20·log10(d km), over the
 *   ground distance (every method takes it over the slant distance, which is no shorter).
 * - Bullington (P.526-16 §4.5), Deygout and knife-edge add diffraction J(ν) ≥ 0 to free space
 *   (P.526-16 Eq. (31), 0 for ν ≤ −0.78), so free space is their floor.
 * - P.1812-8: Lb = max(Lb0p, Lbc + location term) (Eq. (69)), Lb0p = Lbfs + Esp (Eq. (11)) with
 *   Lbfs = 92.4 + 20·log10(f GHz) + 20·log10(d km) (Eq. (8), a constant 0.05 dB under P.525's
 *   exact one) and Esp = 2.6·[1 − exp(−0.1·(dlt + dlr))]·log10(p/50) (Eq. (9)), which for a time
 *   percentage p < 50 % is negative but never below 2.6·log10(p/50).
 */
export function lowestBasicLossDb(method: string, distanceM: number, frequencyMhz: number, timePercent: number): number {
  const freeSpace = freeSpaceLossDb(Math.max(distanceM, 1) / 1000, frequencyMhz);
  if (method !== 'p1812') return freeSpace;
  const p = Math.min(50, Math.max(timePercent, 1e-6));
  return freeSpace - P1812_CONSTANT_SHORTFALL_DB + 2.6 * Math.log10(p / 50);
}

/** P.525's exact 32.45 (20·log10(4π·10⁹/c)) against P.1812-8 Eq. (8)'s rounded 92.4 (= 32.4 + 60 for f in GHz), dB. */
const P1812_CONSTANT_SHORTFALL_DB = 0.05;
