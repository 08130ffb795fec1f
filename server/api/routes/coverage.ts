// Coverage runs of a plan: start (202 + the run), list, read (status,
// progress, summary), follow (SSE), cancel, map tiles, GeoTIFF export, and
// the legend of the tile colours. The work happens in server/jobs (pool or
// BullMQ workers) over server/coverage; these handlers only resolve inputs.
import { createReadStream, existsSync } from 'node:fs';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { cancelCoverageRun, createCoverageRun, findCoverageRun, listCoverageRuns, type CoverageRunRow } from '../../db/repositories/coverage-runs.ts';
import { openGeoRaster, type GeoRaster } from '../../terrain/raster.ts';
import { maxCoverageCells, resolveCoverageRequest } from '../../app/coverage.ts';
import { legend, renderMarginTile } from '../../coverage/tiles.ts';
import { createCoverageJobs, type CoverageJobs } from '../../jobs/runner.ts';
import type { CoverageJobParams } from '../../jobs/coverage-params.ts';
import { storedCoverageParams, storedCoverageSummary } from '../../jobs/coverage-params.ts';
import { COVERAGE_PARTS_KIND, coverageChildren } from '../../jobs/coverage-split.ts';
import { cancelLinkRunsOf } from '../../db/repositories/link-runs.ts';
import { resultDir, RESULT_FILES } from '../../db/files.ts';
import { requireRole } from '../auth.ts';
import { ApiError, apiErrorOf } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { streamRunProgress } from '../run-events.ts';
import { appliedCalibrationFigures } from '../../app/calibration.ts';
import { coverageRadiusKm, dateTime, errorResponses, id, nodeAntennaHeightAglM, nodeEnvironment, nodeFeedlineLengthM, nodeTxPowerDbm, pageOf, pageQuery, payloadBytes, planParams, runChildren, targetMarginDb } from '../schemas.ts';

const runParams = z.strictObject({ planId: id(), runId: id() });
const tileParams = z.strictObject({
  planId: id(),
  runId: id(),
  z: z.coerce.number().int('must be a whole number').min(0).max(22, 'must be ≤ 22'),
  x: z.coerce.number().int('must be a whole number').min(0, 'must be ≥ 0'),
  y: z.string().regex(/^\d+\.png$/, 'must be <y>.png'),
});

/** The kit a coverage map is drawn for: the same names and rules as a node's (server/api/schemas.ts builders). */
export const coverageNodeKit = z.strictObject({
  antennaDesignId: id().optional(),
  antennaHeightAglM: nodeAntennaHeightAglM().optional(),
  txPowerDbm: nodeTxPowerDbm().optional(),
  feedlineId: id().nullable().optional(),
  feedlineLengthM: nodeFeedlineLengthM().optional(),
  environment: nodeEnvironment().optional(),
  payloadBytes: payloadBytes().optional(),
});

export const coverageBody = z.strictObject({
  gatewayIds: z.array(id()).min(1, 'must list at least one gateway').max(100, 'at most 100 gateways').optional(),
  mode: z.enum(['fast', 'full'], { error: 'must be fast or full (los is a command-line mode: visibility has no margin)' }).optional(),
  radiusKm: coverageRadiusKm(),
  /** The node kit of every cell (defaults: a node's defaults). */
  nodeKit: coverageNodeKit.optional(),
  /** A fixed SF for every cell (default: the node SF rule, fastest allowed SF meeting the target). */
  sf: z.number().int('must be a whole number').min(7, 'must be 7–12').max(12, 'must be 7–12').optional(),
  targetMarginDb: targetMarginDb().optional(),
  /** Use the plan's clutter layer when it has one (default true). */
  useClutter: z.boolean({ error: 'must be true or false' }).optional(),
});

export { maxCoverageCells };

const areaShare = z.object({ cells: z.number().int(), share: z.number().describe('0 … 1'), areaKm2: z.number() });
/** The stored summary of a finished run (server/jobs/coverage-job.ts); fields added later are optional for older runs. */
const coverageSummary = z.object({
  cells: z.number().int(),
  areaKm2: z.number(),
  served: areaShare,
  marginal: areaShare,
  unserved: areaShare,
  nodes: z.object({ total: z.number().int(), served: z.number().int(), marginal: z.number().int(), unserved: z.number().int(), outside: z.number().int() }),
  gateways: z
    .array(z.object({ index: z.number().int(), bestServerCells: z.number().int(), nodes: z.number().int(), gatewayId: z.string(), name: z.string() }))
    .describe('per gateway: cells and nodes for which it is the best server'),
  mode: z.string().optional(),
  radiusKm: z.number().optional(),
  sf: z.number().int().nullable().optional(),
  targetMarginDb: z.number().optional(),
  terrain: z
    .object({
      discShare: z.number().describe('0 … 1: the smallest share of a gateway disc that had terrain'),
      perGateway: z.array(z.object({ gatewayId: z.string(), discShare: z.number() })).optional(),
      nodesOutside: z.array(z.object({ id: z.string(), name: z.string().nullable() })),
      note: z.string(),
    })
    .optional(),
  budget: z.object({ note: z.string(), allowedSfs: z.array(z.number().int()), kFactor: z.number() }).optional(),
  clutter: z.object({ layerId: z.string().nullable(), name: z.string().nullable(), heightsM: z.record(z.string(), z.number()).nullable(), note: z.string() }).optional(),
  grid: z.object({ widthPx: z.number().int(), heightPx: z.number().int(), geoTransform: z.array(z.number()), epsg: z.number().int().nullable() }).optional(),
});

/** A coverage run as the API answers it (runView). */
export const coverageRunResponse = z
  .object({
    id: z.string(),
    planId: z.string(),
    status: z.enum(['queued', 'running', 'done', 'failed', 'cancelled']),
    progress: z.number().describe('0 … 1; a run split into a child per gateway: the cells its children have predicted, summed, over all (95 %), then the composite'),
    error: z.string().nullable(),
    attempts: z.number().int().describe("attempts of the run's own job (the parent, for a split run)"),
    children: runChildren.nullable().describe('a run of several gateways is split into a child job per gateway; null: the run is one job (a single gateway, or a run from before the split)'),
    workers: z.array(z.string()).describe("ids (host:pid) of the workers that took part: the children's and the last one that held the run's own job"),
    gatewayIds: z.array(z.string()),
    mode: z.string().nullable().describe('fast | full (los from the command line)'),
    radiusKm: z.number().nullable(),
    sf: z.number().int().nullable(),
    targetMarginDb: z.number().nullable(),
    summary: coverageSummary.nullable().describe('null until done; shares of the area per margin class, node classes, per-gateway load'),
    createdAt: dateTime,
    startedAt: dateTime.nullable(),
    finishedAt: dateTime.nullable(),
  });
const legendResponse = z.object({
  quantity: z.string(),
  classes: z.array(z.object({ minMarginDb: z.number().describe('dB'), label: z.string(), colour: z.string().describe('#rrggbb') })),
  transparent: z.string(),
  note: z.string(),
});

export default async function coverageRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const tags = ['coverage'];

  async function runView(run: CoverageRunRow) {
    const params = storedCoverageParams<CoverageJobParams>(run.params);
    // A split run: progress and children summed from its children (live, so a parent whose worker died still shows them move).
    const split = await coverageChildren(db, run);
    const gatewayCount = (run.gatewayIds as string[]).length;
    const children = split?.children ?? (gatewayCount > 1 && run.status === 'queued' ? { total: gatewayCount, done: 0, retried: 0, failed: 0, cancelled: 0 } : null);
    const workers = [...new Set([...(split?.workers ?? []), ...(run.lockedBy ? [run.lockedBy] : [])])].sort();
    return {
      id: run.id,
      planId: run.planId,
      status: run.status,
      progress: run.status === 'done' ? 1 : split && run.status === 'running' ? Math.min(0.999, Math.max(run.progress, split.fraction)) : run.progress,
      error: run.error,
      attempts: run.attempts,
      children,
      workers,
      gatewayIds: run.gatewayIds as string[],
      mode: params.mode ?? null,
      radiusKm: params.radiusKm ?? null,
      sf: params.sf ?? null,
      targetMarginDb: params.targetMarginDb ?? null,
      // Stored by the coverage job in this shape (server/jobs/coverage-job.ts).
      summary: storedCoverageSummary(run.summary) as z.infer<typeof coverageSummary> | null,
      createdAt: run.createdAt.toISOString(),
      startedAt: run.startedAt?.toISOString() ?? null,
      finishedAt: run.finishedAt?.toISOString() ?? null,
    };
  }

  // The job runner: the one the app was given, else our own (pool, or BullMQ with REDIS_URL), closed with the app.
  let jobs: CoverageJobs;
  const given = app.deps.jobs as Partial<CoverageJobs> | undefined;
  if (given && typeof given.enqueue === 'function') jobs = given as CoverageJobs;
  else {
    jobs = await createCoverageJobs(db, config, app.linkEngine);
    app.addHook('onClose', async () => jobs.close());
  }
  const rasterCache = new Map<string, Promise<GeoRaster>>();
  app.addHook('onClose', async () => {
    for (const raster of rasterCache.values()) await (await raster.catch(() => null))?.close();
  });

  async function loadRun(request: { principal: Parameters<typeof loadPlanForPrincipal>[1] }, planId: string, runId: string) {
    const plan = await loadPlanForPrincipal(db, request.principal, planId);
    const run = await findCoverageRun(db, plan.id, runId);
    if (!run) throw new ApiError(404, 'not_found', 'coverage run not found');
    return { plan, run };
  }

  function resultRaster(run: CoverageRunRow, file: string): Promise<GeoRaster> {
    if (run.status !== 'done') throw new ApiError(409, 'not_ready', `the run is ${run.status}; results exist once it is done`);
    const path = join(resultDir(config, run.id), file);
    if (!existsSync(path)) throw new ApiError(410, 'result_missing', 'the result files of this run are gone');
    let raster = rasterCache.get(path);
    if (!raster) {
      raster = openGeoRaster(path);
      rasterCache.set(path, raster);
      if (rasterCache.size > 32) {
        const [oldest, value] = rasterCache.entries().next().value as [string, Promise<GeoRaster>];
        rasterCache.delete(oldest);
        void value.then((r) => r.close()).catch(() => undefined);
      }
    }
    return raster;
  }

  api.get('/coverage/legend', { schema: { summary: 'Colours of the coverage tiles (margin classes)', tags, response: { 200: legendResponse, ...errorResponses } } }, async () => legend());

  api.post(
    '/plans/:planId/coverage',
    { schema: { summary: 'Start a coverage run over some or all gateways (202 with the queued run)', tags, params: planParams, body: coverageBody, response: { 202: coverageRunResponse, ...errorResponses } } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      // An applied calibration (server/app/calibration.ts) shifts every cell by its bias and gives the spread.
      const calibration = await appliedCalibrationFigures(db, plan.id);
      const params = await resolveCoverageRequest(app.linkEngine, config, plan, request.body, calibration).catch((error: unknown) => {
        throw apiErrorOf(error) ?? error;
      });
      const gateways = params.gateways;
      const run = await writeWithAudit(
        db,
        (tx) => createCoverageRun(tx, plan.id, { gatewayIds: gateways.map((g) => g.id), params, createdById: principal.userId }),
        (created) => ({ principal, action: 'create', entity: 'coverage_run', entityId: created.id, detail: { planId: plan.id, mode: params.mode, radiusKm: params.radiusKm, gateways: gateways.length } }),
      );
      // Queued only after the commit, so a worker never picks up a run that was rolled back.
      await jobs.enqueue(run.id);
      reply.code(202);
      return runView(run);
    },
  );

  api.get('/plans/:planId/coverage', { schema: { summary: 'Coverage runs of a plan, newest first', tags, params: planParams, querystring: pageQuery, response: { 200: pageOf(coverageRunResponse), ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const page = await listCoverageRuns(db, plan.id, request.query);
    return { ...page, items: await Promise.all(page.items.map(runView)) };
  });

  const layerQuery = z.strictObject({ layer: z.enum(['margin', 'loss', 'redundancy', 'best-sf'], { error: 'must be margin, loss, redundancy or best-sf' }).optional() });
  api.get(
    '/plans/:planId/coverage/:runId',
    {
      schema: {
        summary: 'One coverage run (status, progress, summary); with ".tif" after the id, the GeoTIFF export: Float32 margin (or ?layer=loss | redundancy | best-sf), NoData outside',
        tags,
        params: runParams,
        querystring: layerQuery,
        // The .tif export is a stream: Fastify sends streams without the serializer.
        response: { 200: coverageRunResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const exporting = request.params.runId.endsWith('.tif');
      const runId = exporting ? request.params.runId.slice(0, -4) : request.params.runId;
      const { run } = await loadRun(request, request.params.planId, runId);
      if (!exporting) return runView(run);
      const layer = request.query.layer ?? 'margin';
      const file = layer === 'margin' ? RESULT_FILES.margin : layer === 'loss' ? RESULT_FILES.loss : layer === 'redundancy' ? RESULT_FILES.redundancy : RESULT_FILES.bestSf;
      await resultRaster(run, file);
      reply.header('content-type', 'image/tiff').header('content-disposition', `attachment; filename="coverage-${run.id}-${layer}.tif"`);
      // A stream is sent as it is (Fastify skips the serializer); the 200 schema describes the JSON form.
      return reply.send(createReadStream(join(resultDir(config, run.id), file)) as unknown as Awaited<ReturnType<typeof runView>>);
    },
  );

  api.get('/plans/:planId/coverage/:runId/events', { schema: { summary: 'Progress of a run as server-sent events until it finishes (text/event-stream)', tags, params: runParams } }, async (request, reply) => {
    const { plan, run } = await loadRun(request, request.params.planId, request.params.runId);
    await streamRunProgress(request, reply, await runView(run), async () => {
      const current = await findCoverageRun(db, plan.id, run.id);
      return current ? runView(current) : null;
    });
  });

  api.post('/plans/:planId/coverage/:runId/cancel', { schema: { summary: 'Cancel a queued or running coverage run', tags, params: runParams, response: { 200: coverageRunResponse, ...errorResponses } } }, async (request) => {
    const principal = requireRole(request, 'planner');
    const { plan, run } = await loadRun(request, request.params.planId, request.params.runId);
    // The run and every unfinished child in one write; then the queued children leave the queue
    // (a running one stops at its next check and writes nothing).
    const children = await writeWithAudit(
      db,
      async (tx) => {
        if (!(await cancelCoverageRun(tx, plan.id, run.id))) throw new ApiError(409, 'already_finished', `the run is already ${run.status}`);
        return cancelLinkRunsOf(tx, COVERAGE_PARTS_KIND, 'coverageRunId', run.id);
      },
      () => ({ principal, action: 'cancel', entity: 'coverage_run', entityId: run.id, detail: { planId: plan.id } }),
    );
    for (const child of children) await jobs.parts.withdraw(child.runId, child.pending);
    return runView((await findCoverageRun(db, plan.id, run.id))!);
  });

  api.get('/plans/:planId/coverage/:runId/tiles/:z/:x/:y', { schema: { summary: 'Map tile (Web Mercator XYZ, 256 px PNG) of the margin; colours: GET /coverage/legend', tags, params: tileParams } }, async (request, reply) => {
    const { run } = await loadRun(request, request.params.planId, request.params.runId);
    const y = Number(request.params.y.replace(/\.png$/, ''));
    const raster = await resultRaster(run, RESULT_FILES.margin);
    const png = await app.tileRenders(() => renderMarginTile(raster, request.params.z, request.params.x, y));
    if (!png) throw new ApiError(400, 'invalid_input', 'tile: x and y must be within 0 … 2^z − 1');
    reply.header('content-type', 'image/png').header('cache-control', 'private, max-age=3600');
    return reply.send(Buffer.from(png));
  });

}
