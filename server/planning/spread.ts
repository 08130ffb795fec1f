// The one planning spread σ: how far the received level of a link may sit from
// its predicted median. Every figure that turns a margin into a probability
// (link delivery probability, fleet status, coverage probability layer, kit
// recommendation, visit-sheet ranges) takes σ from planningSpread() below.
//
//   σ = √(σL² + σM² + σE²)
//   σL  location variability of ITU-R P.1812-8 §4.8 with its height factor
//   σM  prediction error of the path model (default 6 dB, from memory; plan setting)
//   σE  the node environment's own spread (building entry P.2109, pit), when indoors
// An applied calibration (a fit of field readings against predictions) replaces
// σL and σM by its fitted spread and shifts the predicted level by its bias.

/** Default location-variability resolution width w_a of ITU-R P.1812-8 §4.8, m. */
export const DEFAULT_LOCATION_WIDTH_M = 100;

/**
 * Default prediction error σM of a terrain path model against sub-GHz measurements, dB.
 * From memory: published comparisons of path-specific models with drive tests put the
 * standard deviation of the error between about 5 and 9 dB; 6 dB is a planning figure.
 */
export const DEFAULT_MODEL_SIGMA_DB = 6;

export type SigmaSource = 'default' | 'plan' | 'calibration';

/**
 * A calibration applied to a plan (fitted elsewhere from field readings).
 * biasDb: mean of (measured − predicted) received level, dB; it is ADDED to every predicted
 * level (a negative bias = the model was optimistic). sigmaDb: spread of the residuals, dB.
 */
export interface AppliedCalibration {
  /** Identifies the calibration (enters the link cache hash); optional. */
  id?: string;
  biasDb: number;
  sigmaDb: number;
}

/**
 * Height factor of the §4.8 location variability (ITU-R P.1812-8 §4.8, the factor applied to
 * σL for the terminal's antenna height h above ground against the representative clutter
 * height R at the terminal): 1 for h < R; 1 − (h − R)/10 for R ≤ h < R + 10; 0 for h ≥ R + 10.
 */
export function p1812LocationHeightFactor(antennaHeightAglM: number, clutterHeightM: number): number {
  const above = antennaHeightAglM - clutterHeightM;
  if (above < 0) return 1;
  if (above >= 10) return 0;
  return 1 - above / 10;
}

/**
 * Location variability σL (dB) of ITU-R P.1812-8 §4.8:
 * σL = K·(0.024·f + 0.52)·w_a^0.28, f in GHz, w_a the area width in m, K the height factor
 * above (1 when the antenna height is not given, i.e. a terminal inside its clutter).
 */
export function p1812LocationSigmaDb(frequencyMhz: number, widthM = DEFAULT_LOCATION_WIDTH_M, antennaHeightAglM?: number, clutterHeightM = 0): number {
  const factor = antennaHeightAglM === undefined ? 1 : p1812LocationHeightFactor(antennaHeightAglM, clutterHeightM);
  return factor * (0.024 * (frequencyMhz / 1000) + 0.52) * widthM ** 0.28;
}

/** The plan-wide inputs of the spread (resolved plan settings carry them). */
export interface SpreadSettings {
  /** w_a of §4.8, m. */
  locationWidthM: number;
  /** The plan's own σL, dB (null = §4.8 with its height factor). */
  planLocationSigmaDb: number | null;
  /** The plan's own σM, dB (null = DEFAULT_MODEL_SIGMA_DB). */
  planModelSigmaDb: number | null;
  /** An applied calibration (null = none). */
  calibration: AppliedCalibration | null;
}

export interface PlanningSpreadInput extends SpreadSettings {
  frequencyMhz: number;
  /** The node's antenna height above ground, m. */
  nodeAntennaHeightAglM: number;
  /** Representative clutter height at the node, m (0 without a land-cover layer). */
  nodeClutterHeightM: number;
  /** Spread of the node environment's extra loss (indoor, pit), dB; 0 outdoors. */
  environmentSigmaDb?: number;
}

export interface PlanningSpread {
  /** The σ every probability uses, dB. */
  sigmaDb: number;
  sigmaSource: SigmaSource;
  /** σL used (0 under a calibration), dB. */
  sigmaLocationDb: number;
  /** σM used (the calibration's fitted σ under one), dB. */
  sigmaModelDb: number;
  sigmaEnvironmentDb: number;
  /** Shift added to the predicted received level, dB (0 without a calibration). */
  biasDb: number;
}

/** The planning spread of one link (pure; see the head of this file). */
export function planningSpread(input: PlanningSpreadInput): PlanningSpread {
  const sigmaEnvironmentDb = input.environmentSigmaDb ?? 0;
  if (input.calibration) {
    // The fitted spread replaces every term: the residuals it was fitted to (measured − predicted
    // at real nodes, indoor and pit ones included) already carry the environment's own spread,
    // so adding σE again would count it twice.
    const fitted = input.calibration.sigmaDb;
    return {
      sigmaDb: fitted,
      sigmaSource: 'calibration',
      sigmaLocationDb: 0,
      sigmaModelDb: fitted,
      sigmaEnvironmentDb: 0,
      biasDb: input.calibration.biasDb,
    };
  }
  const sigmaLocationDb = input.planLocationSigmaDb ?? p1812LocationSigmaDb(input.frequencyMhz, input.locationWidthM, input.nodeAntennaHeightAglM, input.nodeClutterHeightM);
  const sigmaModelDb = input.planModelSigmaDb ?? DEFAULT_MODEL_SIGMA_DB;
  return {
    sigmaDb: Math.sqrt(sigmaLocationDb * sigmaLocationDb + sigmaModelDb * sigmaModelDb + sigmaEnvironmentDb * sigmaEnvironmentDb),
    sigmaSource: input.planLocationSigmaDb !== null || input.planModelSigmaDb !== null ? 'plan' : 'default',
    sigmaLocationDb,
    sigmaModelDb,
    sigmaEnvironmentDb,
    biasDb: 0,
  };
}

/** Words for a spread, for answers and sheets. */
export function describeSpread(spread: PlanningSpread, settings: SpreadSettings): string {
  if (spread.sigmaSource === 'calibration') return `σ ${spread.sigmaDb.toFixed(1)} dB from the applied calibration (fitted spread ${spread.sigmaModelDb.toFixed(1)} dB, bias ${spread.biasDb.toFixed(1)} dB)`;
  const location = settings.planLocationSigmaDb !== null ? 'σL plan setting' : `σL ITU-R P.1812-8 §4.8 (w_a ${settings.locationWidthM} m, height factor)`;
  const model = settings.planModelSigmaDb !== null ? 'σM plan setting' : `σM default ${DEFAULT_MODEL_SIGMA_DB} dB (from memory)`;
  return `σ ${spread.sigmaDb.toFixed(1)} dB = √(σL² + σM²${spread.sigmaEnvironmentDb > 0 ? ' + σE²' : ''}): ${location} ${spread.sigmaLocationDb.toFixed(1)} dB, ${model} ${spread.sigmaModelDb.toFixed(1)} dB`;
}
