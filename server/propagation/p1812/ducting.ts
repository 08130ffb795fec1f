// Ducting and layer reflection, ITU-R P.1812-8 §4.5 (Lba is Eq. (46), its sub-terms
// follow in Eqs (47)–(56); they are cited by role here, not by number):
// Lba = Af + Ad(p), with the fixed coupling losses Af (Alf, Ast/Asr, Act/Acr)
// and the time-percentage and angular-distance dependent loss Ad(p).

export interface DuctingInput {
  frequencyGhz: number;
  timePercent: number;
  distanceKm: number;
  dltKm: number;
  dlrKm: number;
  thetaTMrad: number;
  thetaRMrad: number;
  htsM: number;
  hrsM: number;
  hteM: number;
  hreM: number;
  hmM: number;
  aeKm: number;
  beta0Percent: number;
  /** τ of the β0 formula (from dlm). */
  tau: number;
  omega: number;
  txCoastDistanceKm: number;
  rxCoastDistanceKm: number;
}

export interface DuctingTerms {
  lbaDb: number;
  afDb: number;
  alfDb: number;
  astDb: number;
  asrDb: number;
  actDb: number;
  acrDb: number;
  adDb: number;
  gammaDDbPerMrad: number;
  thetaPrimeMrad: number;
  apDb: number;
  betaPercent: number;
  mu2: number;
  mu3: number;
  gammaExponent: number;
}

export function emptyDuctingTerms(): DuctingTerms {
  return {
    lbaDb: 0,
    afDb: 0,
    alfDb: 0,
    astDb: 0,
    asrDb: 0,
    actDb: 0,
    acrDb: 0,
    adDb: 0,
    gammaDDbPerMrad: 0,
    thetaPrimeMrad: 0,
    apDb: 0,
    betaPercent: 0,
    mu2: 0,
    mu3: 0,
    gammaExponent: 0,
  };
}

/** Site-shielding loss Ast or Asr (dB), with θ'' = θ − 0.1·dl (mrad). */
function siteShieldingDb(frequencyGhz: number, thetaMrad: number, horizonKm: number): number {
  const t = thetaMrad - 0.1 * horizonKm;
  if (t <= 0) return 0;
  return 20 * Math.log10(1 + 0.361 * t * Math.sqrt(frequencyGhz * horizonKm)) + 0.264 * t * Math.cbrt(frequencyGhz);
}

/** Over-sea surface-duct coupling correction Act or Acr (dB): only for ω ≥ 0.75 with the coast within 5 km and the horizon. */
function seaDuctCouplingDb(omega: number, coastKm: number, horizonKm: number, heightAmslM: number): number {
  if (omega >= 0.75 && coastKm <= horizonKm && coastKm <= 5) {
    return -3 * Math.exp(-0.25 * coastKm * coastKm) * (1 + Math.tanh(0.07 * (50 - heightAmslM)));
  }
  return 0;
}

/** Ducting/layer-reflection loss Lba (dB) with all its sub-terms, written into `out`. */
export function ductingLoss(input: DuctingInput, out: DuctingTerms): DuctingTerms {
  const f = input.frequencyGhz;
  const d = input.distanceKm;
  // Alf: empirical correction for the increasing attenuation with wavelength below 0.5 GHz.
  out.alfDb = f < 0.5 ? 45.375 - 137 * f + 92.5 * f * f : 0;
  out.astDb = siteShieldingDb(f, input.thetaTMrad, input.dltKm);
  out.asrDb = siteShieldingDb(f, input.thetaRMrad, input.dlrKm);
  out.actDb = seaDuctCouplingDb(input.omega, input.txCoastDistanceKm, input.dltKm, input.htsM);
  out.acrDb = seaDuctCouplingDb(input.omega, input.rxCoastDistanceKm, input.dlrKm, input.hrsM);
  // Af: total of the fixed coupling losses between the antennas and the anomalous structure.
  out.afDb =
    102.45 +
    20 * Math.log10(f) +
    20 * Math.log10(input.dltKm + input.dlrKm) +
    out.alfDb +
    out.astDb +
    out.asrDb +
    out.actDb +
    out.acrDb;

  // γd: specific attenuation inside the duct (dB/mrad).
  out.gammaDDbPerMrad = 5e-5 * input.aeKm * Math.cbrt(f);
  // θ': angular distance with the horizon angles capped at 0.1·dl.
  const tt = input.thetaTMrad <= 0.1 * input.dltKm ? input.thetaTMrad : 0.1 * input.dltKm;
  const tr = input.thetaRMrad <= 0.1 * input.dlrKm ? input.thetaRMrad : 0.1 * input.dlrKm;
  out.thetaPrimeMrad = (1000 * d) / input.aeKm + tt + tr;

  // μ2: path geometry correction; α limited to −3.4.
  let alpha = -0.6 - 3.5e-9 * Math.pow(d, 3.1) * input.tau;
  if (alpha < -3.4) alpha = -3.4;
  const sumRoot = Math.sqrt(input.hteM) + Math.sqrt(input.hreM);
  let mu2 = Math.pow(((500 / input.aeKm) * d * d) / (sumRoot * sumRoot), alpha);
  if (mu2 > 1) mu2 = 1;
  out.mu2 = mu2;
  // μ3: terrain roughness correction.
  let mu3 = 1;
  if (input.hmM > 10) {
    const di = Math.min(d - input.dltKm - input.dlrKm, 40);
    mu3 = Math.exp(-4.6e-5 * (input.hmM - 10) * (43 + 6 * di));
  }
  out.mu3 = mu3;
  // β = β0·μ2·μ3: time percentage of anomalous propagation on this path.
  const beta = input.beta0Percent * mu2 * mu3;
  out.betaPercent = beta;
  const logBeta = Math.log10(beta);
  // Γ: exponent of the time-percentage variability.
  const gamma =
    (1.076 / Math.pow(2.0058 - logBeta, 1.012)) *
    Math.exp(-(9.51 - 4.8 * logBeta + 0.198 * logBeta * logBeta) * 1e-6 * Math.pow(d, 1.13));
  out.gammaExponent = gamma;
  const ratio = input.timePercent / beta;
  // A(p): time-percentage variability (cumulative distribution).
  out.apDb = -12 + (1.2 + 3.7e-3 * d) * Math.log10(ratio) + 12 * Math.pow(ratio, gamma);
  // Ad(p): time percentage and angular-distance dependent losses.
  out.adDb = out.gammaDDbPerMrad * out.thetaPrimeMrad + out.apDb;
  out.lbaDb = out.afDb + out.adDb; // Eq. (46)
  return out;
}
