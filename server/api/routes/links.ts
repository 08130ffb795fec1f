// Links and kit: a node's predicted links, the fleet table, the installer's
// link check and visit sheet, kit recommendations (one node, or the fleet as
// a job with progress) and field readings beside the prediction.
// Routes stay thin: the work is in server/jobs/link-engine.ts, ./recommend.ts,
// ./visit-sheet.ts and the pure rooms under server/planning/.
import { hostname } from 'node:os';
import { InvalidPatternError } from '../../radio/pattern-schema.ts';
import type { FastifyBaseLogger, FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { recordAudit } from '../../db/repositories/audit.ts';
import { createKitJob, findKitJob, findPlanById, updateKitJob } from '../../db/repositories/links.ts';
import { linkCheck, installCautions } from '../../planning/check.ts';
import { fleetReferenceSpread, PlanSettingsError } from '../../planning/settings.ts';
import type { LinkResult } from '../../planning/link.ts';
import { describeSpread, planningSpread, type PlanningSpread } from '../../planning/spread.ts';
import type { PlanRow } from '../../db/repositories/plans.ts';
import { requireRole } from '../auth.ts';
import { ApiError, apiErrorOf } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { finite, id, pageQuery } from '../schemas.ts';
import { decodeCursor, encodeCursor } from '../../db/repositories/pagination.ts';
import { LinkEngine, LinkInputError, type NodeLinksOutcome, type PlanContext } from '../../jobs/link-engine.ts';
import { loadCatalog, recommendForNode, type RecommendRequest } from './recommend.ts';
import { visitSheet, visitSheetHtml } from './visit-sheet.ts';
import { registerReadingRoutes } from './readings.ts';
import { gatewaysHeard, linksLegal } from '../../app/plan-figures.ts';

const nodeParams = z.strictObject({ planId: id(), nodeId: id() });
const jobParams = z.strictObject({ planId: id(), jobId: id() });
const planParams = z.strictObject({ planId: id() });

const coerceNumber = (rule: z.ZodNumber) =>
  z.preprocess((value) => (typeof value === 'string' && value.trim() !== '' ? Number(value) : value), rule);

export const kitOverrideQuery = z.strictObject({
  antennaDesignId: id().optional(),
  antennaHeightAglM: coerceNumber(finite().min(-10, 'must be ≥ -10 m').max(200, 'must be ≤ 200 m')).optional(),
  feedlineId: z.string().max(100).optional(),
  feedlineLengthM: coerceNumber(finite().min(0, 'must be ≥ 0 m').max(500, 'must be ≤ 500 m')).optional(),
});

export const recommendBody = z.strictObject({
  targetMarginDb: finite().min(-20, 'must be ≥ -20 dB').max(60, 'must be ≤ 60 dB').optional(),
  targetDelivery: finite().min(0, 'must be within 0–1').max(1, 'must be within 0–1').optional(),
  antennaDesignIds: z.array(id()).min(1, 'must list at least one id').max(100).optional(),
  mastHeightsM: z.array(finite().min(0, 'must be ≥ 0 m').max(200, 'must be ≤ 200 m')).min(1, 'must list at least one height').max(50).optional(),
  feedlineIds: z.array(id()).min(1, 'must list at least one id').max(50).optional(),
  maxCost: finite().min(0, 'must be ≥ 0').optional(),
});

const fleetQuery = pageQuery.extend({
  status: z.enum(['served', 'marginal', 'unserved'], { error: 'must be served, marginal or unserved' }).optional(),
});

const checkQuery = z.strictObject({ gatewayId: id().optional() });
const sheetQuery = z.strictObject({
  format: z.enum(['html', 'json'], { error: 'must be html or json' }).optional(),
  tz: z.string().max(64).regex(/^[A-Za-z0-9_+\-/]+$/, 'must be an IANA time zone such as Europe/Berlin').optional().describe('time zone for the printed times (the app sends the viewer\'s)'),
});

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

/** The link as the API shows it: the contract fields first, then the details. */
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

/** Maps the engine's input errors onto the API's error shape. */
export function asApiError(error: unknown): never {
  throw apiErrorOf(error) ?? error;
}

export default async function linkRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const engine = app.linkEngine;
  const running = new Set<Promise<void>>();
  const processId = `${hostname()}:${process.pid}:${Date.now()}`;
  app.addHook('onClose', async () => {
    await Promise.allSettled([...running]);
  });
  const tags = ['links'];

  async function context(plan: PlanRow): Promise<PlanContext> {
    try {
      return await engine.planContext(plan);
    } catch (error) {
      return asApiError(error);
    }
  }

  api.get(
    '/plans/:planId/nodes/:nodeId/links',
    {
      schema: {
        summary: "A node's predicted link to every gateway within range, the probability that at least one hears it, and its status; kit query parameters preview another kit without saving",
        tags,
        params: nodeParams,
        querystring: kitOverrideQuery,
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const query = request.query;
      const preview = Object.values(query).some((v) => v !== undefined);
      // Unchanged inputs (one fingerprint query) → the remembered answer, no plan context needed.
      const key = preview ? null : await engine.frontKey(plan, request.params.nodeId);
      if (key !== null) {
        const hit = engine.frontGet<ReturnType<typeof nodeLinksView>>(plan.id, request.params.nodeId, key);
        if (hit) return { ...hit, cache: { computed: 0, cached: hit.links.length }, preview: false };
      }
      const ctx = await context(plan);
      const overrides = { ...query, feedlineId: query.feedlineId === undefined ? undefined : query.feedlineId === '' || query.feedlineId === 'none' ? null : query.feedlineId };
      try {
        const outcome = await engine.linksForNode(ctx, request.params.nodeId, overrides);
        const view = nodeLinksView(ctx, outcome);
        if (key !== null) engine.frontSet(plan.id, request.params.nodeId, key, view);
        return { ...view, preview };
      } catch (error) {
        return asApiError(error);
      }
    },
  );

  api.get(
    '/plans/:planId/links',
    { schema: { summary: 'The fleet table: every node with its status, best gateway and margin, paginated, with counts per status', tags, params: planParams, querystring: fleetQuery } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const ctx = await context(plan);
      let outcomes: NodeLinksOutcome[];
      try {
        outcomes = await engine.fleet(ctx);
      } catch (error) {
        return asApiError(error);
      }
      const counts = { served: 0, marginal: 0, unserved: 0 };
      let computed = 0;
      let cached = 0;
      for (const outcome of outcomes) {
        counts[outcome.status]++;
        computed += outcome.computed;
        cached += outcome.cached;
      }
      const names = new Map(ctx.gateways.map((g) => [g.row.id, g.row.name]));
      const filtered = request.query.status ? outcomes.filter((o) => o.status === request.query.status) : outcomes;
      const offset = decodeCursor(request.query.cursor);
      const limit = request.query.limit ?? 100;
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
    },
  );

  api.get(
    '/plans/:planId/nodes/:nodeId/check',
    {
      schema: {
        summary: "The installer's link check of the best link (or ?gatewayId=): profile with clutter tops, straight ray, first Fresnel zone, obstructions, expected RSSI/SNR range, current and recommended kit, cautions",
        tags,
        params: nodeParams,
        querystring: checkQuery,
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const ctx = await context(plan);
      try {
        const outcome = await engine.linksForNode(ctx, request.params.nodeId);
        const wanted = request.query.gatewayId ?? outcome.bestGatewayId;
        const link = outcome.links.find((l) => l.gatewayId === wanted);
        if (request.query.gatewayId && !link) throw new ApiError(404, 'not_found', 'gateway not found or not within range of this node');
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
          warnings: links.warnings,
        };
      } catch (error) {
        return asApiError(error);
      }
    },
  );

  api.post(
    '/plans/:planId/nodes/:nodeId/recommend',
    { schema: { summary: 'Kit options for a node (antenna × mast height × feedline), cheapest meeting the target first; an honest answer when none does', tags, params: nodeParams, body: recommendBody.optional() } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const ctx = await context(plan);
      try {
        const row = await engine.nodeRow(ctx, request.params.nodeId);
        return await recommendForNode(engine, ctx, row, (request.body ?? {}) as RecommendRequest);
      } catch (error) {
        return asApiError(error);
      }
    },
  );

  api.post(
    '/plans/:planId/recommend',
    { schema: { summary: 'Kit recommendation for the whole fleet as a job; poll GET /plans/:planId/recommend/:jobId for progress and the result', tags, params: planParams, body: recommendBody.optional() } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const ctx = await context(plan);
      const body = (request.body ?? {}) as RecommendRequest;
      const job = await createKitJob(db, plan.id, body, principal.userId, processId);
      await recordAudit(db, { principal, action: 'create', entity: 'kit-recommendation', entityId: job.id, detail: { planId: plan.id } });
      const work = runFleetRecommendation(engine, ctx, job.id, body, request.log).finally(() => running.delete(work));
      running.add(work);
      return reply.status(202).send({ id: job.id, status: 'running', progress: 0, poll: `/api/v1/plans/${plan.id}/recommend/${job.id}` });
    },
  );

  api.get('/plans/:planId/recommend/:jobId', { schema: { summary: 'Progress and result of a fleet kit recommendation', tags, params: jobParams } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    let job = await findKitJob(db, plan.id, request.params.jobId);
    if (!job) throw new ApiError(404, 'not_found', 'job not found');
    // A run whose process is gone (restart) would never finish: say so instead of spinning.
    if (job.status === 'running' && job.lockedBy !== processId && job.lockedAt && Date.now() - job.lockedAt.getTime() > 60_000) {
      job = await updateKitJob(db, job.id, { status: 'failed', error: 'interrupted: the server restarted while it ran; start it again' });
    }
    return { id: job.id, status: job.status, progress: job.progress, error: job.error, createdAt: job.createdAt, finishedAt: job.finishedAt, result: job.summary };
  });

  api.get(
    '/plans/:planId/nodes/:nodeId/visit-sheet',
    { schema: { summary: "The installer's printable visit sheet (HTML; ?format=json for the same content as JSON)", tags, params: nodeParams, querystring: sheetQuery } },
    async (request, reply) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const ctx = await context(plan);
      try {
        const outcome = await engine.linksForNode(ctx, request.params.nodeId);
        const recommendation = outcome.status === 'served' ? null : await recommendForNode(engine, ctx, outcome.node.row, {});
        const sheet = visitSheet(ctx, outcome, recommendation, (await loadCatalog(db, ctx.teamId)).masts);
        if (request.query.format === 'json') return sheet;
        return reply.type('text/html; charset=utf-8').send(visitSheetHtml(sheet, request.query.tz));
      } catch (error) {
        return asApiError(error);
      }
    },
  );

  registerReadingRoutes(api, engine, context);
}

async function runFleetRecommendation(engine: LinkEngine, ctx: PlanContext, jobId: string, body: RecommendRequest, log: FastifyBaseLogger): Promise<void> {
  const db = engine.database;
  try {
    const catalog = await loadCatalog(db, ctx.teamId);
    const outcomes = await engine.fleet(ctx);
    const nodes: unknown[] = [];
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
        await updateKitJob(db, jobId, { progress: Math.min(progress, 0.999) });
      }
    }
    await updateKitJob(db, jobId, { status: 'done', progress: 1, summary: { counts, nodes } });
  } catch (error) {
    const known = error instanceof LinkInputError || error instanceof PlanSettingsError || error instanceof InvalidPatternError;
    // The cause goes to the log with the job id, so "see the server log" leads somewhere.
    log.error({ err: error, jobId, planId: ctx.plan.id }, 'fleet recommendation job failed');
    const message = known ? (error as Error).message : `the recommendation failed (job ${jobId}); the server log has the cause under this job id`;
    await updateKitJob(db, jobId, { status: 'failed', error: message }).catch((writeError: unknown) => log.error({ err: writeError, jobId }, 'could not record the failed job'));
  }
}

// ---- `earshot link` / `earshot recommend` (server/cli/links.ts) and their loopback admin route ----
// The CLI runs these in its own process on DATABASE_URL or a free data folder, and
// through the running server's /_admin/link and /_admin/recommend while a server
// holds the embedded folder: one function, so the JSON is the same either way.

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
  return engine.planContext(plan);
}

/** A node's links as `earshot link` prints them (optionally one gateway's). */
export async function linkReport(engine: LinkEngine, input: z.infer<typeof linkReportInput>): Promise<ReturnType<typeof nodeLinksView>> {
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

/**
 * Loopback admin routes for those commands, registered inside server/api/routes/admin.ts
 * (so its loopback + local-secret check guards them): POST /_admin/link, /_admin/recommend.
 */
export async function linkAdminRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  // One node per request: its few paths run in-thread, no worker threads.
  const engine = new LinkEngine(db, config, { workers: 0 });
  app.addHook('onClose', async () => engine.close());
  api.post('/link', { schema: { hide: true, body: linkReportInput } }, async (request) => linkReport(engine, request.body).catch(asApiError));
  api.post('/recommend', { schema: { hide: true, body: recommendReportInput } }, async (request) => recommendReport(engine, request.body).catch(asApiError));
}
