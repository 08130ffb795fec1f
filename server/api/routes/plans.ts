// Plans of the caller's team: list, create (only a name is needed), read, update (with
// version), delete. Planners edit; everyone in the team reads.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { bandPlans } from '../../radio/band-plans.ts';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { createPlan, deletePlanReturningFiles, listPlans, planCounts, updatePlan } from '../../db/repositories/plans.ts';
import { removePlanFiles } from '../../db/files.ts';
import type { JsonValue } from '../../db/types.ts';
import { requireRole } from '../auth.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, jsonObject, name, notes, pageOf, pageQuery, planParams, sigmaDb, targetMarginDb, version } from '../schemas.ts';

const bandPlanIds = bandPlans.map((plan) => plan.id) as [string, ...string[]];

const planFields = {
  name: name(),
  description: notes().optional(),
  bandPlanId: z.enum(bandPlanIds, { error: `must be one of ${bandPlanIds.join(', ')}` }).optional(),
  targetMarginDb: targetMarginDb().optional(),
  locationSigmaDb: sigmaDb().nullable().optional(),
  modelSigmaDb: sigmaDb().nullable().optional(),
  propagationMethod: z.string().regex(/^[a-z0-9-]{1,40}$/, 'must be a method id such as p1812').optional(),
  settings: jsonObject.optional(),
};

/** A plan as the API answers it: every field listed (the serializer drops unlisted keys). */
export const planResponse = z
  .object({
    id: z.string(),
    teamId: z.string(),
    name: z.string(),
    description: z.string(),
    bandPlanId: z.string().describe('band plan id (server/radio band plans)'),
    targetMarginDb: z.number().describe('dB'),
    locationSigmaDb: z.number().nullable().describe('σL, dB; null = ITU-R P.1812-8 §4.8 with its height factor'),
    modelSigmaDb: z.number().nullable().describe('σM (model prediction error), dB; null = the default 6 dB'),
    propagationMethod: z.string(),
    settings: z.unknown().describe('free-form JSON object'),
    version: z.number().int(),
    createdAt: dateTime,
    updatedAt: dateTime,
  });
const planWithCounts = planResponse.extend({ counts: z.object({ sites: z.number().int(), gateways: z.number().int(), nodes: z.number().int(), terrainLayers: z.number().int() }) });

export const planCreateBody = z.strictObject(planFields);
export const planPatchBody = z.strictObject({ ...planFields, name: name().optional(), version: version() });

function toData<T extends { settings?: Record<string, unknown> }>(body: T) {
  const { settings, ...rest } = body;
  return settings === undefined ? rest : { ...rest, settings: settings as JsonValue };
}

export default async function planRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['plans'];

  api.get('/plans', { schema: { summary: "The team's plans", tags, querystring: pageQuery, response: { 200: pageOf(planResponse), ...errorResponses } } }, async (request) =>
    listPlans(db, request.principal.teamId, request.query),
  );

  api.post('/plans', { schema: { summary: 'Create a plan (only name is required; defaults: US 902-928 MHz, 10 dB target margin, P.1812)', tags, body: planCreateBody, response: { 201: planResponse, ...errorResponses } } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await writeWithAudit(
      db,
      (tx) => createPlan(tx, principal.teamId, toData(request.body)),
      (created) => ({ principal, action: 'create', entity: 'plan', entityId: created.id, detail: { name: created.name } }),
    );
    return reply.status(201).send(plan);
  });

  api.get('/plans/:planId', { schema: { summary: 'One plan with counts of what it holds', tags, params: planParams, response: { 200: planWithCounts, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    return { ...plan, counts: await planCounts(db, plan.id) };
  });

  api.patch('/plans/:planId', { schema: { summary: 'Update a plan (send the version you read; stale -> 409)', tags, params: planParams, body: planPatchBody, response: { 200: planResponse, ...errorResponses } } }, async (request) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const { version: expected, ...patch } = request.body;
    const updated = await writeWithAudit(
      db,
      (tx) => updatePlan(tx, principal.teamId, plan.id, expected, toData(patch)),
      (row) => ({ principal, action: 'update', entity: 'plan', entityId: plan.id, detail: { fields: Object.keys(patch), version: row.version } }),
    );
    return updated;
  });

  api.delete('/plans/:planId', { schema: { summary: 'Delete a plan and everything in it', tags, params: planParams } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const files = await writeWithAudit(
      db,
      (tx) => deletePlanReturningFiles(tx, principal.teamId, plan.id),
      () => ({ principal, action: 'delete', entity: 'plan', entityId: plan.id, detail: { name: plan.name } }),
    );
    // Only after the commit: a rolled-back delete keeps its files.
    const failed = await removePlanFiles(app.deps.config.filesDir, plan.id, files);
    if (failed.length > 0) request.log.warn({ planId: plan.id, failed }, 'plan deleted; some of its files could not be removed');
    return reply.status(204).send();
  });
}
