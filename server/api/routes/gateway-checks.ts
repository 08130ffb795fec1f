// Gateways' EIRP, legal check and fitted cautions:
//   GET  /plans/:planId/gateway-checks           every gateway as stored (panel, fleet table)
//   POST /plans/:planId/gateway-checks/preview   a kit not saved yet (edit dialog, as you type)
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { gatewayChecks, previewGatewayKit } from '../../app/gateway-checks.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, finite, id, nonNegative, planParams } from '../schemas.ts';
import { asApiError } from './links.ts';

const cautionGroup = z.object({ topic: z.string(), items: z.array(z.string()) });
const gatewayCheck = z.object({
  gatewayId: z.string().nullable(),
  name: z.string(),
  txPowerDbm: z.number(),
  antennaName: z.string(),
  antennaGainDbi: z.number(),
  antennaHeightAglM: z.number(),
  feedlineName: z.string().nullable(),
  lossesDb: z.number(),
  peakEirpDbm: z.number(),
  peakErpDbm: z.number(),
  legal: z.object({ withinLimit: z.boolean(), maxEirpDbm: z.number().nullable(), excessDb: z.number().nullable(), limitName: z.string().nullable(), source: z.string().nullable(), warnings: z.array(z.string()) }),
  bandPlanName: z.string(),
  cautions: z.array(cautionGroup),
  cautionsFooter: z.string(),
});

export default async function gatewayCheckRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['gateways'];

  api.get(
    '/plans/:planId/gateway-checks',
    { schema: { summary: "Each gateway's peak EIRP, the band plan's legal check and cautions fitted to its mast height, power and gain", tags, params: planParams, response: { 200: z.object({ items: z.array(gatewayCheck), warnings: z.array(z.string()) }), ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return gatewayChecks(app.linkEngine, plan).catch(asApiError);
    },
  );

  api.post(
    '/plans/:planId/gateway-checks/preview',
    {
      schema: {
        summary: 'The same check for a gateway kit not saved yet (nothing is stored)',
        tags,
        params: planParams,
        body: z.strictObject({
          name: z.string().max(200).optional(),
          txPowerDbm: finite().min(-10, 'must be ≥ −10 dBm').max(40, 'must be ≤ 40 dBm'),
          antennaHeightAglM: nonNegative().max(300, 'must be ≤ 300 m'),
          antennaDesignId: id(),
          feedlineId: id().nullable().optional(),
          feedlineLengthM: nonNegative().max(500, 'must be ≤ 500 m').optional(),
        }),
        response: { 200: gatewayCheck, ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return previewGatewayKit(app.linkEngine, plan, request.body).catch(asApiError);
    },
  );
}
