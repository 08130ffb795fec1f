// Link prediction for one node → gateway pair: the path (./path.ts) plus the
// radio budget at every allowed SF, the best (fastest) SF that meets the
// plan's target margin, time on air there, probability of delivery and the
// legal check of the node's EIRP.
import { antennaGainDbi, type AntennaDesign } from '../radio/antennas.ts';
import { feedlineLossDb, type FeedlineType } from '../radio/feedlines.ts';
import { mismatchLossDb } from '../radio/mismatch.ts';
import { receptionPerSf, timeOnAirMs, type CodingRate } from '../radio/lora-phy.ts';
import { environmentLoss, type EnvironmentSettings, type NodeEnvironment } from './environment.ts';
import { combinedDeliveryProbability, combineSigmasDb, deliveryProbability } from './probability.ts';
import { linkStatus, type LinkStatus, type ServiceTarget } from './status.ts';
import type { PathPrediction } from './path.ts';

/** The kit at one end of a link. */
export interface EndKit {
  antenna: Pick<AntennaDesign, 'id' | 'gainDbi' | 'pattern' | 'typicalVswr'>;
  /** Where a directional antenna points, degrees; null = aimed along this path. */
  boresightAzimuthDeg: number | null;
  feedline: Pick<FeedlineType, 'id' | 'fit'> | null;
  feedlineLengthM: number;
  /** Connectors and arrestors in the run, dB. */
  connectorLossDb: number;
}

export interface NodeRadio {
  txPowerDbm: number;
  /** Bytes on air after the LoRa header (application payload + LoRaWAN framing). */
  phyPayloadBytes: number;
  sfPolicy: 'adaptive' | 'fixed';
  fixedSf: number | null;
  environment: NodeEnvironment;
}

export interface GatewayRadio {
  noiseFigureDb: number;
}

export interface LinkRadioSettings {
  frequencyMhz: number;
  bandwidthKhz: number;
  codingRate: CodingRate;
  preambleSymbols: number;
  /** SFs the band plan allows for uplinks at this bandwidth, ascending. */
  allowedSfs: readonly number[];
  /** EIRP limit of the channel, dBm (null = none known). */
  maxEirpDbm: number | null;
  /** Where that limit comes from (regulation section), shown with the check. */
  limitSource: string;
  targetMarginDb: number;
  /** Location variability σ (dB) of the path. */
  locationSigmaDb: number;
  environment: EnvironmentSettings;
}

export interface SfBudget {
  sf: number;
  sensitivityDbm: number;
  marginDb: number;
  timeOnAirMs: number;
  meetsTarget: boolean;
}

export interface LegalCheck {
  ok: boolean;
  eirpDbm: number;
  maxEirpDbm: number | null;
  source: string;
  message: string;
}

export interface LinkBudget {
  eirpDbm: number;
  nodeGainDbi: number;
  gatewayGainDbi: number;
  nodeFeedlineLossDb: number;
  gatewayFeedlineLossDb: number;
  nodeMismatchLossDb: number;
  gatewayMismatchLossDb: number;
  environmentLossDb: number;
  environmentSource: string;
  rssiDbm: number;
  snrDb: number;
  perSf: SfBudget[];
  /** Fastest allowed SF meeting the target margin; null when none does. */
  bestSf: number | null;
  /** SF the node would use: bestSf, else the most robust allowed (adaptive) or the fixed SF. */
  usedSf: number;
  /** Margin at usedSf, dB. */
  marginDb: number;
  timeOnAirMs: number;
  /** σ of the received level (location variability ⊕ environment spread), dB. */
  sigmaDb: number;
  deliveryProbability: number;
  legal: LegalCheck;
}

/** Loss of a feedline run (cable + connectors), dB. */
export function runLossDb(kit: EndKit, frequencyMhz: number): number {
  const cableDb = kit.feedline && kit.feedlineLengthM > 0 ? feedlineLossDb(kit.feedline, frequencyMhz, kit.feedlineLengthM) : 0;
  return cableDb + kit.connectorLossDb;
}

/** The uplink budget (node transmits, gateway receives) over a predicted path. */
export function linkBudget(path: PathPrediction, nodeKit: EndKit, gatewayKit: EndKit, node: NodeRadio, gateway: GatewayRadio, settings: LinkRadioSettings): LinkBudget {
  const f = settings.frequencyMhz;
  const nodeGainDbi = antennaGainDbi(nodeKit.antenna, path.nodeAzimuthDeg, path.nodeElevationDeg, nodeKit.boresightAzimuthDeg ?? path.nodeAzimuthDeg);
  const gatewayGainDbi = antennaGainDbi(gatewayKit.antenna, path.gatewayAzimuthDeg, path.gatewayElevationDeg, gatewayKit.boresightAzimuthDeg ?? path.gatewayAzimuthDeg);
  const nodeFeedlineLossDb = runLossDb(nodeKit, f);
  const gatewayFeedlineLossDb = runLossDb(gatewayKit, f);
  const nodeMismatchLossDb = mismatchLossDb(nodeKit.antenna.typicalVswr);
  const gatewayMismatchLossDb = mismatchLossDb(gatewayKit.antenna.typicalVswr);
  const env = environmentLoss(node.environment, f, path.nodeElevationDeg, settings.environment);
  // EIRP toward the gateway: TX power − feedline − mismatch + gain in that direction.
  const eirpDbm = node.txPowerDbm - nodeFeedlineLossDb - nodeMismatchLossDb + nodeGainDbi;
  const rssiDbm = eirpDbm - path.basicLossDb - env.lossDb + gatewayGainDbi - gatewayFeedlineLossDb - gatewayMismatchLossDb;
  const sfs = node.sfPolicy === 'fixed' && node.fixedSf !== null ? [node.fixedSf] : settings.allowedSfs;
  const reception = receptionPerSf(rssiDbm, settings.bandwidthKhz, gateway.noiseFigureDb, sfs);
  const perSf: SfBudget[] = reception.map((r) => ({
    sf: r.spreadingFactor,
    sensitivityDbm: r.sensitivityDbm,
    marginDb: r.marginDb,
    timeOnAirMs: timeOnAirMs({
      spreadingFactor: r.spreadingFactor,
      bandwidthKhz: settings.bandwidthKhz,
      codingRate: settings.codingRate,
      payloadBytes: node.phyPayloadBytes,
      preambleSymbols: settings.preambleSymbols,
    }).timeOnAirMs,
    meetsTarget: r.marginDb >= settings.targetMarginDb,
  }));
  // Fastest = lowest SF (shortest time on air) that meets the target.
  const best = perSf.find((entry) => entry.meetsTarget) ?? null;
  const used = best ?? perSf[perSf.length - 1];
  const sigmaDb = combineSigmasDb(settings.locationSigmaDb, env.sigmaDb);
  const legal = legalCheck(eirpDbm, settings);
  return {
    eirpDbm,
    nodeGainDbi,
    gatewayGainDbi,
    nodeFeedlineLossDb,
    gatewayFeedlineLossDb,
    nodeMismatchLossDb,
    gatewayMismatchLossDb,
    environmentLossDb: env.lossDb,
    environmentSource: env.source,
    rssiDbm,
    snrDb: reception[0]?.snrDb ?? Number.NaN,
    perSf,
    bestSf: best ? best.sf : null,
    usedSf: used.sf,
    marginDb: used.marginDb,
    timeOnAirMs: used.timeOnAirMs,
    sigmaDb,
    deliveryProbability: deliveryProbability(used.marginDb, sigmaDb),
    legal,
  };
}

function legalCheck(eirpDbm: number, settings: LinkRadioSettings): LegalCheck {
  const max = settings.maxEirpDbm;
  if (max === null) return { ok: true, eirpDbm, maxEirpDbm: null, source: settings.limitSource, message: 'no EIRP limit known for this band plan; check local regulations' };
  const ok = eirpDbm <= max + 1e-9;
  return {
    ok,
    eirpDbm,
    maxEirpDbm: max,
    source: settings.limitSource,
    message: ok
      ? `EIRP ${eirpDbm.toFixed(1)} dBm within the ${max.toFixed(1)} dBm limit`
      : `EIRP ${eirpDbm.toFixed(1)} dBm exceeds the ${max.toFixed(1)} dBm limit by ${(eirpDbm - max).toFixed(1)} dB: lower the TX power or use a lower-gain antenna`,
  };
}

// ---------------------------------------------------------------------------
// One pair, end to end, and the summary over a node's gateways.

/** The serialisable result of one node → gateway link (what the API returns and the cache stores). */
export interface LinkResult {
  gatewayId: string;
  distanceM: number;
  method: string;
  basicLossDb: number;
  freeSpaceLossDb: number;
  lineOfSight: boolean;
  rssiDbm: number;
  snrDb: number;
  marginDb: number;
  bestSf: number | null;
  usedSf: number;
  deliveryProbability: number;
  timeOnAirMs: number;
  legal: LegalCheck;
  eirpDbm: number;
  sigmaDb: number;
  nodeAzimuthDeg: number;
  nodeElevationDeg: number;
  gatewayAzimuthDeg: number;
  gatewayElevationDeg: number;
  nodeGainDbi: number;
  gatewayGainDbi: number;
  nodeFeedlineLossDb: number;
  gatewayFeedlineLossDb: number;
  nodeMismatchLossDb: number;
  gatewayMismatchLossDb: number;
  environmentLossDb: number;
  environmentSource: string;
  perSf: SfBudget[];
  terms: Record<string, number>;
  warnings: string[];
}

/** Flattens a path prediction and its budget into one result. */
export function linkResult(gatewayId: string, path: PathPrediction, budget: LinkBudget): LinkResult {
  return {
    gatewayId,
    distanceM: path.distanceM,
    method: path.method,
    basicLossDb: path.basicLossDb,
    freeSpaceLossDb: path.freeSpaceLossDb,
    lineOfSight: path.lineOfSight,
    rssiDbm: budget.rssiDbm,
    snrDb: budget.snrDb,
    marginDb: budget.marginDb,
    bestSf: budget.bestSf,
    usedSf: budget.usedSf,
    deliveryProbability: budget.deliveryProbability,
    timeOnAirMs: budget.timeOnAirMs,
    legal: budget.legal,
    eirpDbm: budget.eirpDbm,
    sigmaDb: budget.sigmaDb,
    nodeAzimuthDeg: path.nodeAzimuthDeg,
    nodeElevationDeg: path.nodeElevationDeg,
    gatewayAzimuthDeg: path.gatewayAzimuthDeg,
    gatewayElevationDeg: path.gatewayElevationDeg,
    nodeGainDbi: budget.nodeGainDbi,
    gatewayGainDbi: budget.gatewayGainDbi,
    nodeFeedlineLossDb: budget.nodeFeedlineLossDb,
    gatewayFeedlineLossDb: budget.gatewayFeedlineLossDb,
    nodeMismatchLossDb: budget.nodeMismatchLossDb,
    gatewayMismatchLossDb: budget.gatewayMismatchLossDb,
    environmentLossDb: budget.environmentLossDb,
    environmentSource: budget.environmentSource,
    perSf: budget.perSf,
    terms: path.terms,
    warnings: path.warnings,
  };
}

export interface NodeLinkSummary {
  /** Links sorted best first (highest delivery probability, then margin). */
  links: LinkResult[];
  combinedDeliveryProbability: number;
  status: LinkStatus;
  bestGatewayId: string | null;
  bestMarginDb: number | null;
}

/** Combines a node's links: probability that at least one gateway hears it, and its status. */
export function summariseNodeLinks(links: readonly LinkResult[], target: ServiceTarget, correlation = 0): NodeLinkSummary {
  const sorted = [...links].sort((a, b) => b.deliveryProbability - a.deliveryProbability || b.marginDb - a.marginDb);
  const combined = combinedDeliveryProbability(sorted.map((link) => link.deliveryProbability), correlation);
  const best = sorted[0] ?? null;
  const bestMarginDb = best ? best.marginDb : null;
  return {
    links: sorted,
    combinedDeliveryProbability: combined,
    status: linkStatus(bestMarginDb, combined, target),
    bestGatewayId: best ? best.gatewayId : null,
    bestMarginDb,
  };
}
