// The figures of one plan that exports, scenario comparisons and the report all
// show: every node's status, best margin, delivery, gateways heard and kit, the
// counts per status, redundancy, the bill of materials, the named risks and the
// assumptions. Everything comes from the link engine's fleet results (the same
// call the fleet table makes) and the definitions that exist: status
// (server/planning/status.ts), kit price (server/planning/kit-price.ts),
// connectors (server/jobs/link-engine.ts), cautions (server/planning/check.ts).
import type { Database } from '../db/client.ts';
import type { GatewayRow } from '../db/repositories/gateways.ts';
import { listGatewaysForLinks, listNodeKitRows } from '../db/repositories/links.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { latestDoneSitingRun, listSitesForPlan, teamName, type SiteListRow } from '../db/repositories/scenarios.ts';
import { sitingPlanFingerprint } from '../db/repositories/siting-runs.ts';
import type { SitingResult } from './siting.ts';
import type { LinkEngine, NodeLinksOutcome, PlanContext } from '../jobs/link-engine.ts';
import { installCautions } from '../planning/check.ts';
import { capacityEntryOf, capacityFromEntries, type CapacityNodeEntry, type PlanCapacity } from './capacity.ts';
import { gatewayKitPrice, nodeKitPrice } from './kit-price.ts';
import { loadCatalog } from './recommend.ts';
import { describeSpread, planningSpread } from '../planning/spread.ts';
import type { LinkResult } from '../planning/link.ts';
import { STATUS_WORDS, type LinkStatus } from '../planning/status.ts';
import type { KitPrice } from '../planning/kit-price.ts';
import { BomBuilder, DEFAULT_GATEWAY_UNIT_COST_USD, type BillOfMaterials } from '../report/bom.ts';

/** Gateways that hear a node: links with margin ≥ 0 dB at the SF the node uses (the fleet table's `gatewaysHeard`). */
export function gatewaysHeard(links: readonly LinkResult[]): number {
  let n = 0;
  for (const link of links) if (link.marginDb >= 0) n++;
  return n;
}

/** Every link within the band plan's power limit (the fleet table's `legal`). */
export function linksLegal(links: readonly LinkResult[]): boolean {
  return links.every((link) => link.legal === null || link.legal.withinLimit);
}

export interface NodeFigure {
  id: string;
  originId: string | null;
  name: string;
  lat: number;
  lon: number;
  deviceType: string;
  environment: string;
  installStatus: string;
  status: LinkStatus;
  bestMarginDb: number | null;
  combinedDeliveryProbability: number;
  bestGatewayId: string | null;
  bestGatewayName: string | null;
  rssiDbm: number | null;
  snrDb: number | null;
  distanceM: number | null;
  sf: number | null;
  timeOnAirMs: number | null;
  gatewaysHeard: number;
  legal: boolean;
  messagesPerHour: number;
  /** Messages per hour the band plan's duty-cycle rule allows at the SF used (null = no rule). */
  dutyCycleMessagesPerHour: number | null;
  overDutyCycle: boolean;
  /** The node's kit and its one price (nodeKitPrice: the installer view's and visit sheet's figure). */
  kit: { antennaDesignId: string; antennaName: string; antennaHeightAglM: number; feedlineId: string | null; feedlineName: string | null; feedlineLengthM: number; mastOptionId: string | null; mastName: string | null; costUsd: number };
  warnings: string[];
}

export interface GatewayFigure {
  id: string;
  name: string;
  lat: number;
  lon: number;
  siteId: string | null;
  antennaDesignId: string;
  antennaHeightAglM: number;
  feedlineId: string;
  feedlineLengthM: number;
  mastOptionId: string | null;
  mastName: string | null;
  antennaName: string;
  feedlineName: string;
  /** Nodes whose best link is this gateway. */
  bestServerOf: number;
  kitCostUsd: number;
}

export interface SiteFigure {
  id: string;
  name: string;
  lat: number;
  lon: number;
  kind: string;
  costUsd: number | null;
  maxAntennaHeightAglM: number | null;
  hasGateway: boolean;
}

export interface Redundancy {
  /** Nodes heard by no gateway (margin ≥ 0 dB), by exactly one, by two or more. */
  none: number;
  one: number;
  twoOrMore: number;
}

export interface RiskEntry {
  nodeId: string;
  nodeName: string;
  detail: string;
}

export interface PlanRisks {
  unserved: RiskEntry[];
  singleGateway: RiskEntry[];
  illegal: RiskEntry[];
  overDutyCycle: RiskEntry[];
}

export interface PlanAssumptions {
  bandPlanId: string;
  bandPlanName: string;
  frequencyMhz: number;
  bandwidthKhz: number;
  codingRate: string;
  method: string;
  targetMarginDb: number;
  targetDelivery: number;
  sigmaDb: number;
  sigmaSource: string;
  gatewayCorrelation: number;
  maxLinkRangeKm: number;
  maxEirpDbm: number | null;
  limitSource: string;
  terrain: string;
  statusRule: string;
}

/** The capacity engine's plan-wide answer (server/app/capacity.ts, model "capture"), as the report shows it. */
export interface CapacityFigures {
  model: string;
  method: string;
  channels: number;
  meanDeliveryRatio: number;
  meanLinkDeliveryProbability: number;
  overBudgetNodes: number;
  gateways: Array<{ name: string; nodes: number; offeredLoadErlang: number; downlinkAirtimeShare: number }>;
  sources: string[];
  cautions: string[];
}

/** The latest finished siting run as the siting use case stored it (server/app/siting.ts), not solved again. */
export interface SitingFigures {
  runId: string;
  finishedAt: Date | null;
  appliedAt: Date | null;
  /** The plan's nodes, gateways, sites, terrain or settings changed since the run (its answer may no longer hold). */
  planChangedSince: boolean;
  requiredGateways: number;
  minimise: SitingResult['minimise'];
  status: SitingResult['status'];
  optimal: boolean;
  gapPercent: number | null;
  solver: string;
  objective: SitingResult['objective'];
  selected: Array<{ rank: number; name: string; source: string; lat: number; lon: number; antennaHeightAglM: number; costUsd: number; kept: boolean; nodesHeard: number; nodesOnlyHere: number }>;
  nodesCoverable: number;
  nodesTotal: number;
  uncovered: SitingResult['uncovered'];
  shortOfRequired: SitingResult['shortOfRequired'];
  greedy: SitingResult['greedy'];
  before: SitingResult['before'];
  after: SitingResult['after'];
  message: string | null;
  warnings: string[];
}

function isSitingResult(value: unknown): value is SitingResult {
  const r = value as SitingResult | null;
  return !!r && typeof r === 'object' && Array.isArray(r.selected) && Array.isArray(r.uncovered) && !!r.objective && typeof r.status === 'string';
}

/** The latest done siting run's answer (null when the plan has none). */
export async function planSiting(db: Database, planId: string): Promise<SitingFigures | null> {
  const run = await latestDoneSitingRun(db, planId);
  if (!run || !isSitingResult(run.result)) return null;
  const r = run.result;
  const now = await sitingPlanFingerprint(db, planId);
  return {
    runId: run.id,
    finishedAt: run.finishedAt,
    appliedAt: run.appliedAt,
    planChangedSince: now !== run.planFingerprint,
    requiredGateways: r.requiredGateways,
    minimise: r.minimise,
    status: r.status,
    optimal: r.optimal,
    gapPercent: r.gapPercent,
    solver: r.solver,
    objective: r.objective,
    selected: r.selected.map((x) => ({ rank: x.rank, name: x.name, source: x.source, lat: x.lat, lon: x.lon, antennaHeightAglM: x.antennaHeightAglM, costUsd: x.costUsd, kept: x.kept, nodesHeard: x.nodesHeard, nodesOnlyHere: x.nodesOnlyHere })),
    nodesCoverable: r.nodesCoverable,
    nodesTotal: r.nodesTotal,
    uncovered: r.uncovered,
    shortOfRequired: r.shortOfRequired,
    greedy: r.greedy,
    before: r.before,
    after: r.after,
    message: r.message,
    warnings: r.warnings,
  };
}

export interface PlanFigures {
  plan: { id: string; name: string; description: string; teamId: string; teamName: string };
  generatedAt: Date;
  assumptions: PlanAssumptions;
  nodes: NodeFigure[];
  gateways: GatewayFigure[];
  sites: SiteFigure[];
  counts: Record<LinkStatus, number>;
  redundancy: Redundancy;
  bom: BillOfMaterials;
  risks: PlanRisks;
  /** Network load from the capacity engine; null when the plan has no gateway to load. */
  capacity: CapacityFigures | null;
  /** The latest finished gateway siting run; null when the plan has none. */
  siting: SitingFigures | null;
  cautions: string[];
  warnings: string[];
}

/** The status rule in the words every view uses (STATUS_WORDS of server/planning/status.ts). */
export const STATUS_RULE = (['served', 'marginal', 'unserved'] as const).map((status) => `${STATUS_WORDS[status].label}: ${STATUS_WORDS[status].meaning}`).join('; ');

function gatewayUnitCost(plan: PlanRow): number {
  const raw = plan.settings && typeof plan.settings === 'object' && !Array.isArray(plan.settings) ? (plan.settings as Record<string, unknown>).gatewayUnitCostUsd : undefined;
  return typeof raw === 'number' && Number.isFinite(raw) && raw >= 0 ? raw : DEFAULT_GATEWAY_UNIT_COST_USD;
}

type Catalog = Awaited<ReturnType<typeof loadCatalog>>;

type NodeKitRow = Pick<NodeLinksOutcome['node']['row'], 'antennaDesignId' | 'feedlineId' | 'feedlineLengthM' | 'antennaHeightAglM' | 'mastOptionId'>;

/**
 * A node row's one kit price from the team's catalog (nodeKitPrice); a node whose antenna is
 * not in the catalog is priced at 0 for it and listed as unpriced. The report's bill of
 * materials and GET /plans/{id}/bom (the summary view's kit cost) both price nodes here.
 */
function nodeRowPrice(row: NodeKitRow, catalog: Catalog): KitPrice & { mastName: string | null } {
  const antenna = catalog.antennas.find((a) => a.id === row.antennaDesignId);
  const feedline = row.feedlineId ? (catalog.feedlines.find((f) => f.id === row.feedlineId) ?? null) : null;
  const price = nodeKitPrice({ antenna: antenna ?? { name: row.antennaDesignId, costUsd: 0 }, feedline, feedlineLengthM: feedline ? row.feedlineLengthM : 0, antennaHeightAglM: row.antennaHeightAglM, mastOptionId: row.mastOptionId }, catalog.masts);
  return antenna ? price : { ...price, unpriced: [...price.unpriced, `antenna ${row.antennaDesignId}`] };
}

type GatewayKitRow = Pick<GatewayRow, 'antennaDesignId' | 'feedlineId' | 'feedlineLengthM' | 'mastOptionId'>;

/** A gateway row's kit price (gatewayKitPrice); null when its antenna or feedline is not in the catalog (the link engine leaves such a gateway out). */
function gatewayRowPrice(row: GatewayKitRow, catalog: Catalog): (KitPrice & { mastName: string | null }) | null {
  const antenna = catalog.antennas.find((a) => a.id === row.antennaDesignId);
  const feedline = catalog.feedlines.find((f) => f.id === row.feedlineId);
  if (!antenna || !feedline) return null;
  return gatewayKitPrice({ antenna, feedline, feedlineLengthM: row.feedlineLengthM, mastOptionId: row.mastOptionId }, catalog.masts);
}

function nodeFigure(outcome: NodeLinksOutcome, names: Map<string, string>, price: KitPrice & { mastName: string | null }): NodeFigure {
  const row = outcome.node.row;
  const best = outcome.links[0] as LinkResult | undefined;
  const perSf = best ? best.perSf.find((entry) => entry.sf === best.usedSf) : undefined;
  const allowed = perSf ? perSf.messagesPerHour : null;
  const feedline = outcome.node.feedline ?? null;
  const feedlineLengthM = outcome.node.kit ? outcome.node.kit.feedlineLengthM : 0;
  const antennaId = outcome.node.antenna ? outcome.node.antenna.id : row.antennaDesignId;
  return {
    id: row.id,
    originId: row.originId ?? null,
    name: row.name,
    lat: row.lat,
    lon: row.lon,
    deviceType: row.deviceType,
    environment: row.environment,
    installStatus: row.installStatus === 'needs_visit' ? 'needs-visit' : row.installStatus,
    status: outcome.status,
    bestMarginDb: outcome.bestMarginDb,
    combinedDeliveryProbability: outcome.combinedDeliveryProbability,
    bestGatewayId: outcome.bestGatewayId,
    bestGatewayName: outcome.bestGatewayId ? (names.get(outcome.bestGatewayId) ?? null) : null,
    rssiDbm: best ? best.rssiDbm : null,
    snrDb: best ? best.snrDb : null,
    distanceM: best ? best.distanceM : null,
    sf: best ? best.usedSf : null,
    timeOnAirMs: best ? best.timeOnAirMs : null,
    gatewaysHeard: gatewaysHeard(outcome.links),
    legal: linksLegal(outcome.links),
    messagesPerHour: row.messagesPerHour,
    dutyCycleMessagesPerHour: allowed,
    overDutyCycle: allowed !== null && row.messagesPerHour > allowed,
    kit: {
      antennaDesignId: antennaId,
      antennaName: outcome.node.antenna ? outcome.node.antenna.name : (price.lines[0]?.name ?? antennaId),
      antennaHeightAglM: outcome.node.antennaHeightAglM,
      feedlineId: feedline ? feedline.id : null,
      feedlineName: feedline ? feedline.name : null,
      feedlineLengthM,
      mastOptionId: row.mastOptionId,
      mastName: price.mastName,
      costUsd: price.totalUsd,
    },
    warnings: [...outcome.node.warnings],
  };
}

function terrainDescription(ctx: PlanContext): string {
  if (!ctx.terrainSpec) return 'no elevation layer: smooth earth at 0 m';
  return ctx.terrainSpec.files.map((file) => `${file.kind} "${file.name}"`).join('; ');
}

/**
 * The plan's figures. `onProgress` reports the fleet's progress (0–1); the fleet
 * itself is the link engine's (cached Link rows are reused, missing paths computed),
 * taken one node at a time (LinkEngine.fleetEach): each outcome becomes its node
 * figure, its capacity input and its bill-of-materials lines, and is then dropped,
 * so a 5,000-node plan never holds every link result and path at once.
 */
export async function planFigures(engine: LinkEngine, plan: PlanRow, onProgress?: (fraction: number) => void): Promise<PlanFigures> {
  const db = engine.database;
  const ctx = await engine.planContext(plan);
  const [catalog, sites, team, siting] = await Promise.all([loadCatalog(db, plan.teamId), listSitesForPlan(db, plan.id), teamName(db, plan.teamId), planSiting(db, plan.id)]);
  const names = new Map(ctx.gateways.map((g) => [g.row.id, g.row.name]));
  const gatewayIndex = new Map(ctx.gateways.map((g, k) => [g.row.id, k]));
  const bomBuilder = new BomBuilder();
  const nodes: NodeFigure[] = [];
  // The capacity engine over the same fleet answer (server/app/capacity.ts, no second pass).
  const withCapacity = ctx.gateways.length > 0;
  const capacityEntries: CapacityNodeEntry[] = [];
  await engine.fleetEach(
    ctx,
    (outcome) => {
      const price = nodeRowPrice(outcome.node.row, catalog);
      nodes.push(nodeFigure(outcome, names, price));
      bomBuilder.add({ kind: 'node', id: outcome.node.row.id, name: outcome.node.row.name, price });
      if (withCapacity) capacityEntries.push(capacityEntryOf(ctx, outcome, 1, gatewayIndex));
    },
    onProgress ? (done, total) => onProgress(total ? done / total : 1) : undefined,
  );
  const capacity: PlanCapacity | null = withCapacity && nodes.length > 0 ? capacityFromEntries(ctx, capacityEntries, { model: 'capture' }) : null;
  capacityEntries.length = 0;
  const counts: Record<LinkStatus, number> = { served: 0, marginal: 0, unserved: 0 };
  const redundancy: Redundancy = { none: 0, one: 0, twoOrMore: 0 };
  const bestOf = new Map<string, number>();
  const risks: PlanRisks = { unserved: [], singleGateway: [], illegal: [], overDutyCycle: [] };
  const dec = (v: number | null) => (v === null ? '–' : v.toFixed(1));
  for (const node of nodes) {
    counts[node.status]++;
    if (node.gatewaysHeard === 0) redundancy.none++;
    else if (node.gatewaysHeard === 1) redundancy.one++;
    else redundancy.twoOrMore++;
    if (node.bestGatewayId) bestOf.set(node.bestGatewayId, (bestOf.get(node.bestGatewayId) ?? 0) + 1);
    if (node.status === 'unserved') risks.unserved.push({ nodeId: node.id, nodeName: node.name, detail: node.bestMarginDb === null ? 'no gateway within range' : `best margin ${dec(node.bestMarginDb)} dB` });
    if (node.gatewaysHeard === 1) risks.singleGateway.push({ nodeId: node.id, nodeName: node.name, detail: `only ${node.bestGatewayName ?? 'one gateway'} hears it (margin ${dec(node.bestMarginDb)} dB)` });
    if (!node.legal) risks.illegal.push({ nodeId: node.id, nodeName: node.name, detail: `radiated power over the ${ctx.settings.bandPlan.name} limit on at least one link` });
    if (!capacity && node.overDutyCycle) risks.overDutyCycle.push({ nodeId: node.id, nodeName: node.name, detail: `${node.messagesPerHour} messages/h, the duty cycle allows ${dec(node.dutyCycleMessagesPerHour)} at SF${node.sf}` });
  }
  if (capacity) {
    // With a capacity answer, its duty-cycle and dwell budget per node is the one the risk list uses.
    for (const c of capacity.nodes) {
      if (!c.overBudget) continue;
      const allowed = c.maxMessagesPerHourAtDutyCycle ?? c.maxMessagesPerHourAtDwell;
      risks.overDutyCycle.push({ nodeId: c.nodeId, nodeName: c.nodeName, detail: `${dec(c.messagesPerHour)} messages/h at SF${c.sf ?? '–'}; the band plan allows ${dec(allowed)} per hour` });
    }
  }
  const gatewayPrices = new Map<string, KitPrice & { mastName: string | null }>();
  for (const g of ctx.gateways) {
    const price = gatewayRowPrice(g.row, catalog) ?? gatewayKitPrice({ antenna: g.antenna, feedline: g.feedline, feedlineLengthM: g.row.feedlineLengthM, mastOptionId: g.row.mastOptionId }, catalog.masts);
    gatewayPrices.set(g.row.id, price);
    bomBuilder.add({ kind: 'gateway', id: g.row.id, name: g.row.name, price, siteId: g.row.siteId });
  }
  const gatewayIds = new Set(ctx.gateways.map((g) => g.row.siteId).filter((id): id is string => !!id));
  const bom = bomBuilder.finish({ gatewayUnitCostUsd: gatewayUnitCost(plan), sites: sites.map((site: SiteListRow) => ({ id: site.id, name: site.name, costUsd: site.costUsd })) });
  const s = ctx.settings;
  // The fleet table's plan-wide σ (a node at 1.5 m in the open); each link carries its own.
  const spread = planningSpread({ ...s.spread, frequencyMhz: s.frequencyMhz, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0 });
  return {
    plan: { id: plan.id, name: plan.name, description: plan.description, teamId: plan.teamId, teamName: team },
    generatedAt: new Date(),
    assumptions: {
      bandPlanId: s.bandPlan.id,
      bandPlanName: s.bandPlan.name,
      frequencyMhz: s.frequencyMhz,
      bandwidthKhz: s.bandwidthKhz,
      codingRate: s.codingRate,
      method: s.path.method,
      targetMarginDb: s.targetMarginDb,
      targetDelivery: s.targetDelivery,
      sigmaDb: spread.sigmaDb,
      sigmaSource: `${spread.sigmaSource}: ${describeSpread(spread, s.spread)}`,
      gatewayCorrelation: s.gatewayCorrelation,
      maxLinkRangeKm: s.maxLinkRangeM / 1000,
      maxEirpDbm: s.maxEirpDbm,
      limitSource: s.limitSource,
      terrain: terrainDescription(ctx),
      statusRule: STATUS_RULE,
    },
    nodes,
    gateways: ctx.gateways.map((g) => ({
      id: g.row.id,
      name: g.row.name,
      lat: g.row.lat,
      lon: g.row.lon,
      siteId: g.row.siteId,
      antennaDesignId: g.row.antennaDesignId,
      antennaHeightAglM: g.row.antennaHeightAglM,
      feedlineId: g.row.feedlineId,
      feedlineLengthM: g.row.feedlineLengthM,
      mastOptionId: g.row.mastOptionId,
      mastName: gatewayPrices.get(g.row.id)?.mastName ?? null,
      antennaName: g.antenna.name,
      feedlineName: g.feedline.name,
      bestServerOf: bestOf.get(g.row.id) ?? 0,
      kitCostUsd: gatewayPrices.get(g.row.id)?.totalUsd ?? 0,
    })),
    sites: sites.map((site) => ({ id: site.id, name: site.name, lat: site.lat, lon: site.lon, kind: site.kind, costUsd: site.costUsd, maxAntennaHeightAglM: site.maxAntennaHeightAglM, hasGateway: gatewayIds.has(site.id) })),
    counts,
    redundancy,
    bom,
    risks,
    capacity: capacity
      ? {
          model: capacity.model,
          method: capacity.method,
          channels: capacity.channels,
          meanDeliveryRatio: capacity.totals.meanDeliveryRatio,
          meanLinkDeliveryProbability: capacity.totals.meanLinkDeliveryProbability,
          overBudgetNodes: capacity.totals.overBudgetNodes,
          gateways: capacity.gateways.map((g) => ({ name: g.gatewayName, nodes: g.nodes, offeredLoadErlang: g.offeredLoadErlang, downlinkAirtimeShare: g.downlink.airtimeShare })),
          sources: capacity.sources,
          cautions: capacity.cautions,
        }
      : null,
    siting,
    cautions: installCautions(s.bandPlan.cautions),
    warnings: [...ctx.warnings],
  };
}

/**
 * The plan's bill of materials without the fleet pass: every node and gateway row priced by
 * the same functions as the report's (nodeRowPrice, gatewayRowPrice over the team's catalog),
 * the same gateway radio and site works, so GET /plans/{id}/bom (the summary view's kit cost)
 * equals the report's figures. Gateways whose kit is not in the catalog are left out, as the
 * link engine leaves them out of the report.
 */
export async function planBillOfMaterials(db: Database, plan: PlanRow): Promise<BillOfMaterials> {
  const [catalog, sites, nodes, gateways] = await Promise.all([loadCatalog(db, plan.teamId), listSitesForPlan(db, plan.id), listNodeKitRows(db, plan.id), listGatewaysForLinks(db, plan.id)]);
  const builder = new BomBuilder();
  for (const row of nodes) builder.add({ kind: 'node', id: row.id, name: row.name, price: nodeRowPrice(row, catalog) });
  for (const row of gateways) {
    const price = gatewayRowPrice(row, catalog);
    if (price) builder.add({ kind: 'gateway', id: row.id, name: row.name, price, siteId: row.siteId });
  }
  return builder.finish({ gatewayUnitCostUsd: gatewayUnitCost(plan), sites: sites.map((site) => ({ id: site.id, name: site.name, costUsd: site.costUsd })) });
}
