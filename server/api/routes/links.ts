// Links and kit: a node's predicted links, the fleet table, the installer's
// link check and visit sheet, kit recommendations (one node, or the fleet as
// a run with progress) and field readings beside the prediction.
// Routes only parse, call the use cases in server/app/links.ts and shape the answer.
import { hostname } from 'node:os';
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { findKitRun, updateKitRun } from '../../db/repositories/links.ts';
import type { PlanRow } from '../../db/repositories/plans.ts';
import { requireRole } from '../auth.ts';
import { ApiError, apiErrorOf } from '../errors.ts';
import { loadPlanForPrincipal, loadPlanForRead } from '../scope.ts';
import { errorResponses, finite, id, nodeAntennaHeightAglM, nodeFeedlineLengthM, pageQuery, ranged, targetMarginDb } from '../schemas.ts';
import { LinkEngine, type PlanContext } from '../../jobs/link-engine.ts';
import {
  fleetTable,
  linkReport,
  linkReportInput,
  nodeLinkCheck,
  nodeLinks,
  nodeRecommendation,
  nodeVisitSheet,
  planContextFor,
  recommendReport,
  recommendReportInput,
  startFleetRecommendation,
  type FleetRecommendationSummary,
  type RecommendRequest,
} from '../../app/links.ts';
import { visitSheetHtml } from '../../app/visit-sheet.ts';
import { fleetRecommendationJob, fleetRecommendationStarted, linkCheckResponse, linkStatusSchema, nodeLinksResponse, recommendationResponse, sigmaSourceSchema, visitSheetResponse } from '../link-answers.ts';
import { registerReadingRoutes } from './readings.ts';

const linkStatus = linkStatusSchema;
/** GET /plans/:planId/links (fleetTable in server/app/links.ts): one row per node, a page of them. */
const fleetTableResponse = z.object({
  items: z.array(
    z.object({
      nodeId: z.string(),
      nodeName: z.string(),
      lat: z.number(),
      lon: z.number(),
      status: linkStatus,
      combinedDeliveryProbability: z.number().describe('0 … 1'),
      bestGatewayId: z.string().nullable(),
      bestGatewayName: z.string().nullable(),
      bestMarginDb: z.number().nullable(),
      sigmaDb: z.number().nullable().describe('planning spread σ of the best link, dB'),
      bestSf: z.number().int().nullable(),
      timeOnAirMs: z.number().nullable(),
      gatewaysHeard: z.number().int().describe('gateways that hear the node with margin ≥ 0 dB'),
      legal: z.boolean().describe('every link within the band plan power limit'),
      warnings: z.array(z.string()),
    }),
  ),
  total: z.number().int(),
  next: z.string().nullable(),
  counts: z.object({ served: z.number().int(), marginal: z.number().int(), unserved: z.number().int() }),
  assumptions: z.object({ sigmaDb: z.number(), sigmaSource: sigmaSourceSchema, sigmaModelDb: z.number(), sigmaNote: z.string() }),
  cache: z.object({ computed: z.number().int(), cached: z.number().int() }),
  warnings: z.array(z.string()),
});

const nodeParams = z.strictObject({ planId: id(), nodeId: id() });
const runParams = z.strictObject({ planId: id(), runId: id() });
const planParams = z.strictObject({ planId: id() });

const coerceNumber = (rule: z.ZodNumber) =>
  z.preprocess((value) => (typeof value === 'string' && value.trim() !== '' ? Number(value) : value), rule);

export const kitOverrideQuery = z.strictObject({
  antennaDesignId: id().optional(),
  antennaHeightAglM: coerceNumber(nodeAntennaHeightAglM()).optional(),
  feedlineId: z.string().max(100).optional(),
  feedlineLengthM: coerceNumber(nodeFeedlineLengthM()).optional(),
});

export const recommendBody = z.strictObject({
  targetMarginDb: targetMarginDb().optional(),
  targetDelivery: finite().min(0, 'must be within 0–1').max(1, 'must be within 0–1').optional(),
  antennaDesignIds: z.array(id()).min(1, 'must list at least one id').max(100).optional(),
  mastHeightsM: z.array(ranged('nodeAntennaHeightAglM').min(0, 'must be ≥ 0 m')).min(1, 'must list at least one height').max(50).optional(),
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

/** Maps the engine's and use cases' errors onto the API's error shape. */
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
    return planContextFor(engine, plan).catch(asApiError);
  }

  api.get(
    '/plans/:planId/nodes/:nodeId/links',
    {
      schema: {
        summary: "A node's predicted link to every gateway within range, the probability that at least one hears it, and its status; kit query parameters preview another kit without saving",
        tags,
        params: nodeParams,
        querystring: kitOverrideQuery,
        response: { 200: nodeLinksResponse, ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForRead(db, request.principal, request.params.planId);
      const query = request.query;
      const overrides = { ...query, feedlineId: query.feedlineId === undefined ? undefined : query.feedlineId === '' || query.feedlineId === 'none' ? null : query.feedlineId };
      return nodeLinks(engine, plan, request.params.nodeId, overrides).catch(asApiError);
    },
  );

  api.get(
    '/plans/:planId/links',
    { schema: { summary: 'The fleet table: every node with its status, best gateway and margin, paginated, with counts per status', tags, params: planParams, querystring: fleetQuery, response: { 200: fleetTableResponse, ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return fleetTable(engine, plan, request.query).catch(asApiError);
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
        response: { 200: linkCheckResponse, ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return nodeLinkCheck(engine, plan, request.params.nodeId, request.query.gatewayId).catch(asApiError);
    },
  );

  api.post(
    '/plans/:planId/nodes/:nodeId/recommend',
    { schema: { summary: 'Kit options for a node (antenna × mast height × feedline), cheapest meeting the target first; an honest answer when none does', tags, params: nodeParams, body: recommendBody.optional(), response: { 200: recommendationResponse, ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return nodeRecommendation(engine, plan, request.params.nodeId, (request.body ?? {}) as RecommendRequest).catch(asApiError);
    },
  );

  api.post(
    '/plans/:planId/recommend',
    { schema: { summary: 'Kit recommendation for the whole fleet as a run; poll GET /plans/:planId/recommend/:runId for progress and the result', tags, params: planParams, body: recommendBody.optional(), response: { 202: fleetRecommendationStarted, ...errorResponses } } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const { job, work } = await startFleetRecommendation(engine, plan, principal, (request.body ?? {}) as RecommendRequest, processId, request.log).catch(asApiError);
      const tracked = work.finally(() => running.delete(tracked));
      running.add(tracked);
      return reply.status(202).send({ id: job.id, status: 'running', progress: 0, poll: `/api/v1/plans/${plan.id}/recommend/${job.id}` });
    },
  );

  api.get('/plans/:planId/recommend/:runId', { schema: { summary: 'Progress and result of a fleet kit recommendation', tags, params: runParams, response: { 200: fleetRecommendationJob, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    let run = await findKitRun(db, plan.id, request.params.runId);
    if (!run) throw new ApiError(404, 'not_found', 'run not found');
    // A run whose process is gone (restart) would never finish: say so instead of spinning.
    if (run.status === 'running' && run.lockedBy !== processId && run.lockedAt && Date.now() - run.lockedAt.getTime() > 60_000) {
      run = await updateKitRun(db, run.id, { status: 'failed', error: 'interrupted: the server restarted while it ran; start it again' });
    }
    // The summary column holds what runFleetRecommendation stored (FleetRecommendationSummary).
    return { id: run.id, status: run.status, progress: run.progress, error: run.error, createdAt: run.createdAt, finishedAt: run.finishedAt, result: (run.summary ?? null) as FleetRecommendationSummary | null };
  });

  api.get(
    '/plans/:planId/nodes/:nodeId/visit-sheet',
    { schema: { summary: "The installer's printable visit sheet (HTML; ?format=json for the same content as JSON)", tags, params: nodeParams, querystring: sheetQuery, response: { 200: { description: 'the printable page (text/html), or with ?format=json the same content as JSON', content: { 'application/json': { schema: visitSheetResponse }, 'text/html': { schema: z.string() } } }, ...errorResponses } } },
    async (request, reply) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const sheet = await nodeVisitSheet(engine, plan, request.params.nodeId).catch(asApiError);
      if (request.query.format === 'json') return sheet;
      return reply.type('text/html; charset=utf-8').send(visitSheetHtml(sheet, request.query.tz));
    },
  );

  registerReadingRoutes(api, engine, context);
}

/**
 * Loopback admin routes for `earshot link` / `earshot recommend` (server/cli/links.ts), registered
 * inside server/api/routes/admin.ts (so its loopback + local-secret check guards them):
 * POST /_admin/link, /_admin/recommend, calling the same use cases as the CLI's own process.
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
