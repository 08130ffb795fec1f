// Link prediction for one node → gateway pair: the path (./path.ts) plus the
// radio budget at every allowed SF, the best (fastest) SF that meets the
// plan's target margin, time on air there, probability of delivery and the
// legal check of the node's EIRP.
import type { AntennaDesign } from '../radio/antennas.ts';
import type { BandPlan } from '../radio/band-plans.ts';
import type { ConnectorUse, FeedlineType } from '../radio/feedlines.ts';
import type { CodingRate } from '../radio/lora-phy.ts';
import { computeLinkBudget, type LegalCheck } from '../radio/link-budget.ts';
import { environmentLoss, type EnvironmentSettings, type NodeEnvironment } from './environment.ts';
import { combinedDeliveryProbability, deliveryProbability } from './probability.ts';
import { planningSpread, type SigmaSource, type SpreadSettings } from './spread.ts';
import { linkStatus, type LinkStatus, type ServiceTarget } from './status.ts';
import { pathAtPlace, type PathPrediction, type PlaceInput } from './path.ts';

export type { LegalCheck };

/** The kit at one end of a link. */
export interface EndKit {
  antenna: Pick<AntennaDesign, 'id' | 'gainDbi' | 'pattern' | 'typicalVswr'>;
  /** Where a directional antenna points, degrees; null = aimed along this path. */
  boresightAzimuthDeg: number | null;
  feedline: Pick<FeedlineType, 'id' | 'fit'> | null;
  feedlineLengthM: number;
  /** Connectors and arrestors in the run. */
  connectors: ConnectorUse[];
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
  /** SFs the band plan allows for uplinks at this bandwidth (and payload), ascending. */
  allowedSfs: readonly number[];
  /** Band plan for the legal, duty-cycle and dwell-time checks. */
  bandPlan: BandPlan;
  targetMarginDb: number;
  /** Inputs of the planning spread σ (./spread.ts). */
  spread: SpreadSettings;
  environment: EnvironmentSettings;
}

export interface SfBudget {
  sf: number;
  sensitivityDbm: number;
  marginDb: number;
  timeOnAirMs: number;
  meetsTarget: boolean;
  /** Messages per hour the duty-cycle rule allows (null = no rule). */
  messagesPerHour: number | null;
  /** Frame within the dwell-time limit (null = no limit). */
  dwellOk: boolean | null;
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
  /** Fastest allowed SF meeting the target margin (and the dwell limit); null when none does. */
  bestSf: number | null;
  /** SF the node would use: bestSf, else the allowed SF with the most margin (adaptive) or the fixed SF. */
  usedSf: number;
  /** Margin at usedSf, dB. */
  marginDb: number;
  timeOnAirMs: number;
  /** The planning spread σ of the received level (./spread.ts), dB, and its parts. */
  sigmaDb: number;
  sigmaSource: SigmaSource;
  sigmaLocationDb: number;
  sigmaModelDb: number;
  /** Calibration bias added to the predicted level, dB (0 without a calibration). */
  calibrationBiasDb: number;
  deliveryProbability: number;
  legal: LegalCheck | null;
  warnings: string[];
}

/**
 * The uplink budget (node transmits, gateway receives) over a predicted path,
 * through the radio room's computeLinkBudget; the node's environment loss
 * (building entry, pit) is added to the path loss.
 */
export function linkBudget(path: PathPrediction, nodeKit: EndKit, gatewayKit: EndKit, node: NodeRadio, gateway: GatewayRadio, settings: LinkRadioSettings): LinkBudget {
  const env = environmentLoss(node.environment, settings.frequencyMhz, path.nodeElevationDeg, settings.environment);
  // Fields written out rather than spread: an object spread here made every link's input an
  // object that outlived young-generation collections (V8's clone path), so a 5,000-node report
  // promoted ~10 MB of them to the old generation (npm run bench -- report, server/report/README.md).
  const s = settings.spread;
  const spread = planningSpread({
    locationWidthM: s.locationWidthM,
    planLocationSigmaDb: s.planLocationSigmaDb,
    planModelSigmaDb: s.planModelSigmaDb,
    calibration: s.calibration,
    frequencyMhz: settings.frequencyMhz,
    nodeAntennaHeightAglM: path.nodeAntennaHeightAglM,
    nodeClutterHeightM: path.nodeClutterHeightM,
    environmentSigmaDb: env.sigmaDb,
  });
  const sfs = node.sfPolicy === 'fixed' && node.fixedSf !== null ? [node.fixedSf] : [...settings.allowedSfs];
  const budget = computeLinkBudget({
    frequencyMhz: settings.frequencyMhz,
    bandwidthKhz: settings.bandwidthKhz,
    // A calibration's bias is added to the predicted level, i.e. taken off the loss.
    pathLossDb: path.basicLossDb + env.lossDb - spread.biasDb,
    transmitter: {
      powerDbm: node.txPowerDbm,
      antenna: nodeKit.antenna,
      towardAzimuthDeg: path.nodeAzimuthDeg,
      towardElevationDeg: path.nodeElevationDeg,
      boresightAzimuthDeg: nodeKit.boresightAzimuthDeg ?? path.nodeAzimuthDeg,
      feedline: nodeKit.feedline && nodeKit.feedlineLengthM > 0 ? { feedline: nodeKit.feedline, lengthM: nodeKit.feedlineLengthM } : undefined,
      connectors: nodeKit.connectors,
    },
    receiver: {
      antenna: gatewayKit.antenna,
      towardAzimuthDeg: path.gatewayAzimuthDeg,
      towardElevationDeg: path.gatewayElevationDeg,
      boresightAzimuthDeg: gatewayKit.boresightAzimuthDeg ?? path.gatewayAzimuthDeg,
      feedline: gatewayKit.feedline && gatewayKit.feedlineLengthM > 0 ? { feedline: gatewayKit.feedline, lengthM: gatewayKit.feedlineLengthM } : undefined,
      connectors: gatewayKit.connectors,
      noiseFigureDb: gateway.noiseFigureDb,
    },
    targetMarginDb: settings.targetMarginDb,
    spreadingFactors: sfs,
    bandPlan: settings.bandPlan,
    frame: { codingRate: settings.codingRate, payloadBytes: node.phyPayloadBytes, preambleSymbols: settings.preambleSymbols },
  });
  const perSf: SfBudget[] = budget.perSf.map((entry) => ({
    sf: entry.spreadingFactor,
    sensitivityDbm: entry.sensitivityDbm,
    marginDb: entry.marginDb,
    timeOnAirMs: entry.timeOnAirMs ?? Number.NaN,
    meetsTarget: entry.meetsTarget,
    messagesPerHour: entry.messagesPerHour,
    dwellOk: entry.dwellOk,
  }));
  // Without an SF meeting the target, an adaptive node falls back to the most robust
  // SF it may use (dwell limit respected); a fixed node stays at its SF.
  const usable = perSf.filter((entry) => entry.dwellOk !== false);
  const fallback = (usable.length > 0 ? usable : perSf).reduce((best, entry) => (entry.marginDb > best.marginDb ? entry : best));
  const used = budget.bestSf !== null ? (perSf.find((entry) => entry.sf === budget.bestSf) as SfBudget) : fallback;
  const sigmaDb = spread.sigmaDb;
  return {
    eirpDbm: budget.transmitter.eirpDbm,
    nodeGainDbi: budget.transmitter.antennaGainDbi,
    gatewayGainDbi: budget.receiver.antennaGainDbi,
    nodeFeedlineLossDb: budget.transmitter.feedlineLossDb + budget.transmitter.connectorLossDb,
    gatewayFeedlineLossDb: budget.receiver.feedlineLossDb + budget.receiver.connectorLossDb,
    nodeMismatchLossDb: budget.transmitter.mismatchLossDb,
    gatewayMismatchLossDb: budget.receiver.mismatchLossDb,
    environmentLossDb: env.lossDb,
    environmentSource: env.source,
    rssiDbm: budget.receivedPowerDbm,
    snrDb: budget.snrDb,
    perSf,
    bestSf: budget.bestSf,
    usedSf: used.sf,
    marginDb: used.marginDb,
    timeOnAirMs: used.timeOnAirMs,
    sigmaDb,
    sigmaSource: spread.sigmaSource,
    sigmaLocationDb: spread.sigmaLocationDb,
    sigmaModelDb: spread.sigmaModelDb,
    calibrationBiasDb: spread.biasDb,
    deliveryProbability: deliveryProbability(used.marginDb, sigmaDb),
    legal: budget.legal,
    warnings: budget.warnings,
  };
}

/**
 * A node link's budget at a place given by its loss and geometry (a coverage cell): the same
 * linkBudget over pathAtPlace, so a cell's margin is a node link's marginDb there.
 */
export function budgetAtPlace(place: PlaceInput, nodeKit: EndKit, gatewayKit: EndKit, node: NodeRadio, gateway: GatewayRadio, settings: LinkRadioSettings): LinkBudget {
  return linkBudget(pathAtPlace(place), nodeKit, gatewayKit, node, gateway, settings);
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
  legal: LegalCheck | null;
  eirpDbm: number;
  /** The planning spread σ (dB): deliveryProbability = Φ(marginDb / sigmaDb). */
  sigmaDb: number;
  sigmaSource: SigmaSource;
  sigmaLocationDb: number;
  sigmaModelDb: number;
  calibrationBiasDb: number;
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
    sigmaSource: budget.sigmaSource,
    sigmaLocationDb: budget.sigmaLocationDb,
    sigmaModelDb: budget.sigmaModelDb,
    calibrationBiasDb: budget.calibrationBiasDb,
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
    warnings: [...path.warnings, ...budget.warnings],
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
