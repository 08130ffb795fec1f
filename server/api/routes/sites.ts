// Sites of a plan: candidate or used mounting places for gateways.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { createSite, deleteSite, findSite, listSites, updateSite } from '../../db/repositories/sites.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, finite, latitude, longitude, name, nonNegative, notes, pageOf, pageQuery, planItemParams, planParams, version } from '../schemas.ts';

const siteFields = {
  name: name(),
  lat: latitude(),
  lon: longitude(),
  groundM: finite().min(-500, 'must be ≥ -500 m').max(9000, 'must be ≤ 9000 m').nullable().optional(),
  kind: z.enum(['candidate', 'used'], { error: 'must be candidate or used' }).optional(),
  notes: notes().optional(),
  costUsd: nonNegative().nullable().optional(),
  maxAntennaHeightAglM: nonNegative().max(500, 'must be ≤ 500 m').nullable().optional(),
};
/** A site as the API answers it: every field listed (the serializer drops unlisted keys). */
export const siteResponse = z
  .object({
    id: z.string(),
    planId: z.string(),
    name: z.string(),
    lat: z.number().describe('degrees WGS84'),
    lon: z.number().describe('degrees WGS84'),
    groundM: z.number().nullable().describe('m above mean sea level; null = from the terrain'),
    kind: z.enum(['candidate', 'used']),
    notes: z.string(),
    costUsd: z.number().nullable(),
    maxAntennaHeightAglM: z.number().nullable().describe('m above ground'),
    version: z.number().int(),
    createdAt: dateTime,
    updatedAt: dateTime,
  });
export const siteCreateBody = z.strictObject(siteFields);
export const sitePatchBody = z.strictObject({ ...siteFields, name: name().optional(), lat: latitude().optional(), lon: longitude().optional(), version: version() });

export default async function siteRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['sites'];

  api.get('/plans/:planId/sites', { schema: { summary: 'Sites of a plan', tags, params: planParams, querystring: pageQuery.extend({ kind: z.enum(['candidate', 'used']).optional() }), response: { 200: pageOf(siteResponse), ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const { kind, ...page } = request.query;
    return listSites(db, plan.id, page, kind ? { kind } : {});
  });

  api.post('/plans/:planId/sites', { schema: { summary: 'Add a site', tags, params: planParams, body: siteCreateBody, response: { 201: siteResponse, ...errorResponses } } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const site = await writeWithAudit(db, (tx) => createSite(tx, plan.id, request.body), (row) => ({ principal, action: 'create', entity: 'site', entityId: row.id, detail: { planId: plan.id, name: row.name } }));
    return reply.status(201).send(site);
  });

  api.get('/plans/:planId/sites/:id', { schema: { summary: 'One site', tags, params: planItemParams, response: { 200: siteResponse, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const site = await findSite(db, plan.id, request.params.id);
    if (!site) throw new ApiError(404, 'not_found', 'site not found');
    return site;
  });

  api.patch('/plans/:planId/sites/:id', { schema: { summary: 'Update a site (send the version you read)', tags, params: planItemParams, body: sitePatchBody, response: { 200: siteResponse, ...errorResponses } } }, async (request) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const { version: expected, ...patch } = request.body;
    const site = await writeWithAudit(db, (tx) => updateSite(tx, plan.id, request.params.id, expected, patch), (row) => ({ principal, action: 'update', entity: 'site', entityId: row.id, detail: { planId: plan.id, fields: Object.keys(patch), version: row.version } }));
    return site;
  });

  api.delete('/plans/:planId/sites/:id', { schema: { summary: 'Delete a site (its gateways stay, unlinked from it)', tags, params: planItemParams } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    await writeWithAudit(db, (tx) => deleteSite(tx, plan.id, request.params.id), () => ({ principal, action: 'delete', entity: 'site', entityId: request.params.id, detail: { planId: plan.id } }));
    return reply.status(204).send();
  });
}
