// Scenarios: copy a plan under a new name, compare two plans of one team.
// The work is in server/app/scenarios.ts.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { comparePlans, copyPlan } from '../../app/scenarios.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, id, name, planParams } from '../schemas.ts';
import { planResponse } from './plans.ts';
import { asApiError } from './links.ts';

const copyBody = z.strictObject({ name: name() });
const compareParams = z.strictObject({ planId: id(), otherPlanId: id() });
const status = z.enum(['served', 'marginal', 'unserved']);
const sideSchema = z.object({
  planId: z.string(),
  name: z.string(),
  counts: z.object({ served: z.number().int(), marginal: z.number().int(), unserved: z.number().int() }),
  nodes: z.number().int(),
  gateways: z.number().int(),
  sites: z.number().int(),
  redundancy: z.object({ none: z.number().int(), one: z.number().int(), twoOrMore: z.number().int() }).describe('nodes heard (margin ≥ 0 dB) by 0, 1, 2+ gateways'),
  kitCostUsd: z.number().describe('USD: antennas, feedlines, masts'),
  costUsd: z.number().describe('USD: bill of materials total'),
  servedShare: z.number().describe('0–1'),
  risks: z.object({ unserved: z.number().int(), singleGateway: z.number().int(), illegal: z.number().int(), overDutyCycle: z.number().int() }),
});
const compareResponse = z.object({
  a: sideSchema,
  b: sideSchema,
  nodes: z.array(
    z.object({
      id: z.string(),
      name: z.string(),
      idA: z.string().nullable(),
      idB: z.string().nullable(),
      statusA: status.nullable(),
      statusB: status.nullable(),
      marginA: z.number().nullable().describe('dB'),
      marginB: z.number().nullable().describe('dB'),
      marginChangeDb: z.number().nullable().describe('marginB − marginA, dB'),
    }),
  ),
  matching: z.string(),
});
const copyResponse = planResponse.extend({ copiedFrom: z.string(), copied: z.object({ sites: z.number().int(), gateways: z.number().int(), nodes: z.number().int(), terrainLayers: z.number().int() }) });

export default async function scenarioRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const engine = app.linkEngine;
  const tags = ['scenarios'];

  api.post(
    '/plans/:planId/copy',
    { schema: { summary: 'Copy a plan under a new name: every site, gateway, node, kit setting and terrain layer (the terrain files are shared, not copied)', tags, params: planParams, body: copyBody, response: { 201: copyResponse, ...errorResponses } } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const result = await copyPlan(db, principal, request.params.planId, request.body.name);
      if (!result) throw new ApiError(404, 'not_found', 'plan not found');
      return reply.status(201).send({ ...result.plan, copiedFrom: request.params.planId, copied: result.counts });
    },
  );

  api.get(
    '/plans/:planId/compare/:otherPlanId',
    { schema: { summary: 'Two plans of the team side by side: counts, redundancy, cost, risks, and every node’s status and margin in each', tags, params: compareParams, response: { 200: compareResponse, ...errorResponses } } },
    async (request) => {
      const a = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const b = await loadPlanForPrincipal(db, request.principal, request.params.otherPlanId);
      return comparePlans(engine, a, b).catch(asApiError);
    },
  );
}
