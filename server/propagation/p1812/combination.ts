// Combination of the propagation mechanisms, ITU-R P.1812-8 §4.6, Eqs (57)–(63).

export interface CombinationInput {
  timePercent: number;
  beta0Percent: number;
  omega: number;
  distanceKm: number;
  thetaMrad: number;
  fi: number;
  lb0pDb: number;
  lb0bDb: number;
  ldpDb: number;
  lbd50Db: number;
  lbdDb: number;
  lbaDb: number;
  lbsDb: number;
}

export interface CombinationTerms {
  fj: number;
  fk: number;
  lminb0pDb: number;
  lminbapDb: number;
  lbdaDb: number;
  lbamDb: number;
  lbcDb: number;
}

export function emptyCombinationTerms(): CombinationTerms {
  return { fj: 0, fk: 0, lminb0pDb: 0, lminbapDb: 0, lbdaDb: 0, lbamDb: 0, lbcDb: 0 };
}

const THETA_BIG_MRAD = 0.3; // Θ of Eq. (57)
const XI = 0.8; // ξ of Eq. (57)
const DSW_KM = 20; // dsw of Eq. (58)
const KAPPA = 0.5; // κ of Eq. (58)
const ETA = 2.5; // η of Eq. (60)

export function combineMechanisms(input: CombinationInput, out: CombinationTerms): CombinationTerms {
  // Eq. (57): blend between LoS and diffraction by path angular distance.
  out.fj = 1 - 0.5 * (1 + Math.tanh((3 * XI * (input.thetaMrad - THETA_BIG_MRAD)) / THETA_BIG_MRAD));
  // Eq. (58): blend between ducting and diffraction by path length.
  out.fk = 1 - 0.5 * (1 + Math.tanh((3 * KAPPA * (input.distanceKm - DSW_KM)) / DSW_KM));
  // Eq. (59): notional minimum loss for LoS and sea-path diffraction.
  const seaWeight = 1 - input.omega;
  out.lminb0pDb =
    input.timePercent < input.beta0Percent
      ? input.lb0pDb + seaWeight * input.ldpDb
      : input.lbd50Db + (input.lb0bDb + seaWeight * input.ldpDb - input.lbd50Db) * input.fi;
  // Eq. (60): notional minimum loss for LoS and ducting/layer reflection.
  // η·ln(e^(a/η) + e^(b/η)) written around the larger term so large losses cannot overflow.
  const high = input.lbaDb > input.lb0pDb ? input.lbaDb : input.lb0pDb;
  const low = input.lbaDb > input.lb0pDb ? input.lb0pDb : input.lbaDb;
  out.lminbapDb = high + ETA * Math.log1p(Math.exp((low - high) / ETA));
  // Eq. (61): notional loss for diffraction and ducting.
  out.lbdaDb =
    out.lminbapDb > input.lbdDb ? input.lbdDb : out.lminbapDb + (input.lbdDb - out.lminbapDb) * out.fk;
  // Eq. (62): modified by the LoS/sea-path term.
  out.lbamDb = out.lbdaDb + (out.lminb0pDb - out.lbdaDb) * out.fj;
  // Eq. (63): power sum with troposcatter.
  out.lbcDb = -5 * Math.log10(Math.pow(10, -0.2 * input.lbsDb) + Math.pow(10, -0.2 * out.lbamDb));
  return out;
}
