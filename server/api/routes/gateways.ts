// Gateways of a plan: position (or a site), antenna and where it points, mast height, feedline, noise figure.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { createGateway, deleteGateway, findGateway, listGateways, updateGateway } from '../../db/repositories/gateways.ts';
import { findSite } from '../../db/repositories/sites.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { assertKitVisible } from '../kit-check.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, finite, gatewayAntennaHeightAglM, gatewayFeedlineLengthM, gatewayTxPowerDbm, id, latitude, longitude, name, noiseFigureDb, notes, pageOf, pageQuery, planItemParams, planParams, version } from '../schemas.ts';

import { DEFAULT_GATEWAY_ANTENNA_ID as defaultGatewayAntennaId, DEFAULT_GATEWAY_FEEDLINE_ID as defaultGatewayFeedlineId } from '../../planning/gateway-kit.ts';

export { defaultGatewayAntennaId, defaultGatewayFeedlineId };

const gatewayFields = {
  name: name(),
  siteId: id().nullable().optional(),
  lat: latitude().optional(),
  lon: longitude().optional(),
  antennaDesignId: id().optional(),
  antennaHeightAglM: gatewayAntennaHeightAglM().optional(),
  antennaAzimuthDeg: finite()
    .min(0, 'must be ≥ 0° (degrees clockwise from true north)')
    .lt(360, 'must be < 360° (degrees clockwise from true north)')
    .nullable()
    .optional()
    .describe('where a directional gateway antenna points, degrees clockwise from true north; null or absent = omni, or a directional antenna aimed at each node'),
  feedlineId: id().optional(),
  feedlineLengthM: gatewayFeedlineLengthM().optional(),
  mastOptionId: id().nullable().optional(),
  noiseFigureDb: noiseFigureDb().optional(),
  txPowerDbm: gatewayTxPowerDbm().optional(),
  notes: notes().optional(),
};
/** A gateway as the API answers it: every field listed (the serializer drops unlisted keys). */
export const gatewayResponse = z
  .object({
    id: z.string(),
    planId: z.string(),
    siteId: z.string().nullable(),
    name: z.string(),
    lat: z.number().describe('degrees WGS84'),
    lon: z.number().describe('degrees WGS84'),
    antennaDesignId: z.string(),
    antennaHeightAglM: z.number().describe('m above ground'),
    antennaAzimuthDeg: z.number().nullable().describe('degrees clockwise from true north where a directional antenna points; null = omni / aimed at each node'),
    feedlineId: z.string(),
    feedlineLengthM: z.number().describe('m'),
    mastOptionId: z.string().nullable(),
    noiseFigureDb: z.number().describe('dB'),
    txPowerDbm: z.number().describe('dBm at the radio port'),
    notes: z.string(),
    version: z.number().int(),
    createdAt: dateTime,
    updatedAt: dateTime,
  });
export const gatewayCreateBody = z.strictObject(gatewayFields);
export const gatewayPatchBody = z.strictObject({ ...gatewayFields, name: name().optional(), version: version() });

export default async function gatewayRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['gateways'];

  async function siteOf(planId: string, siteId: string | null | undefined) {
    if (!siteId) return null;
    const site = await findSite(db, planId, siteId);
    if (!site) throw new ApiError(400, 'invalid_input', `siteId: no site "${siteId}" in this plan`);
    return site;
  }

  api.get('/plans/:planId/gateways', { schema: { summary: 'Gateways of a plan', tags, params: planParams, querystring: pageQuery, response: { 200: pageOf(gatewayResponse) } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    return listGateways(db, plan.id, request.query);
  });

  api.post(
    '/plans/:planId/gateways',
    { schema: { summary: 'Add a gateway (at a site: lat/lon default to the site; kit defaults to a 6 dBi collinear on 10 m of low-loss coax at 10 m)', tags, params: planParams, body: gatewayCreateBody, response: { 201: gatewayResponse } } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const body = request.body;
      const site = await siteOf(plan.id, body.siteId);
      const lat = body.lat ?? site?.lat;
      const lon = body.lon ?? site?.lon;
      if (lat === undefined) throw new ApiError(400, 'invalid_input', 'lat: required (or give a siteId)');
      if (lon === undefined) throw new ApiError(400, 'invalid_input', 'lon: required (or give a siteId)');
      const data = {
        ...body,
        lat,
        lon,
        antennaDesignId: body.antennaDesignId ?? defaultGatewayAntennaId,
        feedlineId: body.feedlineId ?? defaultGatewayFeedlineId,
        antennaHeightAglM: body.antennaHeightAglM ?? 10,
        feedlineLengthM: body.feedlineLengthM ?? 10,
      };
      await assertKitVisible(db, principal.teamId, data);
      const gateway = await writeWithAudit(db, (tx) => createGateway(tx, plan.id, data), (row) => ({ principal, action: 'create', entity: 'gateway', entityId: row.id, detail: { planId: plan.id, name: row.name } }));
      return reply.status(201).send(gateway);
    },
  );

  api.get('/plans/:planId/gateways/:id', { schema: { summary: 'One gateway', tags, params: planItemParams, response: { 200: gatewayResponse } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const gateway = await findGateway(db, plan.id, request.params.id);
    if (!gateway) throw new ApiError(404, 'not_found', 'gateway not found');
    return gateway;
  });

  api.patch('/plans/:planId/gateways/:id', { schema: { summary: 'Update a gateway (send the version you read)', tags, params: planItemParams, body: gatewayPatchBody, response: { 200: gatewayResponse } } }, async (request) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const { version: expected, ...patch } = request.body;
    await siteOf(plan.id, patch.siteId);
    await assertKitVisible(db, principal.teamId, patch);
    const gateway = await writeWithAudit(db, (tx) => updateGateway(tx, plan.id, request.params.id, expected, patch), (row) => ({ principal, action: 'update', entity: 'gateway', entityId: row.id, detail: { planId: plan.id, fields: Object.keys(patch), version: row.version } }));
    return gateway;
  });

  api.delete('/plans/:planId/gateways/:id', { schema: { summary: 'Delete a gateway (and its cached links)', tags, params: planItemParams } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    await writeWithAudit(db, (tx) => deleteGateway(tx, plan.id, request.params.id), () => ({ principal, action: 'delete', entity: 'gateway', entityId: request.params.id, detail: { planId: plan.id } }));
    return reply.status(204).send();
  });
}
