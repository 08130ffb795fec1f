// GET /api/v1/client-settings: what the map front end needs from the server's
// configuration: the optional online base layer (EARSHOT_BASE_LAYER_URL,
// config.onlineBaseLayerUrl; null unless configured, so the map stays offline by default),
// and the choices the plan settings editor offers (band plans, propagation methods: the
// same lists PATCH /plans/:id and the link engine accept), and the valid range of every
// physical input (FIELD_RANGES: the rules the routes apply), which every UI form reads.
// Every signed-in role may read it (the auth hook refuses anonymous callers with 401).
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { bandPlans } from '../../radio/band-plans.ts';
import { DEFAULT_BANDWIDTH_KHZ, loraBandwidthsKhz, uplinkSfsFor } from '../../planning/settings.ts';
import { PROPAGATION_METHODS } from '../../planning/path.ts';
import type { Config } from '../../config.ts';
import { FIELD_RANGES, type RangedField } from '../schemas.ts';

const fieldRange = z.object({ min: z.number(), max: z.number(), unit: z.string(), step: z.number(), note: z.string() });

const uplinkSfsSchema = z.array(z.object({ sf: z.number().int(), maxAppPayloadBytes: z.number().int().nullable() }));

export const clientSettingsResponse = z.object({
  defaultBandwidthKhz: z.number().describe('the LoRa bandwidth of a plan whose settings name none (kHz)'),
  onlineBaseLayer: z
    .object({
      /** XYZ tile URL template with {z}/{x}/{y} (and optionally {s}), as configured. */
      urlTemplate: z.string(),
      attribution: z.string().optional(),
    })
    .nullable(),
  bandPlans: z
    .array(
      z.object({
        id: z.string(),
        name: z.string(),
        uplinkSfs: uplinkSfsSchema.describe('uplink SFs at the default bandwidth (defaultBandwidthKhz) with the LoRaWAN maximum application payload of each (null: none stated); an SF carries a payload up to that maximum'),
        bandwidths: z
          .array(z.object({ bandwidthKhz: z.number(), uplinkSfs: uplinkSfsSchema }))
          .describe("the uplink SFs at each LoRa bandwidth of the band plan's data rates (a plan's settings.bandwidthKhz picks one)"),
        otherBandwidthSfs: uplinkSfsSchema.describe('the uplink SFs at a bandwidth the band plan lists no data rate for'),
      }),
    )
    .describe('band plans a plan may use (bandPlanId)'),
  propagationMethods: z.array(z.string()).describe('propagation method ids a plan may use (propagationMethod)'),
  ranges: z
    .object(Object.fromEntries(Object.keys(FIELD_RANGES).map((field) => [field, fieldRange])) as Record<RangedField, typeof fieldRange>)
    .describe('the valid range of each physical input, the same rules every route applies (FIELD_RANGES, server/planning/field-ranges.ts)'),
});
export type ClientSettings = z.infer<typeof clientSettingsResponse>;

/** What GET /client-settings answers for a configuration (the route serves exactly this; the web's unit tests read it). */
export function clientSettings(config: Pick<Config, 'onlineBaseLayerUrl'>): ClientSettings {
  const urlTemplate = config.onlineBaseLayerUrl;
  // The config has no attribution setting yet: none is sent (the map labels the layer itself).
  return {
    onlineBaseLayer: urlTemplate ? { urlTemplate } : null,
    defaultBandwidthKhz: DEFAULT_BANDWIDTH_KHZ,
    bandPlans: bandPlans.map((plan) => ({
      id: plan.id,
      name: plan.name,
      uplinkSfs: uplinkSfsFor(plan, DEFAULT_BANDWIDTH_KHZ),
      bandwidths: loraBandwidthsKhz(plan).map((bandwidthKhz) => ({ bandwidthKhz, uplinkSfs: uplinkSfsFor(plan, bandwidthKhz) })),
      otherBandwidthSfs: uplinkSfsFor(plan, Number.NaN),
    })),
    propagationMethods: [...PROPAGATION_METHODS],
    ranges: FIELD_RANGES,
  };
}

export default async function clientSettingsRoutes(app: FastifyInstance): Promise<void> {
  const { config } = app.deps;
  app.withTypeProvider<ZodTypeProvider>().get(
    '/client-settings',
    {
      schema: {
        summary: 'Settings the map front end reads at start (online base layer: null = offline only)',
        tags: ['client'],
        response: { 200: clientSettingsResponse },
      },
    },
    async (): Promise<ClientSettings> => clientSettings(config),
  );
}
