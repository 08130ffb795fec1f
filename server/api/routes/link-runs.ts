// Fleet link table runs (issue 20): start (202), read (status, progress summed
// from the tiles, workers that took part), list, cancel. The tiles run in this
// process without Redis, or on `npm run worker` processes with REDIS_URL; the
// use case is server/app/link-runs.ts.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { cancelLinkRunFor, findLinkRunView, listLinkRunViews, startLinkRun, TILE_PAIRS_RANGE, type LinkRunDeps } from '../../app/link-runs.ts';
import { createLinkRunJobs } from '../../jobs/link-runs.ts';
import type { LinkRunJobs } from '../../jobs/link-run-jobs.ts';
import { requireRole } from '../auth.ts';
import { apiErrorOf } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, id, planParams, runChildren } from '../schemas.ts';

const runParams = z.strictObject({ planId: id(), runId: id() });

export const linkRunBody = z.strictObject({
  tilePairs: z
    .number({ error: 'must be a number' })
    .int('must be a whole number')
    .min(TILE_PAIRS_RANGE.min, `must be ≥ ${TILE_PAIRS_RANGE.min}`)
    .max(TILE_PAIRS_RANGE.max, `must be ≤ ${TILE_PAIRS_RANGE.max}`)
    .optional()
    .describe('node × gateway pairs within range per child job (default 1500: a few seconds of one core)'),
});

const status = z.enum(['queued', 'running', 'done', 'failed', 'cancelled']);

export const linkRunResponse = z.object({
  id: z.string(),
  planId: z.string(),
  status,
  progress: z.number().describe('0 … 1: pairs of the finished children, plus the paths the running children have predicted so far, over all pairs'),
  children: runChildren,
  workers: z.array(z.string()).describe('ids (host:pid) of the workers that took part'),
  pairs: z.number().int().describe('node × gateway pairs within range'),
  pairsDone: z.number().int(),
  linksWritten: z.number().int().describe('Link rows written (pairs already cached with the same inputs are not rewritten)'),
  seconds: z.number().describe('wall time since the first child started, s'),
  writeShare: z.number().nullable().describe("share of the children's time spent writing rows to the database"),
  nodes: z.number().int().nullable(),
  gateways: z.number().int().nullable(),
  tilePairs: z.number().int().nullable(),
  pairsOutOfRange: z.number().int().nullable().describe("pairs beyond the plan's link range, skipped"),
  error: z.string().nullable(),
  warnings: z.array(z.string()),
  createdAt: dateTime,
  startedAt: dateTime.nullable(),
  finishedAt: dateTime.nullable(),
});

export default async function linkRunRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const tags = ['links'];
  const jobs: LinkRunJobs = await createLinkRunJobs(db, config, app.linkEngine);
  app.addHook('onClose', async () => jobs.close());
  const deps: LinkRunDeps = { engine: app.linkEngine, jobs };
  const fail = (error: unknown): never => {
    throw apiErrorOf(error) ?? error;
  };

  api.post(
    '/plans/:planId/links/runs',
    {
      schema: {
        summary: 'Start a fleet link table run split into child jobs (tiles of nodes × gateways) over the queue workers, or this process without Redis; 202 with the run',
        tags,
        params: planParams,
        body: linkRunBody.optional(),
        response: { 202: linkRunResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const view = await startLinkRun(deps, principal, plan, request.body ?? {}).catch(fail);
      reply.code(202);
      return view;
    },
  );

  api.get(
    '/plans/:planId/links/runs',
    { schema: { summary: 'The latest fleet link table runs of a plan (20), newest first', tags, params: planParams, response: { 200: z.object({ items: z.array(linkRunResponse) }), ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return { items: await listLinkRunViews(deps, plan.id) };
    },
  );

  api.get(
    '/plans/:planId/links/runs/:runId',
    { schema: { summary: 'A fleet link table run: status, progress summed from its children, children done and retried, workers that took part, pairs, seconds', tags, params: runParams, response: { 200: linkRunResponse, ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return findLinkRunView(deps, plan.id, request.params.runId).catch(fail);
    },
  );

  api.post(
    '/plans/:planId/links/runs/:runId/cancel',
    { schema: { summary: 'Cancel a queued or running fleet link table run: every unfinished child stops (a running one at its next batch, writing nothing)', tags, params: runParams, response: { 200: linkRunResponse, ...errorResponses } } },
    async (request) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      return cancelLinkRunFor(deps, principal, plan.id, request.params.runId).catch(fail);
    },
  );
}
