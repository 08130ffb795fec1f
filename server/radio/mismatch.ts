// Impedance mismatch from VSWR (standard RF relations):
//   |Γ| = (VSWR − 1)/(VSWR + 1)
//   return loss RL = −20·log10|Γ|  (dB; infinite for a perfect match)
//   mismatch loss ML = −10·log10(1 − |Γ|²)  (dB of power not delivered)

export interface Mismatch {
  vswr: number;
  reflectionCoefficient: number;
  /** Return loss in dB; null for VSWR 1 (perfect match: infinite return loss). */
  returnLossDb: number | null;
  mismatchLossDb: number;
  /** Share of the forward power reflected, in percent (|Γ|²·100). */
  reflectedPowerPercent: number;
}

/** Mismatch figures for a VSWR ≥ 1; throws RangeError below 1 or when not finite. */
export function mismatchFromVswr(vswr: number): Mismatch {
  if (!Number.isFinite(vswr) || vswr < 1) throw new RangeError(`VSWR must be a finite number of at least 1 (got ${vswr})`);
  return mismatchOf(vswr, (vswr - 1) / (vswr + 1));
}

/**
 * Mismatch figures from a reflection coefficient magnitude 0 ≤ |Γ| < 1 (a measured S11):
 * VSWR = (1 + |Γ|)/(1 − |Γ|). |Γ| ≥ 1 (no power accepted) has no finite VSWR and is rejected.
 */
export function mismatchFromReflection(gamma: number): Mismatch {
  if (!Number.isFinite(gamma) || gamma < 0 || gamma >= 1) throw new RangeError(`|Γ| must be from 0 to below 1 (got ${gamma})`);
  return mismatchOf((1 + gamma) / (1 - gamma), gamma);
}

/** |Γ| from a return loss in dB (RL = −20·log10|Γ|, so |Γ| = 10^(−RL/20)); RL must be positive. */
export function reflectionFromReturnLossDb(returnLossDb: number): number {
  if (!Number.isFinite(returnLossDb) || returnLossDb <= 0) throw new RangeError(`return loss must be a positive number of dB (got ${returnLossDb})`);
  return 10 ** (-returnLossDb / 20);
}

function mismatchOf(vswr: number, gamma: number): Mismatch {
  const returnLossDb = gamma === 0 ? null : -20 * Math.log10(gamma);
  // `+ 0` turns −0 (from −10·log10(1)) into 0.
  const mismatchLossDb = -10 * Math.log10(1 - gamma * gamma) + 0;
  return { vswr, reflectionCoefficient: gamma, returnLossDb, mismatchLossDb, reflectedPowerPercent: gamma * gamma * 100 };
}

/** Mismatch loss (dB) alone, for link budgets; VSWR below 1 is rejected as above. */
export function mismatchLossDb(vswr: number): number {
  return mismatchFromVswr(vswr).mismatchLossDb;
}

/** VSWR of a resistive load on a line of impedance z0 (e.g. 37 Ω on 50 Ω → 1.35). */
export function vswrOfResistiveLoad(loadOhm: number, z0Ohm = 50): number {
  if (!(loadOhm > 0) || !(z0Ohm > 0)) throw new RangeError('impedances must be positive');
  return loadOhm > z0Ohm ? loadOhm / z0Ohm : z0Ohm / loadOhm;
}
