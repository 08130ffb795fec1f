// A plan's link settings: the plan row's columns plus its free-form
// `settings` JSON, resolved with documented defaults into the plain inputs the
// path and budget functions take. Unknown keys are ignored (other rooms keep
// their own settings in the same object); a key of the wrong type is reported.
import { findBandPlan, limitEirpDbm, limitForChannel, type BandPlan } from '../radio/band-plans.ts';
import { CODING_RATES, type CodingRate } from '../radio/lora-phy.ts';
import type { BuildingType } from '../radio/building-entry-loss.ts';
import { DEFAULT_ENVIRONMENT_SETTINGS, type EnvironmentSettings } from './environment.ts';
import { DEFAULT_PATH_SETTINGS, PROPAGATION_METHODS, type PathSettings, type PropagationMethodId } from './path.ts';
import { DEFAULT_LOCATION_WIDTH_M, planningSpread, type AppliedCalibration, type PlanningSpread, type SpreadSettings } from './spread.ts';

/** The plan columns this room reads. */
export interface PlanLinkColumns {
  bandPlanId: string;
  targetMarginDb: number;
  locationSigmaDb: number | null;
  /** σM of the plan, dB (null = the default; older rows may lack the column). */
  modelSigmaDb?: number | null;
  propagationMethod: string;
  settings: unknown;
}

export interface ResolvedLinkSettings {
  bandPlan: BandPlan;
  frequencyMhz: number;
  bandwidthKhz: number;
  codingRate: CodingRate;
  preambleSymbols: number;
  /** LoRaWAN framing added to a node's application payload for time on air, bytes. */
  framingOverheadBytes: number;
  /** Uplink SFs the band plan allows at this bandwidth, ascending, with their max application payload. */
  uplinkSfs: Array<{ sf: number; maxAppPayloadBytes: number | null }>;
  maxEirpDbm: number | null;
  limitSource: string;
  targetMarginDb: number;
  targetDelivery: number;
  /** Inputs of the one planning spread σ (./spread.ts planningSpread). */
  spread: SpreadSettings;
  gatewayCorrelation: number;
  environment: EnvironmentSettings;
  path: PathSettings;
  /** Gateways further than this are not predicted ("within range"), m. */
  maxLinkRangeM: number;
  /** Profile step, m (null = the terrain's finest resolution under the path). */
  profileStepM: number | null;
  /** Terrain sampling along the profile (bilinear default). */
  profileInterpolation: 'bilinear' | 'nearest';
  /** Feedline length for a mast height: height + this drop to the radio box, m. */
  feedlineDropM: number;
  warnings: string[];
}

/** Short band-plan names some rows carry, mapped to the radio room's ids. */
const BAND_PLAN_ALIASES: Record<string, string> = {
  us902: 'us-902-928',
  us915: 'us-902-928',
  eu868: 'eu-863-870',
  eu433: 'eu-433',
  au915: 'au-915-928',
  as923: 'as-923',
  in865: 'in-865-867',
  kr920: 'kr-920-923',
};

/** The radio room's band plan for an id or a known short alias. */
export function resolveBandPlan(id: string): BandPlan {
  const alias = BAND_PLAN_ALIASES[id.toLowerCase()];
  return findBandPlan(alias ?? id);
}

export class PlanSettingsError extends Error {}

type Settings = Record<string, unknown>;

function num(settings: Settings, key: string, fallback: number, min: number, max: number, warnings: string[]): number {
  const value = settings[key];
  if (value === undefined || value === null) return fallback;
  if (typeof value !== 'number' || !Number.isFinite(value) || value < min || value > max) {
    warnings.push(`plan setting ${key} must be a number from ${min} to ${max}; using ${fallback}`);
    return fallback;
  }
  return value;
}

function pick<T extends string>(settings: Settings, key: string, allowed: readonly T[], fallback: T, warnings: string[]): T {
  const value = settings[key];
  if (value === undefined || value === null) return fallback;
  if (typeof value !== 'string' || !allowed.includes(value as T)) {
    warnings.push(`plan setting ${key} must be one of ${allowed.join(', ')}; using ${fallback}`);
    return fallback;
  }
  return value as T;
}

/** Uplink frequency used for a band plan: the mean of its LoRaWAN default channels, else the band centre. */
function defaultFrequencyMhz(plan: BandPlan): number {
  const channels = plan.lorawan?.defaultChannels ?? [];
  if (channels.length === 0) return (plan.fromMhz + plan.toMhz) / 2;
  return Math.round((channels.reduce((sum, c) => sum + c.frequencyMhz, 0) / channels.length) * 1000) / 1000;
}

/** Uplink SFs at a bandwidth: the LoRa data rates of the default channels' DR span; else SF7–12. */
export function uplinkSfsFor(plan: BandPlan, bandwidthKhz: number): Array<{ sf: number; maxAppPayloadBytes: number | null }> {
  const lorawan = plan.lorawan;
  if (lorawan) {
    const channels = lorawan.defaultChannels;
    const minDr = Math.min(...channels.map((c) => c.minDr));
    const maxDr = Math.max(...channels.map((c) => c.maxDr));
    const rates = lorawan.dataRates.filter(
      (rate) => rate.modulation === 'lora' && rate.spreadingFactor !== undefined && Math.abs(rate.bandwidthKhz - bandwidthKhz) < 0.01 && rate.dr >= minDr && rate.dr <= maxDr && rate.maxMacPayloadBytes !== null,
    );
    if (rates.length > 0) {
      const bySf = new Map<number, number | null>();
      for (const rate of rates) bySf.set(rate.spreadingFactor as number, rate.maxAppPayloadBytes);
      return [...bySf.entries()].sort((a, b) => a[0] - b[0]).map(([sf, maxAppPayloadBytes]) => ({ sf, maxAppPayloadBytes }));
    }
  }
  return [7, 8, 9, 10, 11, 12].map((sf) => ({ sf, maxAppPayloadBytes: null }));
}

/** The LoRa bandwidths (kHz) a band plan's data rates use, ascending; the default bandwidth when it lists none. */
export function loraBandwidthsKhz(plan: BandPlan): number[] {
  const widths = new Set((plan.lorawan?.dataRates ?? []).filter((rate) => rate.modulation === 'lora').map((rate) => rate.bandwidthKhz));
  return widths.size > 0 ? [...widths].sort((a, b) => a - b) : [DEFAULT_BANDWIDTH_KHZ];
}

/** The LoRa bandwidth of a plan whose settings name none, kHz. */
export const DEFAULT_BANDWIDTH_KHZ = 125;

/**
 * The one SF rule for a payload: the uplink SFs whose LoRaWAN maximum application payload
 * (Regional Parameters, per data rate) carries `payloadBytes`; null = no stated maximum.
 * Empty when none does (the caller decides what then).
 */
export function sfsCarrying(uplinkSfs: ReadonlyArray<{ sf: number; maxAppPayloadBytes: number | null }>, payloadBytes: number): number[] {
  return uplinkSfs.filter((entry) => entry.maxAppPayloadBytes === null || payloadBytes <= entry.maxAppPayloadBytes).map((entry) => entry.sf);
}

/**
 * Resolves a plan's link settings. Keys read from `plan.settings` (all optional):
 * frequencyMhz, bandwidthKhz (125), codingRate ('4/5'), preambleSymbols (8),
 * framingOverheadBytes (13: LoRaWAN MHDR 1 + FHDR 7 + FPort 1 + MIC 4),
 * targetDelivery (0.9), gatewayCorrelation (0), indoorBuildingType
 * ('traditional'), pitExtraLossDb (15), pitSigmaDb (4), timePercent (50),
 * polarization ('vertical'), deltaN (45), n0 (325), zone ('inland'),
 * coastDistanceKm (500), locationWidthM (100), maxLinkRangeKm (50),
 * profileStepM (terrain resolution), profileInterpolation ('bilinear'),
 * feedlineDropM (1).
 * `options.calibration`: the plan's applied calibration (its fitted spread and bias), if any.
 */
export function resolveLinkSettings(plan: PlanLinkColumns, options: { calibration?: AppliedCalibration | null } = {}): ResolvedLinkSettings {
  const warnings: string[] = [];
  const raw = plan.settings;
  const s: Settings = raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Settings) : {};
  let bandPlan: BandPlan;
  try {
    bandPlan = resolveBandPlan(plan.bandPlanId);
  } catch (error) {
    throw new PlanSettingsError(`plan bandPlanId: ${(error as Error).message}`);
  }
  const frequencyMhz = num(s, 'frequencyMhz', defaultFrequencyMhz(bandPlan), bandPlan.fromMhz, bandPlan.toMhz, warnings);
  const bandwidthKhz = num(s, 'bandwidthKhz', DEFAULT_BANDWIDTH_KHZ, 7, 500, warnings);
  const codingRate = pick(s, 'codingRate', CODING_RATES, '4/5', warnings);
  const limit = limitForChannel(bandPlan, frequencyMhz, bandwidthKhz);
  const method = pick<PropagationMethodId>({ method: plan.propagationMethod }, 'method', PROPAGATION_METHODS, 'p1812', warnings);
  const locationWidthM = num(s, 'locationWidthM', DEFAULT_LOCATION_WIDTH_M, 1, 10_000, warnings);
  const spread: SpreadSettings = {
    locationWidthM,
    planLocationSigmaDb: plan.locationSigmaDb,
    planModelSigmaDb: plan.modelSigmaDb ?? null,
    calibration: options.calibration ?? null,
  };
  const path: PathSettings = {
    frequencyMhz,
    method,
    timePercent: num(s, 'timePercent', DEFAULT_PATH_SETTINGS.timePercent, 1, 50, warnings),
    polarization: pick(s, 'polarization', ['horizontal', 'vertical'] as const, DEFAULT_PATH_SETTINGS.polarization, warnings),
    deltaN: num(s, 'deltaN', DEFAULT_PATH_SETTINGS.deltaN, 0, 150, warnings),
    n0: num(s, 'n0', DEFAULT_PATH_SETTINGS.n0, 200, 500, warnings),
    zone: pick(s, 'zone', ['inland', 'coastal', 'sea'] as const, DEFAULT_PATH_SETTINGS.zone, warnings),
    coastDistanceKm: num(s, 'coastDistanceKm', DEFAULT_PATH_SETTINGS.coastDistanceKm, 0, 100_000, warnings),
  };
  const environment: EnvironmentSettings = {
    indoorBuildingType: pick<BuildingType>(s, 'indoorBuildingType', ['traditional', 'thermally-efficient'], DEFAULT_ENVIRONMENT_SETTINGS.indoorBuildingType, warnings),
    pitExtraLossDb: num(s, 'pitExtraLossDb', DEFAULT_ENVIRONMENT_SETTINGS.pitExtraLossDb, 0, 60, warnings),
    pitSigmaDb: num(s, 'pitSigmaDb', DEFAULT_ENVIRONMENT_SETTINGS.pitSigmaDb, 0, 20, warnings),
  };
  const stepValue = s.profileStepM;
  const profileStepM = typeof stepValue === 'number' && stepValue > 0 && Number.isFinite(stepValue) ? stepValue : null;
  return {
    bandPlan,
    frequencyMhz,
    bandwidthKhz,
    codingRate,
    preambleSymbols: num(s, 'preambleSymbols', 8, 6, 65535, warnings),
    framingOverheadBytes: num(s, 'framingOverheadBytes', 13, 0, 64, warnings),
    uplinkSfs: uplinkSfsFor(bandPlan, bandwidthKhz),
    maxEirpDbm: limit ? limitEirpDbm(limit) : null,
    limitSource: limit ? limit.source : `no limit of ${bandPlan.name} covers ${frequencyMhz} MHz at ${bandwidthKhz} kHz`,
    targetMarginDb: plan.targetMarginDb,
    targetDelivery: num(s, 'targetDelivery', 0.9, 0, 1, warnings),
    spread,
    gatewayCorrelation: num(s, 'gatewayCorrelation', 0, 0, 1, warnings),
    environment,
    path,
    maxLinkRangeM: num(s, 'maxLinkRangeKm', 50, 0.1, 500, warnings) * 1000,
    profileStepM,
    profileInterpolation: pick(s, 'profileInterpolation', ['bilinear', 'nearest'] as const, 'bilinear', warnings),
    feedlineDropM: num(s, 'feedlineDropM', 1, 0, 100, warnings),
    warnings,
  };
}

/**
 * The plan-wide σ quoted beside fleet figures (fleet table, reports): the planning spread of a
 * reference node at 1.5 m in the open. Each link carries its own sigmaDb for its own heights.
 */
export function fleetReferenceSpread(settings: ResolvedLinkSettings): PlanningSpread {
  return planningSpread({ ...settings.spread, frequencyMhz: settings.frequencyMhz, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0 });
}
