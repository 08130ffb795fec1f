// Gateway siting runs of a plan: start (202), read (status, progress, answer),
// the node × candidate matrix, follow (SSE), cancel, apply (create the chosen
// gateways). The work is the use case in server/app/siting.ts.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { applyRun, cancelRun, createSitingRequest, findRun, runMatrix, SitingJobs, sitingReport, undoRun, type SitingDeps } from '../../app/siting.ts';
import type { SitingRunSummaryRow } from '../../db/repositories/siting-runs.ts';
import { createLinkRunJobs } from '../../jobs/link-runs.ts';
import { listSitingRuns } from '../../db/repositories/siting-runs.ts';
import { requireRole } from '../auth.ts';
import { apiErrorOf } from '../errors.ts';
import { streamRunProgress } from '../run-events.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, finite, id, maxNodesPerGateway, nonNegative, pageOf, pageQuery, planParams } from '../schemas.ts';

const runParams = z.strictObject({ planId: id(), runId: id() });

const wholeNumber = (min: number, max: number, unit = '') =>
  z
    .number({ error: 'must be a number' })
    .int('must be a whole number')
    .min(min, `must be ≥ ${min}${unit}`)
    .max(max, `must be ≤ ${max}${unit}`);

export const sitingBody = z.strictObject({
  requiredGateways: wholeNumber(1, 3).describe('k: gateways each node should hear (1–3; capped by how many candidates can hear it)'),
  candidates: z.strictObject({
    sites: z.boolean({ error: 'must be true or false' }).describe("the plan's sites marked as candidates (kind candidate), or those in siteIds"),
    terrainPoints: wholeNumber(0, 500).describe('how many terrain high points to add'),
    siteIds: z.array(id()).max(1000, 'at most 1000 sites').optional(),
    spacingM: finite().min(30, 'must be ≥ 30 m').max(50_000, 'must be ≤ 50000 m').optional().describe('least distance between terrain points, m (default 500)'),
    terrainPointCostUsd: nonNegative().max(1e7, 'must be ≤ 10000000 USD').optional().describe('site cost assumed for a terrain point, USD (default 0; the kit is always counted)'),
  }),
  keepExistingGateways: z
    .boolean({ error: 'must be true or false' })
    .describe("true: the plan's gateways stay as built (fixed, cost 0). false: start over — they become ordinary candidates (cost 0 USD, built already) and apply replaces the plan's gateways with the answer (dropped ones removed; undo restores them)"),
  minimise: z.enum(['gateways', 'cost'], { error: 'must be gateways or cost' }).optional(),
  maxGateways: wholeNumber(0, 10_000).optional(),
  budgetUsd: finite().min(0, 'must be ≥ 0 USD').max(1e9, 'must be ≤ 1000000000 USD').optional(),
  maxNodesPerGateway: maxNodesPerGateway().optional().describe('capacity cap: each gateway serves at most this many nodes (FIELD_RANGES.maxNodesPerGateway)'),
  gatewayKit: z
    .strictObject({
      antennaDesignId: id().optional(),
      antennaHeightAglM: finite().min(0.5, 'must be ≥ 0.5 m').max(500, 'must be ≤ 500 m').optional(),
      feedlineId: id().optional(),
      feedlineLengthM: nonNegative().max(1000, 'must be ≤ 1000 m').optional(),
      mastOptionId: id().nullable().optional(),
      noiseFigureDb: finite().min(0, 'must be ≥ 0 dB').max(20, 'must be ≤ 20 dB').optional(),
    })
    .optional(),
  excludeAreas: z.array(z.unknown()).max(200, 'at most 200 areas').optional().describe('GeoJSON Polygon / MultiPolygon geometries or Features; candidates inside are left out'),
  timeLimitS: finite().min(0.1, 'must be ≥ 0.1 s').max(600, 'must be ≤ 600 s').optional().describe('solver time limit (default 10 s)'),
});

const selectedSchema = z.object({
  rank: z.number().int(),
  candidateId: z.string(),
  source: z.enum(['site', 'gateway', 'terrain']),
  siteId: z.string().nullable(),
  gatewayId: z.string().nullable(),
  name: z.string(),
  lat: z.number(),
  lon: z.number(),
  antennaHeightAglM: z.number().describe('m above ground'),
  costUsd: z.number().describe('USD: site cost + kit'),
  kept: z.boolean().describe('an existing gateway that stays (kept as built, or chosen among the candidates with keepExistingGateways false)'),
  nodesHeard: z.number().int(),
  nodesOnlyHere: z.number().int().describe('nodes that fall short of their requirement if this site is dropped'),
  nodeIdsOnlyHere: z.array(z.string()),
});

const resultSchema = z.object({
  selected: z.array(selectedSchema),
  coveredNodeIds: z.array(z.string()),
  uncoveredNodeIds: z.array(z.string()),
  uncovered: z.array(z.object({ nodeId: z.string(), name: z.string(), reason: z.string() })),
  shortOfRequired: z.array(z.object({ nodeId: z.string(), name: z.string(), candidatesHearing: z.number().int() })),
  nodesCoverable: z.number().int(),
  nodesTotal: z.number().int(),
  requiredGateways: z.number().int(),
  objective: z.object({ gateways: z.number().int(), costUsd: z.number() }),
  minimise: z.string(),
  status: z.enum(['optimal', 'feasible', 'infeasible']),
  message: z.string().nullable(),
  optimal: z.boolean(),
  gapPercent: z.number().nullable(),
  bound: z.number().nullable(),
  solver: z.string(),
  seconds: z.number(),
  greedy: z.object({ gateways: z.number().int(), costUsd: z.number(), nodesCovered: z.number().int(), feasible: z.boolean(), seconds: z.number() }),
  matrix: z.object({ nodes: z.number().int(), candidates: z.number().int(), pairsPredicted: z.number().int(), pairsSkipped: z.number().int(), cached: z.boolean(), seconds: z.number() }),
  before: z.object({ gateways: z.number().int() }),
  after: z.object({ gateways: z.number().int() }),
  removed: z.array(z.object({ gatewayId: z.string(), name: z.string() })).optional().describe('keepExistingGateways false: existing gateways the answer drops; apply removes them, undo restores them'),
  warnings: z.array(z.string()),
});

export const sitingRunResponse = z.object({
  id: z.string(),
  planId: z.string(),
  status: z.enum(['queued', 'running', 'done', 'failed', 'cancelled']),
  progress: z.number().describe('0 … 1'),
  error: z.string().nullable(),
  params: z.unknown(),
  result: resultSchema.nullable(),
  appliedAt: dateTime.nullable(),
  appliedGatewayIds: z.array(z.string()).nullable(),
  undoneAt: dateTime.nullable(),
  createdAt: dateTime,
  startedAt: dateTime.nullable(),
  finishedAt: dateTime.nullable(),
});

const matrixResponse = z.object({
  nodeIds: z.array(z.string()),
  nodeNames: z.array(z.string()),
  candidates: z.array(z.object({ id: z.string(), siteId: z.string().nullable(), gatewayId: z.string().nullable(), name: z.string(), lat: z.number(), lon: z.number(), costUsd: z.number(), fixed: z.boolean(), source: z.string(), antennaHeightAglM: z.number() })),
  meets: z.array(z.array(z.boolean())).describe("node rows × candidate columns: the link alone meets the plan's served rule (as the link table)"),
  marginDb: z.array(z.array(z.number().nullable())).describe('dB at the SF the node would use; null = not predicted (out of range, beyond the horizon)'),
  pairsPredicted: z.number().int(),
  pairsSkipped: z.number().int(),
  warnings: z.array(z.string()),
});

const applyResponse = z.object({
  gatewayIds: z.array(z.string()),
  gateways: z.array(z.object({ id: z.string(), name: z.string(), candidateId: z.string() })),
  removedGatewayIds: z.array(z.string()).describe('keepExistingGateways false: the existing gateways removed (undo restores them)'),
});
const undoResponse = z.object({ deletedGatewayIds: z.array(z.string()), restoredGatewayIds: z.array(z.string()) });

function runView(run: SitingRunSummaryRow) {
  return {
    id: run.id,
    planId: run.planId,
    status: run.status,
    progress: run.progress,
    error: run.error,
    params: run.params,
    result: (run.result ?? null) as z.infer<typeof resultSchema> | null,
    appliedAt: run.appliedAt?.toISOString() ?? null,
    appliedGatewayIds: (run.appliedGatewayIds ?? null) as string[] | null,
    undoneAt: run.undoneAt?.toISOString() ?? null,
    createdAt: run.createdAt.toISOString(),
    startedAt: run.startedAt?.toISOString() ?? null,
    finishedAt: run.finishedAt?.toISOString() ?? null,
  };
}

/** Maps the use case's errors onto API errors. */
async function mapped<T>(work: () => Promise<T>): Promise<T> {
  try {
    return await work();
  } catch (error) {
    throw apiErrorOf(error) ?? error;
  }
}

export default async function sitingRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  // With Redis the matrix is split over the queue workers (server/jobs/siting-matrix-split.ts).
  const matrixJobs = app.deps.config.redisUrl ? await createLinkRunJobs(app.deps.db, app.deps.config, app.linkEngine) : undefined;
  if (matrixJobs) app.addHook('onClose', async () => matrixJobs.close());
  const deps: SitingDeps = { db: app.deps.db, engine: app.linkEngine, matrixJobs };
  const jobs = await SitingJobs.start(deps);
  app.addHook('onClose', async () => jobs.close());
  const tags = ['siting'];

  api.post(
    '/plans/:planId/siting',
    { schema: { summary: 'Start a gateway siting run: candidates → link matrix → exact MILP (202 with the queued run)', tags, params: planParams, body: sitingBody, response: { 202: sitingRunResponse, ...errorResponses } } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(app.deps.db, principal, request.params.planId);
      const run = await mapped(() => createSitingRequest(deps, principal, plan, request.body));
      jobs.enqueue(run.id);
      reply.code(202);
      return runView(run);
    },
  );

  api.get('/plans/:planId/siting', { schema: { summary: 'Siting runs of a plan, newest first', tags, params: planParams, querystring: pageQuery, response: { 200: pageOf(sitingRunResponse), ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(app.deps.db, request.principal, request.params.planId);
    const page = await listSitingRuns(app.deps.db, plan.id, request.query);
    return { ...page, items: page.items.map(runView) };
  });

  api.get('/plans/:planId/siting/:runId', { schema: { summary: 'One siting run: status, progress, and once done the chosen sites, covered and uncovered nodes, optimality', tags, params: runParams, response: { 200: sitingRunResponse, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(app.deps.db, request.principal, request.params.planId);
    return runView(await mapped(() => findRun(deps, plan.id, request.params.runId)));
  });

  api.get('/plans/:planId/siting/:runId/matrix', { schema: { summary: 'The node × candidate matrix the run solved (meets and margin per pair)', tags, params: runParams, response: { 200: matrixResponse, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(app.deps.db, request.principal, request.params.planId);
    const matrix = await mapped(() => runMatrix(deps, plan.id, request.params.runId));
    return { ...matrix, candidates: matrix.candidates.map((c) => ({ id: c.id, siteId: c.siteId, gatewayId: c.gatewayId, name: c.name, lat: c.lat, lon: c.lon, costUsd: c.costUsd, fixed: c.fixed, source: c.source, antennaHeightAglM: c.antennaHeightAglM })) };
  });

  api.get('/plans/:planId/siting/:runId/events', { schema: { summary: 'Progress of a siting run as server-sent events until it finishes (text/event-stream)', tags, params: runParams } }, async (request, reply) => {
    const plan = await loadPlanForPrincipal(app.deps.db, request.principal, request.params.planId);
    const run = await mapped(() => findRun(deps, plan.id, request.params.runId));
    await streamRunProgress(request, reply, run, async () => findRun(deps, plan.id, run.id).catch(() => null));
  });

  api.post('/plans/:planId/siting/:runId/cancel', { schema: { summary: 'Cancel a queued or running siting run', tags, params: runParams, response: { 200: sitingRunResponse, ...errorResponses } } }, async (request) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(app.deps.db, principal, request.params.planId);
    return runView(await mapped(() => cancelRun(deps, principal, plan.id, request.params.runId)));
  });

  api.post('/plans/:planId/siting/:runId/apply', { schema: { summary: 'Create the chosen gateways in the plan (once; 409 when the plan changed since the run)', tags, params: runParams, response: { 201: applyResponse, ...errorResponses } } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(app.deps.db, principal, request.params.planId);
    const applied = await mapped(() => applyRun(deps, principal, plan.id, request.params.runId));
    reply.code(201);
    return applied;
  });

  api.post(
    '/plans/:planId/siting/:runId/undo',
    { schema: { summary: 'Undo an apply, once: delete the gateways it created and restore those it removed (keepExistingGateways false)', tags, params: runParams, response: { 200: undoResponse, ...errorResponses } } },
    async (request) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(app.deps.db, principal, request.params.planId);
      return mapped(() => undoRun(deps, principal, plan.id, request.params.runId));
    },
  );
}

/** `earshot siting` while this server holds the data folder: the same use case, on the loopback admin route. */
export const sitingReportInput = sitingBody.extend({ plan: id() });

export async function sitingAdminRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  // With Redis the matrix is split over the queue workers (server/jobs/siting-matrix-split.ts).
  const matrixJobs = app.deps.config.redisUrl ? await createLinkRunJobs(app.deps.db, app.deps.config, app.linkEngine) : undefined;
  if (matrixJobs) app.addHook('onClose', async () => matrixJobs.close());
  const deps: SitingDeps = { db: app.deps.db, engine: app.linkEngine, matrixJobs };
  api.post('/siting', { schema: { hide: true, body: sitingReportInput } }, async (request) => runView(await mapped(() => sitingReport(deps, request.body))));
}
