// Location variability and field strength, ITU-R P.1812-8 §4.7–4.9: Lb of Eq. (69), Ep of Eq. (70).
import { inverseComplementaryNormal } from './statistics.ts';

/**
 * Correction (dB) added to the basic transmission loss so that it is not exceeded at
 * pL % of locations: −I(pL/100)·σL (a normal distribution of location variability).
 */
export function locationCorrectionDb(locationPercent: number, sigmaDb: number): number {
  if (sigmaDb === 0 || locationPercent === 50) return 0;
  return -inverseComplementaryNormal(locationPercent / 100) * sigmaDb;
}

/** Basic transmission loss Lb (dB) not exceeded for p % time and pL % locations, Eq. (69). */
export function basicTransmissionLossDb(lb0pDb: number, lbcDb: number, locationCorrection: number): number {
  const lb = lbcDb + locationCorrection;
  return lb > lb0pDb ? lb : lb0pDb;
}

/** Field strength (dBµV/m) for 1 kW e.r.p., Eq. (70): Ep = 199.36 + 20·log10(f GHz) − Lb. */
export function fieldStrength1kwDbuvm(frequencyGhz: number, lbDb: number): number {
  return 199.36 + 20 * Math.log10(frequencyGhz) - lbDb;
}

/** Field strength (dBµV/m) for an e.r.p. of `erpDbm` (1 kW = 60 dBm), scaled from Eq. (70). */
export function fieldStrengthDbuvm(frequencyGhz: number, lbDb: number, erpDbm: number): number {
  return fieldStrength1kwDbuvm(frequencyGhz, lbDb) + (erpDbm - 60);
}
