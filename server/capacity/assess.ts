// One call for a fleet's capacity: the load each gateway carries per SF and
// channel, each frame's chance of surviving collisions (aloha / capture /
// simulate), each node's duty-cycle and dwell budget, and its expected
// delivery ratio: its link delivery probability combined over its gateways
// with each gateway's collision survival for it,
//   delivery = budgetShare · combine_g(p_link,g · s_g)
// where combine is the planning room's "at least one gateway" rule and
// budgetShare the share of its messages the duty-cycle (or dwell) budget lets
// out (1 within budget).
// Plain inputs in, plain outputs out: the API, the CLI and siting call this.
import type { BandPlan } from '../radio/band-plans.ts';
import { combinedDeliveryProbability } from '../planning/probability.ts';
import { ackTimeOnAirMs, airtimeBudget, rx1BandwidthKhz, uplinkRules, type UplinkRules } from './airtime.ts';
import { analyticSurvival, downlinkTerms, heardLoad } from './analytic.ts';
import { DEFAULT_CAPTURE_THRESHOLD_DB, INTER_SF_SOURCE, sirThresholdTable } from './interference.ts';
import { simulate, type SimulationResult } from './simulate.ts';
import { buildTraffic, CapacityInputError, classKey, type CapacityNodeInput, type Traffic } from './traffic.ts';

export { CapacityInputError, type CapacityNodeInput };
export type { CapacityLinkInput } from './traffic.ts';

export const CAPACITY_MODELS = ['aloha', 'capture', 'simulate'] as const;
export type CapacityModel = (typeof CAPACITY_MODELS)[number];

/** Default simulated time, s (one hour of traffic). */
export const DEFAULT_DURATION_S = 3600;
export const DEFAULT_SEED = 1;

export interface CapacityScenario {
  bandPlan: BandPlan;
  /** Uplink channels the load spreads evenly over. */
  channels: number;
  gatewayCount: number;
  nodes: readonly CapacityNodeInput[];
  /** Share of uplinks that ask for an acknowledgement, 0–1 (default 0: unconfirmed uplinks). */
  confirmedShare?: number;
  /** Shadowing correlation between a node's gateways, 0–1 (planning room's rule; default 0). */
  gatewayCorrelation?: number;
}

export interface CapacityOptions {
  model: CapacityModel;
  /** Simulated time, s (simulate only; default 3600). */
  durationS?: number;
  seed?: number;
  captureThresholdDb?: number;
  /** Simulation: duty-cycle time-off after each frame (default true). */
  dutyCycleBackoff?: boolean;
  /** Simulation: collision rule (default `capture`; `aloha` cross-checks the ALOHA formula). */
  simulateRule?: 'aloha' | 'capture';
}

export interface SfLoad {
  sf: number;
  bandwidthKhz: number;
  /** Nodes of this SF the gateway hears. */
  nodes: number;
  offeredLoadErlangPerChannel: number;
  /** Share of the gateway's heard uplink airtime at this SF, 0–1. */
  airtimeShare: number;
  /** Probability a heard frame of this SF is lost to a collision (or to the gateway's own replies). */
  collisionProbability: number;
}

export interface GatewayLoad {
  gateway: number;
  /** Nodes the gateway hears (median margin ≥ 0 at their SF). */
  nodes: number;
  /** Offered uplink load of each channel, erlang. */
  offeredLoadErlangPerChannel: number[];
  /** Sum over the channels, erlang. */
  offeredLoadErlang: number;
  perSf: SfLoad[];
  downlink: {
    /** Replies the confirmed uplinks ask of this gateway, per hour. */
    demandedMessagesPerHour: number;
    /** Replies it sends within its duty cycle (simulation: the ones it sent), per hour. */
    messagesPerHour: number;
    /** Share of the time the gateway transmits (and hears nothing), 0–1. */
    airtimeShare: number;
    dutyCyclePercent: number | null;
    /** The replies asked of it would exceed the gateway's duty cycle. */
    overDutyCycle: boolean;
    /** Replies it cannot send (busy or over its duty cycle), per hour. */
    repliesDroppedPerHour: number;
  };
}

export interface NodeCapacity {
  node: number;
  sf: number;
  timeOnAirMs: number;
  messagesPerHour: number;
  /** Collision survival at the node's best gateway; null when no gateway has a link to it. */
  successProbability: number | null;
  /** Link-only figure: at least one gateway receives (collisions aside). */
  linkDeliveryProbability: number;
  deliveryRatio: number;
  maxMessagesPerHourAtDutyCycle: number | null;
  maxMessagesPerHourAtDwell: number | null;
  dwellOk: boolean | null;
  overBudget: boolean;
  /** Per linked gateway: link probability, collision survival and (simulation) frames that reached it. */
  gateways: Array<{ gateway: number; linkProbability: number; survival: number; frames: number | null }>;
  warnings: string[];
}

export interface CapacityAssessment {
  model: CapacityModel;
  /** Simulated time and seed (null for the analytic models). */
  durationS: number | null;
  seed: number | null;
  channels: number;
  captureThresholdDb: number;
  confirmedShare: number;
  rules: UplinkRules;
  gateways: GatewayLoad[];
  nodes: NodeCapacity[];
  totals: {
    nodes: number;
    overBudgetNodes: number;
    meanLinkDeliveryProbability: number;
    meanDeliveryRatio: number;
    /** Simulation only: frames sent in the simulated time. */
    transmissions: number | null;
  };
  method: string;
  sources: string[];
}

const METHOD: Record<CapacityModel, string> = {
  aloha: 'pure ALOHA (Abramson 1970): Poisson arrivals, SFs orthogonal, load spread evenly over the uplink channels; survival exp(−Σ λ_j (T_i + T_j)/C) = exp(−2G) for equal frames',
  capture: 'Poisson overlaps as in ALOHA, but an overlapping frame destroys another only below the SIR threshold: co-SF capture and inter-SF rejection, from each node’s predicted RSSI at each gateway',
  simulate: 'seeded discrete-event simulation: Poisson arrivals, uniform channel per frame, the capture rule, duty-cycle time-off, RX1 acknowledgements that make a gateway deaf while it transmits',
};

export function assessCapacity(scenario: CapacityScenario, options: CapacityOptions): CapacityAssessment {
  const confirmedShare = scenario.confirmedShare ?? 0;
  if (!(confirmedShare >= 0 && confirmedShare <= 1)) throw new CapacityInputError(`confirmedShare: must be within 0–1 (got ${confirmedShare})`);
  const correlation = scenario.gatewayCorrelation ?? 0;
  const captureThresholdDb = options.captureThresholdDb ?? DEFAULT_CAPTURE_THRESHOLD_DB;
  if (!Number.isFinite(captureThresholdDb)) throw new CapacityInputError('captureThresholdDb: must be a finite number of dB');
  const durationS = options.durationS ?? DEFAULT_DURATION_S;
  if (options.model === 'simulate' && !(durationS > 0 && durationS <= 7 * 86_400)) throw new CapacityInputError(`durationS: must be more than 0 and at most 604800 s (got ${durationS})`);
  const seed = options.seed ?? DEFAULT_SEED;
  if (!Number.isInteger(seed)) throw new CapacityInputError(`seed: must be a whole number (got ${seed})`);

  const plan = scenario.bandPlan;
  const traffic = buildTraffic(scenario.nodes, scenario.gatewayCount, scenario.channels, (sf, bw) => ackTimeOnAirMs(sf, rx1BandwidthKhz(plan, bw)));
  const rulesByBw = traffic.bandwidthsKhz.map((bw) => uplinkRules(plan, bw));
  const rules = rulesByBw[0] ?? uplinkRules(plan, 125);
  const sirTable = sirThresholdTable(captureThresholdDb);

  // Gateways reply in RX1 on the uplink channel, under the same duty-cycle rule as the nodes.
  const dc = rules.dutyCyclePercent === null ? 0 : rules.dutyCyclePercent / 100;
  const analyticModel = options.model === 'aloha' ? 'aloha' : 'capture';
  const analytic = analyticSurvival(traffic, analyticModel, { confirmedShare, sirTable, gatewayDutyCycle: dc });
  let sim: SimulationResult | null = null;
  if (options.model === 'simulate') {
    sim = simulate(traffic, {
      durationS,
      seed,
      rule: options.simulateRule ?? 'capture',
      sirTable,
      dutyCycle: dc,
      dutyCycleBackoff: options.dutyCycleBackoff,
      gatewayDutyCycle: dc,
      confirmedShare,
    });
  }
  const survival = new Float64Array(analytic.length);
  for (let l = 0; l < survival.length; l++) {
    // A link that carried no simulated frame keeps the analytic figure.
    survival[l] = sim && sim.linkSent[l] > 0 ? sim.linkSurvived[l] / sim.linkSent[l] : analytic[l];
  }

  const nodes = nodeResults(traffic, scenario.nodes, rulesByBw, survival, sim, correlation);
  const gateways = gatewayResults(traffic, survival, sim, durationS, confirmedShare, rules, dc);
  let overBudget = 0;
  let sumLink = 0;
  let sumDelivery = 0;
  for (const node of nodes) {
    if (node.overBudget) overBudget++;
    sumLink += node.linkDeliveryProbability;
    sumDelivery += node.deliveryRatio;
  }
  return {
    model: options.model,
    durationS: sim ? durationS : null,
    seed: sim ? seed : null,
    channels: traffic.channels,
    captureThresholdDb,
    confirmedShare,
    rules,
    gateways,
    nodes,
    totals: {
      nodes: nodes.length,
      overBudgetNodes: overBudget,
      meanLinkDeliveryProbability: nodes.length > 0 ? sumLink / nodes.length : 0,
      meanDeliveryRatio: nodes.length > 0 ? sumDelivery / nodes.length : 0,
      transmissions: sim ? sim.transmissions : null,
    },
    method: METHOD[options.model],
    sources: [
      'N. Abramson, "The ALOHA System — another alternative for computer communications", AFIPS Fall Joint Computer Conference 1970',
      'Semtech SX1276/77/78/79 datasheet §4.1.1.6 (time on air)',
      ...(options.model === 'aloha' ? [] : [INTER_SF_SOURCE]),
      ...rules.sources,
    ],
  };
}

function nodeResults(t: Traffic, inputs: readonly CapacityNodeInput[], rulesByBw: UplinkRules[], survival: Float64Array, sim: SimulationResult | null, correlation: number): NodeCapacity[] {
  const out: NodeCapacity[] = [];
  const products: number[] = [];
  const linkOnly: number[] = [];
  for (let i = 0; i < t.nodeCount; i++) {
    const input = inputs[i];
    const budget = airtimeBudget(rulesByBw[t.bwClass[i]], input.timeOnAirMs, input.messagesPerHour, t.channels);
    products.length = 0;
    linkOnly.length = 0;
    const gateways: NodeCapacity['gateways'] = [];
    let success: number | null = null;
    let bestP = -1;
    for (let l = t.linkStart[i]; l < t.linkStart[i + 1]; l++) {
      const p = t.linkProbability[l];
      const s = survival[l];
      products.push(p * s);
      linkOnly.push(p);
      gateways.push({ gateway: t.linkGateway[l], linkProbability: p, survival: s, frames: sim ? sim.linkSent[l] : null });
      if (p > bestP) {
        bestP = p;
        success = s;
      }
    }
    let budgetShare = 1;
    if (budget.dwellOk === false) budgetShare = 0;
    else if (sim) budgetShare = sim.nodeOffered[i] > 0 ? sim.nodeSent[i] / sim.nodeOffered[i] : 1;
    else {
      const caps = [budget.maxMessagesPerHourAtDutyCycle, budget.maxMessagesPerHourAtDwell].filter((cap): cap is number => cap !== null);
      const cap = caps.length > 0 ? Math.min(...caps) : Infinity;
      if (input.messagesPerHour > cap) budgetShare = cap / input.messagesPerHour;
    }
    out.push({
      node: i,
      sf: t.sf[i],
      timeOnAirMs: input.timeOnAirMs,
      messagesPerHour: input.messagesPerHour,
      successProbability: success,
      linkDeliveryProbability: combinedDeliveryProbability(linkOnly, correlation),
      deliveryRatio: budgetShare * combinedDeliveryProbability(products, correlation),
      maxMessagesPerHourAtDutyCycle: budget.maxMessagesPerHourAtDutyCycle,
      maxMessagesPerHourAtDwell: budget.maxMessagesPerHourAtDwell,
      dwellOk: budget.dwellOk,
      overBudget: budget.overBudget,
      gateways,
      warnings: budget.warnings,
    });
  }
  return out;
}

function gatewayResults(t: Traffic, survival: Float64Array, sim: SimulationResult | null, durationS: number, confirmedShare: number, rules: UplinkRules, gatewayDutyCycle: number): GatewayLoad[] {
  const { load, keys } = heardLoad(t);
  const c = t.channels;
  // Rate-weighted loss per gateway and class over heard links (analytic), or the simulated counts.
  const lossWeight = new Float64Array(t.gatewayCount * keys);
  const rateWeight = new Float64Array(t.gatewayCount * keys);
  const nodesAt = new Uint32Array(t.gatewayCount * keys);
  const heardNodes = new Uint32Array(t.gatewayCount);
  for (let l = 0; l < t.linkNode.length; l++) {
    if (!t.linkHeard[l]) continue;
    const i = t.linkNode[l];
    const g = t.linkGateway[l];
    const k = g * keys + classKey(t.bwClass[i], t.sf[i]);
    nodesAt[k]++;
    heardNodes[g]++;
    lossWeight[k] += t.ratePerS[i] * (1 - survival[l]);
    rateWeight[k] += t.ratePerS[i];
  }
  const dl = downlinkTerms(t, confirmedShare, gatewayDutyCycle);
  const out: GatewayLoad[] = [];
  for (let g = 0; g < t.gatewayCount; g++) {
    const perSf: SfLoad[] = [];
    let total = 0;
    for (let k = 0; k < keys; k++) total += load[g * keys + k];
    for (let k = 0; k < keys; k++) {
      const at = g * keys + k;
      if (nodesAt[at] === 0) continue;
      const simulated = sim && sim.keySent[at] > 0 ? 1 - sim.keySurvived[at] / sim.keySent[at] : null;
      perSf.push({
        sf: k % 13,
        bandwidthKhz: t.bandwidthsKhz[Math.floor(k / 13)],
        nodes: nodesAt[at],
        offeredLoadErlangPerChannel: load[at],
        airtimeShare: total > 0 ? load[at] / total : 0,
        collisionProbability: simulated ?? (rateWeight[at] > 0 ? lossWeight[at] / rateWeight[at] : 0),
      });
    }
    const perChannel: number[] = [];
    for (let ch = 0; ch < c; ch++) perChannel.push(sim ? sim.channelAirtimeS[g * c + ch] / durationS : total);
    const dlShare = sim ? sim.gatewayDownlinkAirtimeS[g] / durationS : dl.load[g];
    const sent = sim ? (sim.gatewayDownlinks[g] * 3600) / durationS : dl.lambda[g] * 3600;
    const demanded = sim ? ((sim.gatewayDownlinks[g] + sim.gatewayRepliesDropped[g]) * 3600) / durationS : dl.demandLambda[g] * 3600;
    out.push({
      gateway: g,
      nodes: heardNodes[g],
      offeredLoadErlangPerChannel: perChannel,
      offeredLoadErlang: perChannel.reduce((sum, v) => sum + v, 0),
      perSf,
      downlink: {
        demandedMessagesPerHour: demanded,
        messagesPerHour: sent,
        airtimeShare: dlShare,
        dutyCyclePercent: rules.dutyCyclePercent,
        overDutyCycle: gatewayDutyCycle > 0 && dl.demandLoad[g] > gatewayDutyCycle + 1e-12,
        repliesDroppedPerHour: Math.max(0, demanded - sent),
      },
    });
  }
  return out;
}
