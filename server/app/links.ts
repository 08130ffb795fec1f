// Use cases of links and kit: a node's links, the fleet table, the installer's link
// check, the visit sheet, kit recommendations (one node, the fleet as a run) and the
// `earshot link` / `earshot recommend` reports. The API routes, the CLI and the loopback
// admin routes all call these, so every caller gets the same numbers and the same JSON.
import { z } from 'zod';
import { recordAudit } from '../db/repositories/audit.ts';
import type { Principal } from '../db/repositories/accounts.ts';
import { createKitRun, findPlanById, updateKitRun } from '../db/repositories/links.ts';
import { decodeCursor, encodeCursor } from '../db/repositories/pagination.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { installCautions, linkCheck } from '../planning/check.ts';
import type { LinkResult } from '../planning/link.ts';
import { fleetReferenceSpread, PlanSettingsError } from '../planning/settings.ts';
import { InvalidPatternError } from '../radio/pattern-schema.ts';
import { gatewaysHeard, linksLegal } from './plan-figures.ts';
import { describeSpread, planningSpread, type AppliedCalibration, type PlanningSpread } from '../planning/spread.ts';
import type { LinkStatus } from '../planning/status.ts';
import { LinkEngine, LinkInputError, type KitOverrides, type NodeLinksOutcome, type PlanContext } from '../jobs/link-engine.ts';
import { AppError } from './errors.ts';
import { loadCatalog, recommendForNode, type PricedKitOption, type RecommendRequest } from './recommend.ts';
import { nodeCautions, visitSheet } from './visit-sheet.ts';
import { CAUTIONS_FOOTER } from '../planning/cautions.ts';

export type { RecommendRequest };

/**
 * The plan context every link use case starts from. `calibration`: the plan's applied
 * calibration (its fitted spread replaces σL and σM; see server/planning/spread.ts).
 */
export async function planContextFor(engine: LinkEngine, plan: PlanRow, calibration?: AppliedCalibration | null): Promise<PlanContext> {
  // Left out: the calibration applied to the plan (the engine looks it up); null: the model as is.
  return engine.planContext(plan, calibration === undefined ? {} : { calibration });
}

/** The spread of a node's links (all links of a node share its end: one σ), or the node's in the open without links. */
export function nodeSpread(ctx: PlanContext, outcome: NodeLinksOutcome): PlanningSpread {
  const link = outcome.links[0];
  if (link) return { sigmaDb: link.sigmaDb, sigmaSource: link.sigmaSource, sigmaLocationDb: link.sigmaLocationDb, sigmaModelDb: link.sigmaModelDb, sigmaEnvironmentDb: 0, biasDb: link.calibrationBiasDb };
  return planningSpread({ ...ctx.settings.spread, frequencyMhz: ctx.settings.frequencyMhz, nodeAntennaHeightAglM: outcome.node.antennaHeightAglM, nodeClutterHeightM: 0 });
}

/** Plan-wide spread figures of the fleet table: σ of a node at 1.5 m in the open; each row carries its own sigmaDb. */
export function fleetAssumptions(ctx: PlanContext) {
  const spread = fleetReferenceSpread(ctx.settings);
  return { sigmaDb: spread.sigmaDb, sigmaSource: spread.sigmaSource, sigmaModelDb: spread.sigmaModelDb, sigmaNote: describeSpread(spread, ctx.settings.spread) };
}

/** The link as answers show it: the contract fields first, then the details. */
export function linkView(link: LinkResult, gatewayName: string | undefined) {
  const { gatewayId, distanceM, basicLossDb, rssiDbm, snrDb, marginDb, bestSf, deliveryProbability, timeOnAirMs, legal, ...details } = link;
  return { gatewayId, gatewayName: gatewayName ?? null, distanceM, basicLossDb, rssiDbm, snrDb, marginDb, bestSf, deliveryProbability, timeOnAirMs, legal, ...details };
}

export function nodeLinksView(ctx: PlanContext, outcome: NodeLinksOutcome) {
  const names = new Map(ctx.gateways.map((g) => [g.row.id, g.row.name]));
  const spread = nodeSpread(ctx, outcome);
  return {
    nodeId: outcome.node.row.id,
    links: outcome.links.map((link) => linkView(link, names.get(link.gatewayId))),
    combinedDeliveryProbability: outcome.combinedDeliveryProbability,
    status: outcome.status,
    bestGatewayId: outcome.bestGatewayId,
    target: { targetMarginDb: ctx.settings.targetMarginDb, targetDelivery: ctx.settings.targetDelivery },
    assumptions: {
      method: ctx.settings.path.method,
      frequencyMhz: ctx.settings.frequencyMhz,
      bandwidthKhz: ctx.settings.bandwidthKhz,
      // The one planning spread of this node's links (server/planning/spread.ts).
      sigmaDb: spread.sigmaDb,
      sigmaSource: spread.sigmaSource,
      sigmaLocationDb: spread.sigmaLocationDb,
      sigmaModelDb: spread.sigmaModelDb,
      sigmaNote: describeSpread(spread, ctx.settings.spread),
      // Older names of the σL part, kept for existing clients.
      locationSigmaDb: spread.sigmaLocationDb,
      locationSigmaSource: ctx.settings.spread.planLocationSigmaDb !== null ? 'plan setting' : `ITU-R P.1812-8 §4.8 σL for w_a = ${ctx.settings.spread.locationWidthM} m with its height factor`,
      gatewayCorrelation: ctx.settings.gatewayCorrelation,
      combination: 'probability that at least one gateway receives: 1 − Π(1 − p_i), gateways assumed independent; a correlation factor ρ blends toward the best gateway alone',
    },
    kit: {
      antennaDesignId: outcome.node.antenna.id,
      antennaHeightAglM: outcome.node.antennaHeightAglM,
      feedlineId: outcome.node.feedline ? outcome.node.feedline.id : null,
      feedlineLengthM: outcome.node.kit.feedlineLengthM,
    },
    outOfRange: outcome.outOfRange,
    cache: { computed: outcome.computed, cached: outcome.cached },
    warnings: [...ctx.warnings, ...outcome.node.warnings],
  };
}

export type NodeLinksView = ReturnType<typeof nodeLinksView>;

/**
 * A node's links (GET …/nodes/:nodeId/links). Kit overrides preview another kit without
 * saving; unchanged inputs are answered from the engine's front cache (one fingerprint query).
 */
export async function nodeLinks(engine: LinkEngine, plan: PlanRow, nodeId: string, overrides: KitOverrides = {}, calibration?: AppliedCalibration | null): Promise<NodeLinksView & { preview: boolean }> {
  const preview = Object.values(overrides).some((v) => v !== undefined);
  const key = preview ? null : await engine.frontKey(plan, nodeId, calibration);
  if (key !== null) {
    const hit = engine.frontGet<NodeLinksView>(plan.id, nodeId, key);
    if (hit) return { ...hit, cache: { computed: 0, cached: hit.links.length }, preview: false };
  }
  const ctx = await planContextFor(engine, plan, calibration);
  const outcome = await engine.linksForNode(ctx, nodeId, overrides);
  const view = nodeLinksView(ctx, outcome);
  if (key !== null) engine.frontSet(plan.id, nodeId, key, view);
  return { ...view, preview };
}

export interface FleetQuery {
  status?: LinkStatus;
  cursor?: string;
  limit?: number;
}

/** The fleet table (GET /plans/:planId/links): every node with its status, paginated, with counts. */
export async function fleetTable(engine: LinkEngine, plan: PlanRow, query: FleetQuery = {}, calibration?: AppliedCalibration | null) {
  const ctx = await planContextFor(engine, plan, calibration);
  const outcomes = await engine.fleet(ctx);
  const counts = { served: 0, marginal: 0, unserved: 0 };
  let computed = 0;
  let cached = 0;
  for (const outcome of outcomes) {
    counts[outcome.status]++;
    computed += outcome.computed;
    cached += outcome.cached;
  }
  const names = new Map(ctx.gateways.map((g) => [g.row.id, g.row.name]));
  const filtered = query.status ? outcomes.filter((o) => o.status === query.status) : outcomes;
  const offset = decodeCursor(query.cursor);
  const limit = query.limit ?? 100;
  const page = filtered.slice(offset, offset + limit);
  return {
    items: page.map((o) => {
      const best = o.links[0];
      return {
        nodeId: o.node.row.id,
        nodeName: o.node.row.name,
        lat: o.node.row.lat,
        lon: o.node.row.lon,
        status: o.status,
        combinedDeliveryProbability: o.combinedDeliveryProbability,
        bestGatewayId: o.bestGatewayId,
        bestGatewayName: o.bestGatewayId ? (names.get(o.bestGatewayId) ?? null) : null,
        bestMarginDb: o.bestMarginDb,
        sigmaDb: best ? best.sigmaDb : null,
        bestSf: best ? best.bestSf : null,
        timeOnAirMs: best ? best.timeOnAirMs : null,
        gatewaysHeard: gatewaysHeard(o.links),
        legal: linksLegal(o.links),
        warnings: o.node.warnings,
      };
    }),
    total: filtered.length,
    next: offset + page.length < filtered.length ? encodeCursor(offset + page.length) : null,
    counts,
    assumptions: fleetAssumptions(ctx),
    cache: { computed, cached },
    warnings: ctx.warnings,
  };
}

/** The installer's link check of the best link, or of `gatewayId` (GET …/nodes/:nodeId/check). */
export async function nodeLinkCheck(engine: LinkEngine, plan: PlanRow, nodeId: string, gatewayId?: string, calibration?: AppliedCalibration | null) {
  const ctx = await planContextFor(engine, plan, calibration);
  const outcome = await engine.linksForNode(ctx, nodeId);
  const wanted = gatewayId ?? outcome.bestGatewayId;
  const link = outcome.links.find((l) => l.gatewayId === wanted);
  if (gatewayId && !link) throw new AppError('not_found', 'not_found', 'gateway not found or not within range of this node');
  const gateway = ctx.gateways.find((g) => g.row.id === wanted);
  const recommendation = await recommendForNode(engine, ctx, outcome.node.row, {});
  let view = null;
  if (link && gateway) {
    const profile = await engine.profile(ctx, outcome.node.row, gateway.row);
    view = linkCheck(profile, ctx.settings.frequencyMhz, ctx.settings.path.deltaN, outcome.node.antennaHeightAglM, gateway.row.antennaHeightAglM, link);
  }
  const links = nodeLinksView(ctx, outcome);
  return {
    nodeId: outcome.node.row.id,
    nodeName: outcome.node.row.name,
    status: outcome.status,
    combinedDeliveryProbability: outcome.combinedDeliveryProbability,
    gatewayId: wanted ?? null,
    gatewayName: gateway ? gateway.row.name : null,
    link: links.links.find((l) => l.gatewayId === wanted) ?? null,
    profile: view,
    currentKit: links.kit,
    recommendedKit: recommendation.options[0] ?? null,
    recommendation: { anyMeetsTarget: recommendation.anyMeetsTarget, advice: recommendation.advice },
    cautions: installCautions(ctx.settings.bandPlan.cautions),
    /** What this node's job needs (a 1 m soil probe gets no mast list), grouped, each said once. */
    fittedCautions: nodeCautions(outcome),
    cautionsFooter: CAUTIONS_FOOTER,
    warnings: links.warnings,
  };
}

/** Kit options for one node (POST …/nodes/:nodeId/recommend). */
export async function nodeRecommendation(engine: LinkEngine, plan: PlanRow, nodeId: string, request: RecommendRequest = {}, calibration?: AppliedCalibration | null) {
  const ctx = await planContextFor(engine, plan, calibration);
  const row = await engine.nodeRow(ctx, nodeId);
  return recommendForNode(engine, ctx, row, request);
}

/** The installer's visit sheet (a recommendation only when the node is not served). */
export async function nodeVisitSheet(engine: LinkEngine, plan: PlanRow, nodeId: string, calibration?: AppliedCalibration | null) {
  const ctx = await planContextFor(engine, plan, calibration);
  const outcome = await engine.linksForNode(ctx, nodeId);
  const recommendation = outcome.status === 'served' ? null : await recommendForNode(engine, ctx, outcome.node.row, {});
  return visitSheet(ctx, outcome, recommendation, (await loadCatalog(engine.database, ctx.teamId)).masts);
}

/**
 * Starts the fleet kit recommendation as a run (its row and audit entry first, then the
 * work in the background). Returns the run and the promise of the work.
 */
/** What a finished fleet recommendation run stores as its summary (and GET …/recommend/:runId answers as result). */
export interface FleetRecommendationSummary {
  counts: { meetsTarget: number; noOption: number; alreadyServed: number };
  nodes: Array<{ nodeId: string; nodeName: string; status: LinkStatus; anyMeetsTarget: boolean; best: PricedKitOption | null; advice: string[] }>;
}

/** Where a background job reports what went wrong (the API passes its request logger). */
export interface JobLog {
  error(detail: Record<string, unknown>, message: string): void;
}

export async function startFleetRecommendation(engine: LinkEngine, plan: PlanRow, principal: Principal, body: RecommendRequest, processId: string, log: JobLog, calibration?: AppliedCalibration | null) {
  const ctx = await planContextFor(engine, plan, calibration);
  const db = engine.database;
  const job = await createKitRun(db, plan.id, body, principal.userId, processId);
  await recordAudit(db, { principal, action: 'create', entity: 'kit-recommendation', entityId: job.id, detail: { planId: plan.id } });
  const work = runFleetRecommendation(engine, ctx, job.id, body, log);
  return { job, work };
}

async function runFleetRecommendation(engine: LinkEngine, ctx: PlanContext, runId: string, body: RecommendRequest, log: JobLog): Promise<void> {
  const db = engine.database;
  try {
    const catalog = await loadCatalog(db, ctx.teamId);
    const outcomes = await engine.fleet(ctx);
    const nodes: FleetRecommendationSummary['nodes'] = [];
    const counts = { meetsTarget: 0, noOption: 0, alreadyServed: 0 };
    let lastWrite = 0;
    for (let i = 0; i < outcomes.length; i++) {
      const outcome = outcomes[i];
      const recommendation = await recommendForNode(engine, ctx, outcome.node.row, body, catalog);
      if (recommendation.anyMeetsTarget) counts.meetsTarget++;
      else counts.noOption++;
      if (outcome.status === 'served') counts.alreadyServed++;
      nodes.push({ nodeId: outcome.node.row.id, nodeName: outcome.node.row.name, status: outcome.status, anyMeetsTarget: recommendation.anyMeetsTarget, best: recommendation.options[0] ?? null, advice: recommendation.advice });
      const progress = (i + 1) / outcomes.length;
      if (Date.now() - lastWrite > 500 || i === outcomes.length - 1) {
        lastWrite = Date.now();
        await updateKitRun(db, runId, { progress: Math.min(progress, 0.999) });
      }
    }
    await updateKitRun(db, runId, { status: 'done', progress: 1, summary: { counts, nodes } satisfies FleetRecommendationSummary });
  } catch (error) {
    const known = error instanceof AppError || error instanceof PlanSettingsError || error instanceof InvalidPatternError;
    // The cause goes to the log with the run id, so "see the server log" leads somewhere.
    log.error({ err: error, runId, planId: ctx.plan.id }, 'fleet recommendation run failed');
    const message = known ? (error as Error).message : `the recommendation failed (run ${runId}); the server log has the cause under this run id`;
    await updateKitRun(db, runId, { status: 'failed', error: message }).catch((writeError: unknown) => log.error({ err: writeError, runId }, 'could not record the failed run'));
  }
}

// ---- `earshot link` / `earshot recommend` (server/cli/links.ts) and their loopback admin route ----
// The CLI runs these in its own process on DATABASE_URL or a free data folder, and through the
// running server's /_admin/link and /_admin/recommend while a server holds the embedded folder:
// one function, so the JSON is the same either way.

export const linkReportInput = z.strictObject({ plan: z.string().min(1), node: z.string().min(1), gateway: z.string().min(1).optional() });
export const recommendReportInput = z.strictObject({
  plan: z.string().min(1),
  node: z.string().min(1),
  targetMarginDb: z.number().finite().optional(),
  targetDelivery: z.number().min(0).max(1).optional(),
  maxCost: z.number().min(0).optional(),
});

async function reportContext(engine: LinkEngine, planId: string): Promise<PlanContext> {
  const plan = await findPlanById(engine.database, planId);
  if (!plan) throw new LinkInputError('not_found', 'not_found', `--plan: no plan "${planId}"`);
  return planContextFor(engine, plan);
}

/** A node's links as `earshot link` prints them (optionally one gateway's). */
export async function linkReport(engine: LinkEngine, input: z.infer<typeof linkReportInput>): Promise<NodeLinksView> {
  const ctx = await reportContext(engine, input.plan);
  if (input.gateway && !ctx.gateways.some((g) => g.row.id === input.gateway)) throw new LinkInputError('not_found', 'not_found', `--gateway: no gateway "${input.gateway}" in plan ${input.plan}`);
  const outcome = await engine.linksForNode(ctx, input.node).catch((error: unknown) => {
    if (error instanceof LinkInputError && error.kind === 'not_found') throw new LinkInputError('not_found', 'not_found', `--node: no node "${input.node}" in plan ${input.plan}`);
    throw error;
  });
  const view = nodeLinksView(ctx, outcome);
  if (!input.gateway) return view;
  const links = view.links.filter((link) => link.gatewayId === input.gateway);
  if (links.length === 0) throw new LinkInputError('unprocessable', 'out_of_range', `--gateway: gateway "${input.gateway}" is beyond ${(ctx.settings.maxLinkRangeM / 1000).toFixed(0)} km of the node`);
  return { ...view, links };
}

/** A node's kit options as `earshot recommend` prints them. */
export async function recommendReport(engine: LinkEngine, input: z.infer<typeof recommendReportInput>) {
  const ctx = await reportContext(engine, input.plan);
  const row = await engine.nodeRow(ctx, input.node).catch(() => {
    throw new LinkInputError('not_found', 'not_found', `--node: no node "${input.node}" in plan ${input.plan}`);
  });
  return recommendForNode(engine, ctx, row, { targetMarginDb: input.targetMarginDb, targetDelivery: input.targetDelivery, maxCost: input.maxCost });
}
