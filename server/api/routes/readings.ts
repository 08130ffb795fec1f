// Field readings: what an installer measured on a visit (RSSI/SNR per gateway,
// SF, time and place), shown beside the prediction with the difference in dB.
// Registered by the links plugin (./links.ts), which owns the link engine.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { createFieldReadings, listNodeReadings, listPlanReadings, type NewFieldReading } from '../../db/repositories/field-readings.ts';
import type { FieldReading, JsonValue } from '../../db/types.ts';
import { kitSnapshot } from '../../app/calibration.ts';
import type { PlanRow } from '../../db/repositories/plans.ts';
import { decodeCursor, encodeCursor } from '../../db/repositories/pagination.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, finite, id, latitude, longitude, pageOf, pageQuery } from '../schemas.ts';
import type { LinkEngine, PlanContext } from '../../jobs/link-engine.ts';
import type { LinkResult } from '../../planning/link.ts';

const reading = {
  gatewayId: id().nullable().optional(),
  rssiDbm: finite().min(-200, 'must be ≥ -200 dBm').max(30, 'must be ≤ 30 dBm'),
  snrDb: finite().min(-40, 'must be ≥ -40 dB').max(40, 'must be ≤ 40 dB'),
  sf: z.number({ error: 'must be a number' }).int('must be a whole number').min(5, 'must be 5–12').max(12, 'must be 5–12'),
  measuredAt: z.iso.datetime({ offset: true, error: 'must be an ISO 8601 date-time, e.g. 2026-05-01T10:30:00Z' }).optional(),
  lat: latitude().optional(),
  lon: longitude().optional(),
  note: z.string().max(2000, 'must be at most 2000 characters').optional(),
};

/** One reading (`nodeId` + fields) or several for one node (`nodeId` + `readings: [...]`). */
export const readingsBody = z.union([
  z.strictObject({ nodeId: id(), ...reading }),
  z.strictObject({ nodeId: id(), readings: z.array(z.strictObject(reading)).min(1, 'must hold at least one reading').max(500, 'at most 500 readings at once') }),
]);

const nodeParams = z.strictObject({ planId: id(), nodeId: id() });
const planParams = z.strictObject({ planId: id() });

/** A stored field reading as the API answers it (every column). */
export const fieldReadingResponse = z.object({
  id: z.string(),
  planId: z.string(),
  nodeId: z.string(),
  gatewayId: z.string().nullable(),
  rssiDbm: z.number().describe('dBm measured'),
  snrDb: z.number().describe('dB measured'),
  sf: z.number().int(),
  measuredAt: dateTime,
  lat: z.number().nullable(),
  lon: z.number().nullable(),
  note: z.string(),
  kit: z.unknown().describe('JSON: the node kit at the time of the reading'),
  source: z.string().describe('manual, or the import that brought it'),
  createdById: z.string().nullable(),
  createdAt: dateTime,
});
/** A reading beside the prediction at its gateway (null when none). */
export const readingWithPredictionResponse = fieldReadingResponse.extend({
  predictedRssiDbm: z.number().nullable(),
  predictedSnrDb: z.number().nullable(),
  rssiDifferenceDb: z.number().nullable().describe('measured − predicted, dB'),
  snrDifferenceDb: z.number().nullable().describe('measured − predicted, dB'),
});

type ReadingInput = { gatewayId?: string | null; rssiDbm: number; snrDb: number; sf: number; measuredAt?: string; lat?: number; lon?: number; note?: string };

/** A reading beside its prediction: predicted RSSI/SNR at the reading's gateway and the difference (measured − predicted). */
export function readingView(row: FieldReading, links: ReadonlyMap<string, LinkResult>) {
  const link = row.gatewayId ? links.get(row.gatewayId) : undefined;
  const predictedRssiDbm = link ? link.rssiDbm : null;
  const predictedSnrDb = link ? link.snrDb : null;
  return {
    ...row,
    predictedRssiDbm,
    predictedSnrDb,
    rssiDifferenceDb: predictedRssiDbm === null ? null : row.rssiDbm - predictedRssiDbm,
    snrDifferenceDb: predictedSnrDb === null ? null : row.snrDb - predictedSnrDb,
  };
}

export function registerReadingRoutes(
  api: ReturnType<FastifyInstance['withTypeProvider']> & FastifyInstance,
  engine: LinkEngine,
  context: (plan: PlanRow) => Promise<PlanContext>,
): void {
  const typed = api.withTypeProvider<ZodTypeProvider>();
  const db = engine.database;
  const tags = ['readings'];

  async function predictions(ctx: PlanContext, nodeId: string): Promise<Map<string, LinkResult>> {
    const outcome = await engine.linksForNode(ctx, nodeId);
    return new Map(outcome.links.map((link) => [link.gatewayId, link]));
  }

  typed.post(
    '/plans/:planId/readings',
    { schema: { summary: 'Record measured RSSI/SNR of a node (installer or planner); answers each reading beside the prediction', tags, params: planParams, body: readingsBody, response: { 201: z.object({ items: z.array(readingWithPredictionResponse) }), ...errorResponses } } },
    async (request, reply) => {
      const principal = requireRole(request, 'installer', 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const body = request.body;
      const inputs: ReadingInput[] = 'readings' in body ? body.readings : [body];
      const ctx = await context(plan);
      const node = await engine.nodeRow(ctx, body.nodeId).catch(() => null);
      if (!node) throw new ApiError(400, 'invalid_input', `nodeId: no node "${body.nodeId}" in this plan`);
      const gatewayIds = new Set(ctx.gateways.map((g) => g.row.id));
      const rows: NewFieldReading[] = inputs.map((input, index) => {
        if (input.gatewayId && !gatewayIds.has(input.gatewayId)) {
          throw new ApiError(400, 'invalid_input', `${'readings' in body ? `readings.${index}.` : ''}gatewayId: no gateway "${input.gatewayId}" in this plan`);
        }
        const measuredAt = input.measuredAt ? new Date(input.measuredAt) : new Date();
        if (measuredAt.getTime() > Date.now() + 24 * 3600 * 1000) {
          throw new ApiError(400, 'invalid_input', `${'readings' in body ? `readings.${index}.` : ''}measuredAt: must not be in the future`);
        }
        if ((input.lat === undefined) !== (input.lon === undefined)) {
          throw new ApiError(400, 'invalid_input', `${'readings' in body ? `readings.${index}.` : ''}lat/lon: give both or neither`);
        }
        return { nodeId: node.id, gatewayId: input.gatewayId ?? null, rssiDbm: input.rssiDbm, snrDb: input.snrDb, sf: input.sf, measuredAt, lat: input.lat ?? null, lon: input.lon ?? null, note: input.note ?? '', kit: kitSnapshot(node) as unknown as JsonValue };
      });
      // The readings and their audit entry are one transaction: neither is kept without the other.
      const created = await createFieldReadings(db, plan.id, principal.userId, rows, (stored) => ({ principal, action: 'create', entity: 'field-reading', entityId: stored.map((r) => r.id).join(','), detail: { planId: plan.id, nodeId: node.id, count: stored.length } }));
      let links = new Map<string, LinkResult>();
      try {
        links = await predictions(ctx, node.id);
      } catch {
        // The readings are stored; a prediction problem (e.g. kit missing from the catalog) only leaves the comparison empty.
      }
      return reply.status(201).send({ items: created.map((row) => readingView(row, links)) });
    },
  );

  typed.get(
    '/plans/:planId/nodes/:nodeId/readings',
    { schema: { summary: "A node's field readings beside the prediction (difference = measured − predicted, dB)", tags, params: nodeParams, response: { 200: z.object({ items: z.array(readingWithPredictionResponse), total: z.number().int(), meanRssiDifferenceDb: z.number().nullable() }), ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const ctx = await context(plan);
      const node = await engine.nodeRow(ctx, request.params.nodeId).catch(() => null);
      if (!node) throw new ApiError(404, 'not_found', 'node not found');
      const rows = await listNodeReadings(db, plan.id, node.id, 500);
      let links = new Map<string, LinkResult>();
      try {
        links = await predictions(ctx, node.id);
      } catch {
        // Readings are still shown without the comparison.
      }
      const items = rows.map((row) => readingView(row, links));
      const differences = items.map((item) => item.rssiDifferenceDb).filter((d): d is number => d !== null);
      const meanDifferenceDb = differences.length ? differences.reduce((a, b) => a + b, 0) / differences.length : null;
      return { items, total: items.length, meanRssiDifferenceDb: meanDifferenceDb };
    },
  );

  typed.get('/plans/:planId/readings', { schema: { summary: 'Field readings of a plan, newest first', tags, params: planParams, querystring: pageQuery, response: { 200: pageOf(fieldReadingResponse), ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const offset = decodeCursor(request.query.cursor);
    const limit = request.query.limit ?? 100;
    const { items, total } = await listPlanReadings(db, plan.id, offset, limit);
    return { items, total, next: offset + items.length < total ? encodeCursor(offset + items.length) : null };
  });
}
