// Building entry loss, ITU-R P.2109-1 §3 (statistical model, 80 MHz – 100 GHz).
// Coefficients of Table 1 and Eqs. (1)–(7) written from memory of the
// Recommendation; the tests derive their check values by hand from the same
// equations and say so.
//
// The loss is a distribution over buildings and positions inside them: the
// median (P = 0.5) is what a link budget subtracts, the spread is added to the
// location variability when the probability of delivery is computed.

import { inverseComplementaryNormal } from '../propagation/p1812/statistics.ts';

export type BuildingType = 'traditional' | 'thermally-efficient';

interface P2109Coefficients {
  r: number; s: number; t: number;
  u: number; v: number;
  w: number; x: number;
  y: number; z: number;
}

/** ITU-R P.2109-1 Table 1 (from memory). */
const TABLE_1: Record<BuildingType, P2109Coefficients> = {
  traditional: { r: 12.64, s: 3.72, t: 0.96, u: 9.6, v: 2.0, w: 9.1, x: -3.0, y: 4.5, z: -2.0 },
  'thermally-efficient': { r: 28.19, s: -3.0, t: 8.48, u: 13.5, v: 3.8, w: 27.8, x: -2.9, y: 9.4, z: -2.1 },
};

/** The constant third term C of ITU-R P.2109-1 Eq. (1), in dB. */
const P2109_C_DB = -3.0;

/** Frequency range of ITU-R P.2109-1 (§1), in MHz. */
export const P2109_MIN_FREQUENCY_MHZ = 80;
export const P2109_MAX_FREQUENCY_MHZ = 100_000;

/**
 * Inverse of the standard normal cumulative distribution, F⁻¹(p) (0 < p < 1),
 * through the P.1812 I(x) of the propagation room: F⁻¹(p) = I(1 − p)
 * (rational approximation of ITU-R P.1057, |error| < 4.5·10⁻⁴).
 */
export function inverseStandardNormal(probability: number): number {
  if (!(probability > 0 && probability < 1)) throw new RangeError('probability must be strictly between 0 and 1');
  return inverseComplementaryNormal(1 - probability);
}

export interface BuildingEntryLossInput {
  frequencyMhz: number;
  buildingType: BuildingType;
  /** Probability (0–1) that the loss is not exceeded. */
  probability: number;
  /** Elevation angle of the path at the building façade, degrees (−90…90). */
  elevationDeg?: number;
}

/** Building entry loss L_BEL(P) in dB, ITU-R P.2109-1 Eq. (1). */
export function buildingEntryLossDb(input: BuildingEntryLossInput): number {
  const { frequencyMhz, buildingType, probability } = input;
  const elevationDeg = input.elevationDeg ?? 0;
  if (!(frequencyMhz >= P2109_MIN_FREQUENCY_MHZ && frequencyMhz <= P2109_MAX_FREQUENCY_MHZ)) {
    throw new RangeError(`frequencyMhz: P.2109 covers ${P2109_MIN_FREQUENCY_MHZ}–${P2109_MAX_FREQUENCY_MHZ} MHz`);
  }
  if (!(Math.abs(elevationDeg) <= 90)) throw new RangeError('elevationDeg: must be within ±90°');
  const k = TABLE_1[buildingType];
  if (!k) throw new RangeError(`buildingType: must be traditional or thermally-efficient`);
  const logF = Math.log10(frequencyMhz / 1000); // the Recommendation's f is in GHz
  const horizontalDb = k.r + k.s * logF + k.t * logF * logF; // Eq. (2) L_h
  const elevationCorrectionDb = 0.212 * Math.abs(elevationDeg); // Eq. (3) L_e
  const mu1 = horizontalDb + elevationCorrectionDb; // Eq. (4)
  const mu2 = k.w + k.x * logF; // Eq. (5)
  const sigma1 = k.u + k.v * logF; // Eq. (6)
  const sigma2 = k.y + k.z * logF; // Eq. (7)
  const z = inverseStandardNormal(probability);
  const aDb = z * sigma1 + mu1; // Eq. (1) A(P)
  const bDb = z * sigma2 + mu2; // Eq. (1) B(P)
  return 10 * Math.log10(10 ** (0.1 * aDb) + 10 ** (0.1 * bDb) + 10 ** (0.1 * P2109_C_DB)); // Eq. (1)
}

/**
 * Median building entry loss and an equivalent normal spread for budgets:
 * σ ≈ (L(0.9) − L(0.1)) / (2·1.2816). The P.2109 distribution is not normal;
 * this spread is only used to widen the location variability.
 */
export function buildingEntryLossSummary(frequencyMhz: number, buildingType: BuildingType, elevationDeg = 0): { medianDb: number; sigmaDb: number } {
  const at = (probability: number) => buildingEntryLossDb({ frequencyMhz, buildingType, probability, elevationDeg });
  const medianDb = at(0.5);
  const sigmaDb = (at(0.9) - at(0.1)) / (2 * 1.2815516);
  return { medianDb, sigmaDb };
}
