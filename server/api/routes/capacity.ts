// Network capacity of a plan: per gateway the offered load per SF and channel,
// collision probability and downlink airtime; per node time on air, collision
// survival, delivery ratio beside the link-only figure, and the duty-cycle
// budget. Thin: server/app/capacity.ts does the work over the link engine's
// fleet results and the pure engine in server/capacity/.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { CAPACITY_MODELS, planCapacity } from '../../app/capacity.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, finite, id } from '../schemas.ts';
import { asApiError } from './links.ts';

const coerce = (rule: z.ZodNumber) => z.preprocess((value) => (typeof value === 'string' && value.trim() !== '' ? Number(value) : value), rule);

export const capacityQuery = z.strictObject({
  model: z.enum(CAPACITY_MODELS, { error: `must be one of ${CAPACITY_MODELS.join(', ')}` }).optional(),
  durationS: coerce(finite().positive('must be > 0 s').max(86_400, 'must be ≤ 86400 s')).optional(),
  seed: coerce(finite().int('must be a whole number')).optional(),
  rateScale: coerce(finite().min(0, 'must be ≥ 0').max(100, 'must be ≤ 100')).optional(),
  channels: coerce(finite().int('must be a whole number').min(1, 'must be ≥ 1').max(64, 'must be ≤ 64')).optional(),
  confirmedShare: coerce(finite().min(0, 'must be within 0–1').max(1, 'must be within 0–1')).optional(),
  captureThresholdDb: coerce(finite().min(-10, 'must be ≥ -10 dB').max(30, 'must be ≤ 30 dB')).optional(),
});

const sfLoad = z.object({
  sf: z.number(),
  bandwidthKhz: z.number().describe('kHz'),
  nodes: z.number().int().describe('nodes of this SF the gateway hears'),
  offeredLoadErlangPerChannel: z.number().describe('erlang on each channel'),
  airtimeShare: z.number().describe("share of the gateway's heard uplink airtime at this SF, 0–1"),
  collisionProbability: z.number().describe('probability a heard frame of this SF is lost to collisions or to the gateway’s own replies, 0–1'),
});

const gatewayLoad = z.object({
  gatewayId: z.string(),
  gatewayName: z.string(),
  nodes: z.number().int().describe('nodes heard (median margin ≥ 0 at their SF)'),
  offeredLoadErlangPerChannel: z.array(z.number()).describe('offered uplink load of each channel, erlang'),
  offeredLoadErlang: z.number().describe('sum over the channels, erlang'),
  perSf: z.array(sfLoad),
  downlink: z.object({
    demandedMessagesPerHour: z.number(),
    messagesPerHour: z.number(),
    airtimeShare: z.number().describe('share of the time the gateway transmits and hears nothing, 0–1'),
    dutyCyclePercent: z.number().nullable(),
    overDutyCycle: z.boolean(),
    repliesDroppedPerHour: z.number(),
  }),
});

const nodeCapacity = z.object({
  nodeId: z.string(),
  nodeName: z.string(),
  sf: z.number().nullable(),
  timeOnAirMs: z.number().describe('ms'),
  messagesPerHour: z.number(),
  successProbability: z.number().nullable().describe('collision survival at the best gateway, 0–1'),
  linkDeliveryProbability: z.number().describe('link-only figure: at least one gateway receives, collisions aside'),
  deliveryRatio: z.number().describe('link delivery combined over gateways with each gateway’s collision survival, times the share the duty-cycle budget lets out'),
  maxMessagesPerHourAtDutyCycle: z.number().nullable().describe('⌊3600 s · duty cycle / time on air⌋; null = no duty-cycle rule'),
  maxMessagesPerHourAtDwell: z.number().nullable(),
  dwellOk: z.boolean().nullable(),
  overBudget: z.boolean(),
  gatewaysHeard: z.number().int(),
  warnings: z.array(z.string()),
});

export const capacityResponse = z.object({
  planId: z.string(),
  model: z.enum(CAPACITY_MODELS),
  durationS: z.number().nullable(),
  seed: z.number().nullable(),
  channels: z.number().int(),
  rateScale: z.number(),
  confirmedShare: z.number(),
  captureThresholdDb: z.number(),
  rules: z.object({ dutyCyclePercent: z.number().nullable(), dwellTimeMs: z.number().nullable(), dwellWindowS: z.number().nullable() }),
  gateways: z.array(gatewayLoad),
  nodes: z.array(nodeCapacity),
  totals: z.object({ nodes: z.number().int(), overBudgetNodes: z.number().int(), meanLinkDeliveryProbability: z.number(), meanDeliveryRatio: z.number(), transmissions: z.number().nullable() }),
  method: z.string(),
  sources: z.array(z.string()),
  cautions: z.array(z.string()),
  warnings: z.array(z.string()),
});

export default async function capacityRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const engine = app.linkEngine;
  api.get(
    '/plans/:planId/capacity',
    {
      schema: {
        summary: 'Network capacity: per gateway the offered load per SF and channel, collision probability and downlink airtime; per node time on air, collision survival, delivery ratio and duty-cycle budget (?model=aloha|capture|simulate, ?rateScale= and ?channels= for what-ifs of the reporting rate and the channel count)',
        tags: ['capacity'],
        params: z.strictObject({ planId: id() }),
        querystring: capacityQuery,
        response: { 200: capacityResponse, ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const query = request.query;
      try {
        const ctx = await engine.planContext(plan);
        return await planCapacity(engine, ctx, { ...query, model: query.model ?? 'capture' });
      } catch (error) {
        return asApiError(error);
      }
    },
  );
}
