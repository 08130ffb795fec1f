// Capacity use cases: a plan's network load from the link engine's fleet
// results (which gateways hear each node, at which SF and RSSI — the one link
// budget, never a second), and the stand-alone scenario `earshot capacity`
// reads. Both call the pure engine in server/capacity/.
import { z } from 'zod';
import type { LinkEngine, NodeLinksOutcome, PlanContext } from '../jobs/link-engine.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { deliveryProbability } from '../planning/probability.ts';
import { resolveBandPlan, uplinkSfsFor } from '../planning/settings.ts';
import { UnknownBandPlanError, type BandPlan } from '../radio/band-plans.ts';
import { frameTimeOnAirMs, uplinkChannelCount } from '../capacity/airtime.ts';
import { assessCapacity, CAPACITY_MODELS, CapacityInputError, DEFAULT_DURATION_S, DEFAULT_SEED, type CapacityAssessment, type CapacityModel, type CapacityNodeInput } from '../capacity/assess.ts';
import { DEFAULT_CAPTURE_THRESHOLD_DB } from '../capacity/interference.ts';
import { AppError } from './errors.ts';

export { CAPACITY_MODELS, type CapacityModel };

/** Input the caller must fix (names the field); kind invalid_input → 400 in the API, exit 2 in the CLI. */
export class CapacityRequestError extends AppError {
  constructor(message: string) {
    super('invalid_input', 'invalid_input', message);
  }
}

/** The engine's own input errors, as this layer's error kind. */
function assess(...args: Parameters<typeof assessCapacity>): CapacityAssessment {
  try {
    return assessCapacity(...args);
  } catch (error) {
    if (error instanceof CapacityInputError) throw new CapacityRequestError(error.message);
    throw error;
  }
}

/** Most nodes a stand-alone scenario may describe (keeps one CLI run within seconds). */
export const MAX_SCENARIO_NODES = 200_000;

/** Short cautions shown with every capacity answer. */
export const CAPACITY_CAUTIONS = [
  'Duty-cycle and dwell-time figures are planning figures from the band plan, not legal advice: the regulator of the country of use has the last word, and network servers may impose tighter limits.',
  'Collision figures assume Poisson traffic spread evenly over the channels; synchronised reporting (every node at the top of the hour) collides far more.',
];

/** Options of a capacity run (API query and CLI input share them). */
export interface CapacityRunOptions {
  model: CapacityModel;
  durationS?: number;
  seed?: number;
  captureThresholdDb?: number;
  /** Share of uplinks that ask for an acknowledgement, 0–1 (default: plan setting `confirmedUplinkShare`, else 0). */
  confirmedShare?: number;
  /** What-if: every node's reporting rate × this factor (default 1). */
  rateScale?: number;
  /** What-if: uplink channels (default: plan setting `uplinkChannels`, else the band plan's default channels). */
  channels?: number;
}

function planSetting(plan: PlanRow, key: string): unknown {
  const raw = plan.settings;
  return raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Record<string, unknown>)[key] : undefined;
}

/**
 * Uplink channels for a plan: plan setting `uplinkChannels` (1–64) where set, else the band
 * plan's default channels that carry the plan's SFs at its bandwidth (at least 1).
 */
export function planUplinkChannels(ctx: PlanContext, warnings: string[]): number {
  const value = planSetting(ctx.plan, 'uplinkChannels');
  if (value !== undefined && value !== null) {
    if (typeof value === 'number' && Number.isInteger(value) && value >= 1 && value <= 64) return value;
    warnings.push('plan setting uplinkChannels must be a whole number from 1 to 64; using the band plan’s default channels');
  }
  const { bandPlan, bandwidthKhz, uplinkSfs } = ctx.settings;
  return Math.max(1, ...uplinkSfs.map((entry) => uplinkChannelCount(bandPlan, entry.sf, bandwidthKhz)));
}

export interface PlanCapacity {
  planId: string;
  model: CapacityModel;
  durationS: number | null;
  seed: number | null;
  channels: number;
  rateScale: number;
  confirmedShare: number;
  captureThresholdDb: number;
  rules: { dutyCyclePercent: number | null; dwellTimeMs: number | null; dwellWindowS: number | null };
  gateways: Array<Omit<CapacityAssessment['gateways'][number], 'gateway'> & { gatewayId: string; gatewayName: string }>;
  nodes: Array<Omit<CapacityAssessment['nodes'][number], 'node' | 'gateways' | 'sf'> & { nodeId: string; nodeName: string; sf: number | null; gatewaysHeard: number }>;
  totals: CapacityAssessment['totals'];
  method: string;
  sources: string[];
  cautions: string[];
  warnings: string[];
}

/**
 * What the capacity model needs of one node of the fleet: its input (null when no gateway is
 * within range, so it carries no load) and the names the answer shows. Taken from an outcome as
 * the fleet streams by (LinkEngine.fleetEach), so the outcomes themselves need not be kept.
 */
export interface CapacityNodeEntry {
  input: CapacityNodeInput | null;
  nodeId: string;
  nodeName: string;
  messagesPerHour: number;
  warnings: string[];
}

/** One node's fleet outcome turned into the capacity engine's plain input. */
export function capacityEntryOf(ctx: PlanContext, outcome: NodeLinksOutcome, rateScale: number, gatewayIndex: ReadonlyMap<string, number> = new Map(ctx.gateways.map((g, k) => [g.row.id, k]))): CapacityNodeEntry {
  const row = outcome.node.row;
  const messagesPerHour = row.messagesPerHour * rateScale;
  const best = outcome.links[0];
  // One object per node, fields written out (an object spread's copy outlived young collections; see server/planning/link.ts).
  if (!best) return { nodeId: row.id, nodeName: row.name, messagesPerHour, warnings: [...outcome.node.warnings], input: null };
  // The node sends at the SF its best link uses (the network's data-rate choice); at each
  // gateway the link engine's budget at that SF gives margin, RSSI and delivery probability.
  const sf = best.usedSf;
  const links = [];
  for (const link of outcome.links) {
    const index = gatewayIndex.get(link.gatewayId);
    if (index === undefined) continue;
    const atSf = link.perSf.find((e) => e.sf === sf);
    const marginDb = atSf ? atSf.marginDb : link.marginDb;
    links.push({ gateway: index, rssiDbm: link.rssiDbm, linkProbability: deliveryProbability(marginDb, link.sigmaDb), heard: marginDb >= 0 });
  }
  return { nodeId: row.id, nodeName: row.name, messagesPerHour, warnings: [...outcome.node.warnings], input: { sf, bandwidthKhz: ctx.settings.bandwidthKhz, timeOnAirMs: best.timeOnAirMs, messagesPerHour, links } };
}

/** The rate scale a capacity request asks for (1 = the nodes' own rates). */
export function capacityRateScale(options: CapacityRunOptions): number {
  return options.rateScale ?? 1;
}

/** A plan's capacity: the fleet through the link engine, then the chosen model. */
export async function planCapacity(engine: LinkEngine, ctx: PlanContext, options: CapacityRunOptions): Promise<PlanCapacity> {
  const rateScale = capacityRateScale(options);
  const gatewayIndex = new Map(ctx.gateways.map((g, k) => [g.row.id, k]));
  const entries: CapacityNodeEntry[] = [];
  await engine.fleetEach(ctx, (outcome) => void entries.push(capacityEntryOf(ctx, outcome, rateScale, gatewayIndex)));
  return capacityFromEntries(ctx, entries, options);
}

/** The chosen capacity model over the fleet's entries (capacityEntryOf of every node, in fleet order). */
export function capacityFromEntries(ctx: PlanContext, entries: readonly CapacityNodeEntry[], options: CapacityRunOptions): PlanCapacity {
  const warnings = [...ctx.warnings];
  const rateScale = capacityRateScale(options);
  const settingShare = planSetting(ctx.plan, 'confirmedUplinkShare');
  const confirmedShare = options.confirmedShare ?? (typeof settingShare === 'number' && settingShare >= 0 && settingShare <= 1 ? settingShare : 0);
  const channels = options.channels ?? planUplinkChannels(ctx, warnings);
  const inputs: CapacityNodeInput[] = [];
  const used: CapacityNodeEntry[] = [];
  const skipped: CapacityNodeEntry[] = [];
  for (const entry of entries) {
    if (entry.input) {
      inputs.push(entry.input);
      used.push(entry);
    } else skipped.push(entry);
  }
  const result = assess(
    { bandPlan: ctx.settings.bandPlan, channels, gatewayCount: ctx.gateways.length, nodes: inputs, confirmedShare, gatewayCorrelation: ctx.settings.gatewayCorrelation },
    { model: options.model, durationS: options.durationS, seed: options.seed, captureThresholdDb: options.captureThresholdDb },
  );
  if (skipped.length > 0) warnings.push(`${skipped.length} node(s) have no gateway within range and carry no load`);
  if (ctx.gateways.length === 0) warnings.push('no gateways in this plan: nothing can be received');
  const nodes: PlanCapacity['nodes'] = result.nodes.map((node) => {
    const entry = used[node.node];
    const { node: _index, gateways, ...rest } = node;
    return {
      nodeId: entry.nodeId,
      nodeName: entry.nodeName,
      ...rest,
      gatewaysHeard: gateways.filter((g) => g.linkProbability >= 0.5).length,
      warnings: [...entry.warnings, ...node.warnings],
    };
  });
  for (const entry of skipped) {
    nodes.push({
      nodeId: entry.nodeId,
      nodeName: entry.nodeName,
      sf: null,
      timeOnAirMs: 0,
      messagesPerHour: entry.messagesPerHour,
      successProbability: null,
      linkDeliveryProbability: 0,
      deliveryRatio: 0,
      maxMessagesPerHourAtDutyCycle: null,
      maxMessagesPerHourAtDwell: null,
      dwellOk: null,
      overBudget: false,
      gatewaysHeard: 0,
      warnings: [...entry.warnings, 'no gateway within range'],
    });
  }
  return {
    planId: ctx.plan.id,
    model: result.model,
    durationS: result.durationS,
    seed: result.seed,
    channels,
    rateScale,
    confirmedShare,
    captureThresholdDb: result.captureThresholdDb,
    rules: { dutyCyclePercent: result.rules.dutyCyclePercent, dwellTimeMs: result.rules.dwellTimeMs, dwellWindowS: result.rules.dwellWindowS },
    gateways: result.gateways.map(({ gateway, ...rest }) => ({ gatewayId: ctx.gateways[gateway].row.id, gatewayName: ctx.gateways[gateway].row.name, ...rest })),
    nodes,
    totals: { ...result.totals, nodes: nodes.length },
    method: result.method,
    sources: result.sources,
    cautions: [...CAPACITY_CAUTIONS, ...ctx.settings.bandPlan.cautions.slice(0, 1)],
    warnings,
  };
}

// ---- `earshot capacity --input -`: a stand-alone scenario of node groups at one gateway ----

const count = (max: number) => z.number({ error: 'must be a number' }).int('must be a whole number').min(0, 'must be ≥ 0').max(max, `must be ≤ ${max}`);

export const scenarioGroupSchema = z.strictObject({
  sf: z.number({ error: 'must be a number' }).int('must be a whole number').min(5, 'must be from 5 to 12').max(12, 'must be from 5 to 12'),
  bandwidthKhz: z.number({ error: 'must be a number' }).positive('must be > 0').max(500, 'must be ≤ 500 kHz'),
  payloadBytes: count(242),
  messagesPerHour: z.number({ error: 'must be a number' }).min(0, 'must be ≥ 0 (a negative rate means nothing)').max(3600, 'must be ≤ 3600'),
  nodes: count(MAX_SCENARIO_NODES).min(1, 'must be ≥ 1'),
  /** Predicted RSSI of the group at the gateway, dBm (default −100: one level for all; matters for `capture`). */
  rssiDbm: z.number({ error: 'must be a number' }).min(-200, 'must be ≥ -200 dBm').max(0, 'must be ≤ 0 dBm').optional(),
});

export const capacityScenarioSchema = z.strictObject({
  bandPlan: z.string({ error: 'must be a band plan id such as eu-863-870' }).min(1, 'must not be empty'),
  channels: z.number({ error: 'must be a number' }).int('must be a whole number').min(1, 'must be ≥ 1').max(64, 'must be ≤ 64').optional(),
  model: z.enum(CAPACITY_MODELS, { error: `must be one of ${CAPACITY_MODELS.join(', ')}` }),
  durationS: z.number({ error: 'must be a number' }).positive('must be > 0').max(604_800, 'must be ≤ 604800 s').optional(),
  seed: z.number({ error: 'must be a number' }).int('must be a whole number').optional(),
  confirmedShare: z.number({ error: 'must be a number' }).min(0, 'must be within 0–1').max(1, 'must be within 0–1').optional(),
  captureThresholdDb: z.number({ error: 'must be a number' }).min(-10, 'must be ≥ -10 dB').max(30, 'must be ≤ 30 dB').optional(),
  groups: z.array(scenarioGroupSchema, { error: 'must be a list of groups' }).min(1, 'must list at least one group').max(1000, 'must list at most 1000 groups'),
});
export type CapacityScenarioInput = z.infer<typeof capacityScenarioSchema>;

/** Turns a zod failure into "field.path: rule". */
export function describeScenarioError(error: z.ZodError): string {
  const issue = error.issues[0];
  const path = issue.path.map((part) => (typeof part === 'number' ? `[${part}]` : `.${String(part)}`)).join('').replace(/^\./, '');
  return `${path || 'input'}: ${issue.message}`;
}

export interface ScenarioAnswer {
  bandPlan: string;
  channels: number;
  model: CapacityModel;
  durationS: number | null;
  seed: number | null;
  captureThresholdDb: number;
  confirmedShare: number;
  groups: Array<{
    sf: number;
    bandwidthKhz: number;
    payloadBytes: number;
    nodes: number;
    messagesPerHour: number;
    timeOnAirMs: number;
    /** This group's offered load on each channel, erlang (λ·T·N / channels). */
    offeredLoadErlang: number;
    /** Load on each channel of all groups sharing this SF and bandwidth, erlang. */
    sfOfferedLoadErlang: number;
    successProbability: number;
    maxMessagesPerHourAtDutyCycle: number | null;
    maxMessagesPerHourAtDwell: number | null;
    dwellOk: boolean | null;
    overBudget: boolean;
    deliveryRatio: number;
    warnings: string[];
  }>;
  gateway: { offeredLoadErlangPerChannel: number[]; offeredLoadErlang: number; downlink: CapacityAssessment['gateways'][number]['downlink'] };
  totals: { nodes: number; transmissions: number | null };
  method: string;
  sources: string[];
  cautions: string[];
}

function scenarioBandPlan(id: string): BandPlan {
  try {
    return resolveBandPlan(id);
  } catch (error) {
    if (error instanceof UnknownBandPlanError) throw new CapacityRequestError(`bandPlan: ${error.message}`);
    throw error;
  }
}

/** The stand-alone scenario: every group heard by one gateway at full link probability. */
export function capacityScenario(raw: unknown): ScenarioAnswer {
  const parsed = capacityScenarioSchema.safeParse(raw);
  if (!parsed.success) throw new CapacityRequestError(describeScenarioError(parsed.error));
  const input = parsed.data;
  const plan = scenarioBandPlan(input.bandPlan);
  let total = 0;
  input.groups.forEach((group, k) => {
    const allowed = uplinkSfsFor(plan, group.bandwidthKhz);
    const entry = allowed.find((a) => a.sf === group.sf);
    if (!entry) throw new CapacityRequestError(`groups[${k}].sf: SF${group.sf} is not an uplink SF of ${plan.id} at ${group.bandwidthKhz} kHz (allowed: ${allowed.map((a) => a.sf).join(', ')})`);
    if (entry.maxAppPayloadBytes !== null && group.payloadBytes > entry.maxAppPayloadBytes)
      throw new CapacityRequestError(`groups[${k}].payloadBytes: ${group.payloadBytes} bytes exceed the ${entry.maxAppPayloadBytes}-byte LoRaWAN maximum at SF${group.sf} in ${plan.id}`);
    total += group.nodes;
  });
  if (total > MAX_SCENARIO_NODES) throw new CapacityRequestError(`groups: ${total} nodes in all, at most ${MAX_SCENARIO_NODES}`);
  const channels = input.channels ?? Math.max(1, ...input.groups.map((g) => uplinkChannelCount(plan, g.sf, g.bandwidthKhz)));
  const nodes: CapacityNodeInput[] = [];
  const groupOf: number[] = [];
  const toas = input.groups.map((g) => frameTimeOnAirMs({ sf: g.sf, bandwidthKhz: g.bandwidthKhz, payloadBytes: g.payloadBytes }));
  input.groups.forEach((group, k) => {
    const links = [{ gateway: 0, rssiDbm: group.rssiDbm ?? -100, linkProbability: 1, heard: true }];
    for (let n = 0; n < group.nodes; n++) {
      nodes.push({ sf: group.sf, bandwidthKhz: group.bandwidthKhz, timeOnAirMs: toas[k], messagesPerHour: group.messagesPerHour, links });
      groupOf.push(k);
    }
  });
  const result = assess(
    { bandPlan: plan, channels, gatewayCount: 1, nodes, confirmedShare: input.confirmedShare },
    { model: input.model, durationS: input.durationS ?? DEFAULT_DURATION_S, seed: input.seed ?? DEFAULT_SEED, captureThresholdDb: input.captureThresholdDb ?? DEFAULT_CAPTURE_THRESHOLD_DB },
  );
  const gateway = result.gateways[0];
  const groups: ScenarioAnswer['groups'] = input.groups.map((group, k) => {
    // Frame-weighted survival over the group (simulation), or the group's common figure (analytic).
    let frames = 0;
    let survived = 0;
    let sumSurvival = 0;
    let sumDelivery = 0;
    let first = -1;
    for (let i = 0; i < nodes.length; i++) {
      if (groupOf[i] !== k) continue;
      if (first < 0) first = i;
      const link = result.nodes[i].gateways[0];
      sumSurvival += link.survival;
      sumDelivery += result.nodes[i].deliveryRatio;
      if (link.frames !== null) {
        frames += link.frames;
        survived += link.survival * link.frames;
      }
    }
    const node = result.nodes[first];
    const sfLoad = gateway.perSf.find((entry) => entry.sf === group.sf && Math.abs(entry.bandwidthKhz - group.bandwidthKhz) < 0.01);
    return {
      sf: group.sf,
      bandwidthKhz: group.bandwidthKhz,
      payloadBytes: group.payloadBytes,
      nodes: group.nodes,
      messagesPerHour: group.messagesPerHour,
      timeOnAirMs: toas[k],
      offeredLoadErlang: (group.nodes * (group.messagesPerHour / 3600) * (toas[k] / 1000)) / channels,
      sfOfferedLoadErlang: sfLoad ? sfLoad.offeredLoadErlangPerChannel : 0,
      successProbability: result.model === 'simulate' && frames > 0 ? survived / frames : sumSurvival / group.nodes,
      maxMessagesPerHourAtDutyCycle: node.maxMessagesPerHourAtDutyCycle,
      maxMessagesPerHourAtDwell: node.maxMessagesPerHourAtDwell,
      dwellOk: node.dwellOk,
      overBudget: node.overBudget,
      deliveryRatio: sumDelivery / group.nodes,
      warnings: node.warnings,
    };
  });
  return {
    bandPlan: plan.id,
    channels,
    model: result.model,
    durationS: result.durationS,
    seed: result.seed,
    captureThresholdDb: result.captureThresholdDb,
    confirmedShare: result.confirmedShare,
    groups,
    gateway: { offeredLoadErlangPerChannel: gateway.offeredLoadErlangPerChannel, offeredLoadErlang: gateway.offeredLoadErlang, downlink: gateway.downlink },
    totals: { nodes: nodes.length, transmissions: result.totals.transmissions },
    method: result.method,
    sources: result.sources,
    cautions: [...CAPACITY_CAUTIONS, ...plan.cautions.slice(0, 1)],
  };
}
