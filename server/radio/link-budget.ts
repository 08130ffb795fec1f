// Link budget between a transmitter and a receiver for a known path loss:
//   EIRP = P_tx − feedline − connectors − mismatch − other + G_tx(toward receiver)
//   P_rx = EIRP − path loss + G_rx(toward transmitter) − receive-side losses
//   SNR = P_rx − noise floor;  margin(SF) = P_rx − sensitivity(SF)
// plus the legal check of the radiated power against the band-plan limit of the
// channel, messages per hour under the duty-cycle rule and the dwell-time check.

import { antennaGainDbi, type AntennaDesign } from './antennas.ts';
import { DIPOLE_GAIN_DBI, findBandPlan, limitEirpDbm, limitForChannel, type BandLimit, type BandPlan } from './band-plans.ts';
import { connectorLossDb, feedlineLossDb, type ConnectorUse, type FeedlineType } from './feedlines.ts';
import { noiseFloorDbm, receptionPerSf, timeOnAirMs, type TimeOnAirParams } from './lora-phy.ts';
import { mismatchLossDb } from './mismatch.ts';

export interface LinkEndInput {
  antenna: Pick<AntennaDesign, 'gainDbi' | 'pattern' | 'typicalVswr'> & { id?: string };
  /** Direction from this end toward the other end: azimuth clockwise from north, elevation above horizon. */
  towardAzimuthDeg?: number;
  towardElevationDeg?: number;
  /** Where a directional antenna points; defaults to the direction of the other end (aimed). */
  boresightAzimuthDeg?: number;
  /** Fixed gain toward the other end instead of the pattern (dBi). */
  antennaGainOverrideDbi?: number;
  feedline?: { feedline: Pick<FeedlineType, 'fit'>; lengthM: number };
  connectors?: ConnectorUse[];
  /** VSWR at the antenna feed; defaults to the design's typical VSWR. */
  vswr?: number;
  /** Anything else lost on this side (body, enclosure, splitter), dB. */
  otherLossesDb?: number;
}

export interface LinkBudgetInput {
  frequencyMhz: number;
  bandwidthKhz: number;
  /** Basic transmission loss of the path (free space, P.1812 …), dB. */
  pathLossDb: number;
  transmitter: LinkEndInput & { powerDbm: number };
  receiver: LinkEndInput & { noiseFigureDb?: number };
  /** Margin that counts as reliable (fade margin), dB; default 10 dB (common practice). */
  targetMarginDb?: number;
  spreadingFactors?: number[];
  /** Band plan (object or id) for the legal, duty-cycle and dwell-time checks. */
  bandPlan?: BandPlan | string;
  /** The frame a node sends, for time on air, messages per hour and dwell time. */
  frame?: Omit<TimeOnAirParams, 'spreadingFactor' | 'bandwidthKhz'>;
}

export interface LinkEndLosses {
  feedlineLossDb: number;
  connectorLossDb: number;
  mismatchLossDb: number;
  otherLossesDb: number;
  totalLossDb: number;
  /** Gain toward the other end, dBi. */
  antennaGainDbi: number;
  /** Peak gain of the antenna, dBi. */
  antennaPeakGainDbi: number;
}

export interface SfBudget {
  spreadingFactor: number;
  snrFloorDb: number;
  sensitivityDbm: number;
  snrDb: number;
  marginDb: number;
  meetsTarget: boolean;
  timeOnAirMs: number | null;
  /** Messages per hour the duty-cycle rule allows at this SF and frame; null = no duty-cycle rule (or no frame). */
  messagesPerHour: number | null;
  /** Whether one frame stays within the dwell-time limit; null = no limit (or no frame). */
  dwellOk: boolean | null;
}

export interface LegalCheck {
  bandPlanId: string;
  /** Governing limit; null when the channel lies in no sub-band of the plan. */
  limitId: string | null;
  source: string | null;
  maxEirpDbm: number | null;
  maxErpDbm: number | null;
  /** Conducted limit after any antenna-gain reduction (47 CFR §15.247(b)(4)). */
  maxConductedDbm: number | null;
  /** Radiated power in the antenna's strongest direction, as the rule counts it. */
  peakEirpDbm: number;
  peakErpDbm: number;
  conductedPowerDbm: number;
  /** dB over the radiated (or conducted) limit; ≤ 0 when legal. */
  excessDb: number | null;
  withinLimit: boolean;
  dutyCyclePercent: number | null;
  dwellTimeMs: number | null;
  listenBeforeTalk: boolean;
  warnings: string[];
}

export interface LinkBudget {
  frequencyMhz: number;
  bandwidthKhz: number;
  pathLossDb: number;
  transmitter: LinkEndLosses & { powerDbm: number; eirpDbm: number; erpDbm: number; peakEirpDbm: number };
  receiver: LinkEndLosses & { noiseFigureDb: number; noiseFloorDbm: number };
  /** Signal power at the receiver input (what the radio reports as RSSI), dBm. */
  receivedPowerDbm: number;
  snrDb: number;
  targetMarginDb: number;
  perSf: SfBudget[];
  /** Fastest SF meeting the target margin (and the dwell limit); null when none does. */
  bestSf: number | null;
  legal: LegalCheck | null;
  warnings: string[];
}

export class LinkBudgetError extends Error {}

/** Losses and gains of one end of a link (feedline, connectors, mismatch, antenna); also used by transmitter.ts. */
export function endLosses(end: LinkEndInput, frequencyMhz: number): LinkEndLosses {
  const feedlineDb = end.feedline ? feedlineLossDb(end.feedline.feedline, frequencyMhz, end.feedline.lengthM) : 0;
  const connectorDb = end.connectors ? connectorLossDb(end.connectors) : 0;
  const mismatchDb = mismatchLossDb(end.vswr ?? end.antenna.typicalVswr);
  const otherDb = end.otherLossesDb ?? 0;
  if (!Number.isFinite(otherDb) || otherDb < 0) throw new LinkBudgetError(`otherLossesDb must be 0 dB or more (got ${otherDb})`);
  const azimuth = end.towardAzimuthDeg ?? 0;
  const gain =
    end.antennaGainOverrideDbi ?? antennaGainDbi(end.antenna, azimuth, end.towardElevationDeg ?? 0, end.boresightAzimuthDeg ?? azimuth);
  return {
    feedlineLossDb: feedlineDb,
    connectorLossDb: connectorDb,
    mismatchLossDb: mismatchDb,
    otherLossesDb: otherDb,
    totalLossDb: feedlineDb + connectorDb + mismatchDb + otherDb,
    antennaGainDbi: gain,
    antennaPeakGainDbi: end.antenna.gainDbi,
  };
}

/** Messages per hour a duty-cycle rule allows for frames of `timeOnAirMs`: ⌊3600 s·DC / ToA⌋. */
export function messagesPerHour(timeOnAirMs: number, dutyCyclePercent: number | null): number | null {
  if (dutyCyclePercent === null) return null;
  if (!(timeOnAirMs > 0)) throw new LinkBudgetError('time on air must be positive');
  return Math.floor((3_600_000 * (dutyCyclePercent / 100)) / timeOnAirMs + 1e-9);
}

/** Shortest wait between frame starts (s) under a duty cycle: ToA / DC. */
export function minimumIntervalS(timeOnAirMs: number, dutyCyclePercent: number | null): number | null {
  if (dutyCyclePercent === null) return null;
  return timeOnAirMs / 1000 / (dutyCyclePercent / 100);
}

/** Whether a frame fits the dwell-time limit (null when there is none). */
export function dwellTimeOk(timeOnAirMs: number, dwellTimeMs: number | null): boolean | null {
  return dwellTimeMs === null ? null : timeOnAirMs <= dwellTimeMs;
}

export interface LegalCheckInput {
  frequencyMhz: number;
  bandwidthKhz: number;
  conductedPowerDbm: number;
  /** EIRP in the antenna's strongest direction, dBm. */
  peakEirpDbm: number;
  antennaPeakGainDbi: number;
}

/** Checks radiated (and conducted) power against the band-plan limit of the channel. */
export function legalCheck(plan: BandPlan, input: LegalCheckInput): LegalCheck {
  const limit: BandLimit | undefined = limitForChannel(plan, input.frequencyMhz, input.bandwidthKhz);
  const peakErpDbm = input.peakEirpDbm - DIPOLE_GAIN_DBI;
  const warnings: string[] = [];
  if (!limit) {
    const halfMhz = input.bandwidthKhz / 2000;
    const inRange = plan.limits.some((l) => input.frequencyMhz - halfMhz >= l.fromMhz && input.frequencyMhz + halfMhz <= l.toMhz);
    warnings.push(
      inRange
        ? `no limit of ${plan.name} covers a ${input.bandwidthKhz} kHz emission at ${input.frequencyMhz} MHz (${plan.limits.map((l) => l.name).join('; ')})`
        : `${input.frequencyMhz} MHz with ${input.bandwidthKhz} kHz bandwidth lies in no sub-band of ${plan.name} (${[...new Set(plan.limits.map((l) => `${l.fromMhz}–${l.toMhz} MHz`))].join(', ')}): transmitting there is not allowed by this plan`,
    );
    return {
      bandPlanId: plan.id, limitId: null, source: null, maxEirpDbm: null, maxErpDbm: null, maxConductedDbm: null,
      peakEirpDbm: input.peakEirpDbm, peakErpDbm, conductedPowerDbm: input.conductedPowerDbm, excessDb: null,
      withinLimit: false, dutyCyclePercent: null, dwellTimeMs: null, listenBeforeTalk: false, warnings,
    };
  }
  const maxEirp = limitEirpDbm(limit);
  let maxConducted: number | null = null;
  if (limit.maxConductedDbm !== undefined) {
    const allowance = limit.antennaGainAllowanceDbi;
    maxConducted = limit.maxConductedDbm - (allowance !== undefined ? Math.max(0, input.antennaPeakGainDbi - allowance) : 0);
  }
  const excesses: number[] = [];
  if (maxEirp !== null) excesses.push(input.peakEirpDbm - maxEirp);
  if (maxConducted !== null) excesses.push(input.conductedPowerDbm - maxConducted);
  const excessDb = excesses.length > 0 ? Math.max(...excesses) : null;
  const withinLimit = excessDb === null || excessDb <= 1e-9;
  if (maxEirp !== null && input.peakEirpDbm > maxEirp + 1e-9) {
    const stated = limit.maxErpDbm !== undefined ? `${peakErpDbm.toFixed(1)} dBm ERP exceeds the ${limit.maxErpDbm} dBm ERP limit` : `${input.peakEirpDbm.toFixed(1)} dBm EIRP exceeds the ${limit.maxEirpDbm} dBm EIRP limit`;
    warnings.push(`${stated} of ${plan.name} ${limit.name} by ${(input.peakEirpDbm - maxEirp).toFixed(1)} dB (${limit.source}): lower the transmit power or use a lower-gain antenna`);
  }
  if (maxConducted !== null && input.conductedPowerDbm > maxConducted + 1e-9) {
    warnings.push(
      `${input.conductedPowerDbm.toFixed(1)} dBm conducted exceeds the ${maxConducted.toFixed(1)} dBm conducted limit${maxConducted < (limit.maxConductedDbm ?? maxConducted) ? ` (reduced for ${input.antennaPeakGainDbi} dBi antenna gain above ${limit.antennaGainAllowanceDbi} dBi)` : ''} (${limit.source})`,
    );
  }
  if (limit.listenBeforeTalk) warnings.push(`${plan.name} requires listen-before-talk on this channel`);
  return {
    bandPlanId: plan.id,
    limitId: limit.id,
    source: limit.source,
    maxEirpDbm: maxEirp,
    maxErpDbm: maxEirp === null ? null : maxEirp - DIPOLE_GAIN_DBI,
    maxConductedDbm: maxConducted,
    peakEirpDbm: input.peakEirpDbm,
    peakErpDbm,
    conductedPowerDbm: input.conductedPowerDbm,
    excessDb,
    withinLimit,
    dutyCyclePercent: limit.dutyCyclePercent,
    dwellTimeMs: limit.dwellTimeMs,
    listenBeforeTalk: limit.listenBeforeTalk === true,
    warnings,
  };
}

/** The full budget; see the module comment for the relations. */
export function computeLinkBudget(input: LinkBudgetInput): LinkBudget {
  const { frequencyMhz, bandwidthKhz, pathLossDb } = input;
  if (!(frequencyMhz > 0)) throw new LinkBudgetError(`frequencyMhz must be positive (got ${frequencyMhz})`);
  if (!(bandwidthKhz > 0)) throw new LinkBudgetError(`bandwidthKhz must be positive (got ${bandwidthKhz})`);
  if (!Number.isFinite(pathLossDb)) throw new LinkBudgetError(`pathLossDb must be a finite number (got ${pathLossDb})`);
  if (!Number.isFinite(input.transmitter.powerDbm)) throw new LinkBudgetError('transmitter.powerDbm must be a finite number');
  const targetMarginDb = input.targetMarginDb ?? 10;
  const noiseFigureDb = input.receiver.noiseFigureDb ?? 6;
  const spreadingFactors = input.spreadingFactors ?? [7, 8, 9, 10, 11, 12];

  const tx = endLosses(input.transmitter, frequencyMhz);
  const rx = endLosses(input.receiver, frequencyMhz);
  const radiatedDbm = input.transmitter.powerDbm - tx.totalLossDb;
  const eirpDbm = radiatedDbm + tx.antennaGainDbi;
  const peakEirpDbm = radiatedDbm + tx.antennaPeakGainDbi;
  const receivedPowerDbm = eirpDbm - pathLossDb + rx.antennaGainDbi - rx.totalLossDb;
  const floorDbm = noiseFloorDbm(bandwidthKhz, noiseFigureDb);

  const plan = input.bandPlan === undefined ? undefined : typeof input.bandPlan === 'string' ? findBandPlan(input.bandPlan) : input.bandPlan;
  const legal = plan
    ? legalCheck(plan, { frequencyMhz, bandwidthKhz, conductedPowerDbm: input.transmitter.powerDbm, peakEirpDbm, antennaPeakGainDbi: tx.antennaPeakGainDbi })
    : null;
  const warnings = legal ? [...legal.warnings] : [];

  const perSf: SfBudget[] = receptionPerSf(receivedPowerDbm, bandwidthKhz, noiseFigureDb, spreadingFactors).map((r) => {
    const frame = input.frame;
    const toa = frame
      ? timeOnAirMs({
          spreadingFactor: r.spreadingFactor,
          bandwidthKhz,
          codingRate: frame.codingRate,
          payloadBytes: frame.payloadBytes,
          preambleSymbols: frame.preambleSymbols,
          explicitHeader: frame.explicitHeader,
          crcOn: frame.crcOn,
          ldro: frame.ldro,
        }).timeOnAirMs
      : null;
    return {
      spreadingFactor: r.spreadingFactor,
      snrFloorDb: r.snrFloorDb,
      sensitivityDbm: r.sensitivityDbm,
      snrDb: r.snrDb,
      marginDb: r.marginDb,
      meetsTarget: r.marginDb >= targetMarginDb,
      timeOnAirMs: toa,
      messagesPerHour: toa !== null && legal ? messagesPerHour(toa, legal.dutyCyclePercent) : null,
      dwellOk: toa !== null && legal ? dwellTimeOk(toa, legal.dwellTimeMs) : null,
    };
  });
  // Fastest usable SF = the lowest one (shortest time on air), whatever order the SFs were given in.
  let bestSf: number | null = null;
  for (const s of perSf) if (s.meetsTarget && s.dwellOk !== false && (bestSf === null || s.spreadingFactor < bestSf)) bestSf = s.spreadingFactor;
  if (bestSf === null) warnings.push(`no spreading factor reaches the ${targetMarginDb} dB target margin${perSf.some((s) => s.dwellOk === false) ? ' within the dwell-time limit' : ''}`);
  const dwellFails = perSf.filter((s) => s.dwellOk === false).map((s) => `SF${s.spreadingFactor}`);
  if (dwellFails.length > 0 && legal) warnings.push(`frame exceeds the ${legal.dwellTimeMs} ms dwell time at ${dwellFails.join(', ')}`);

  return {
    frequencyMhz,
    bandwidthKhz,
    pathLossDb,
    // Fields written out rather than spread: keeps this hot path (coverage, planning) lean.
    transmitter: {
      feedlineLossDb: tx.feedlineLossDb,
      connectorLossDb: tx.connectorLossDb,
      mismatchLossDb: tx.mismatchLossDb,
      otherLossesDb: tx.otherLossesDb,
      totalLossDb: tx.totalLossDb,
      antennaGainDbi: tx.antennaGainDbi,
      antennaPeakGainDbi: tx.antennaPeakGainDbi,
      powerDbm: input.transmitter.powerDbm,
      eirpDbm,
      erpDbm: eirpDbm - DIPOLE_GAIN_DBI,
      peakEirpDbm,
    },
    receiver: {
      feedlineLossDb: rx.feedlineLossDb,
      connectorLossDb: rx.connectorLossDb,
      mismatchLossDb: rx.mismatchLossDb,
      otherLossesDb: rx.otherLossesDb,
      totalLossDb: rx.totalLossDb,
      antennaGainDbi: rx.antennaGainDbi,
      antennaPeakGainDbi: rx.antennaPeakGainDbi,
      noiseFigureDb,
      noiseFloorDbm: floorDbm,
    },
    receivedPowerDbm,
    snrDb: receivedPowerDbm - floorDbm,
    targetMarginDb,
    perSf,
    bestSf,
    legal,
    warnings,
  };
}
