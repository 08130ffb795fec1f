// Response schemas of the link routes (server/api/routes/links.ts) and the reading import
// (server/api/routes/calibration.ts): what GET …/links, …/check, …/visit-sheet?format=json and
// POST …/recommend answer, as the use cases in server/app/links.ts, server/app/recommend.ts and
// server/app/visit-sheet.ts build it. Fastify parses each answer through these (unlisted keys are
// dropped), so test/api/links.test.ts checks that every route answers exactly the use case's
// JSON; the web client takes its types from the OpenAPI document these feed.
import { z } from 'zod';
import { dateTime } from './schemas.ts';

export const linkStatusSchema = z.enum(['served', 'marginal', 'unserved']);
export const sigmaSourceSchema = z.enum(['default', 'plan', 'calibration']);

/** The band-plan power check of one link (server/radio/link-budget.ts LegalCheck). */
const legalCheck = z.object({
  bandPlanId: z.string(),
  limitId: z.string().nullable().describe('governing limit; null when the channel lies in no sub-band'),
  source: z.string().nullable(),
  maxEirpDbm: z.number().nullable(),
  maxErpDbm: z.number().nullable(),
  maxConductedDbm: z.number().nullable(),
  peakEirpDbm: z.number(),
  peakErpDbm: z.number(),
  conductedPowerDbm: z.number(),
  excessDb: z.number().nullable().describe('dB over the limit; ≤ 0 when legal'),
  withinLimit: z.boolean(),
  dutyCyclePercent: z.number().nullable(),
  dwellTimeMs: z.number().nullable(),
  listenBeforeTalk: z.boolean(),
  warnings: z.array(z.string()),
});

/** One predicted link as answers show it (linkView in server/app/links.ts over LinkResult). */
export const linkSchema = z.object({
  gatewayId: z.string(),
  gatewayName: z.string().nullable(),
  distanceM: z.number(),
  basicLossDb: z.number(),
  rssiDbm: z.number(),
  snrDb: z.number(),
  marginDb: z.number(),
  bestSf: z.number().int().nullable(),
  deliveryProbability: z.number().describe('Φ(marginDb / sigmaDb), 0 … 1'),
  timeOnAirMs: z.number(),
  legal: legalCheck.nullable(),
  method: z.string(),
  freeSpaceLossDb: z.number(),
  lineOfSight: z.boolean(),
  usedSf: z.number().int(),
  eirpDbm: z.number(),
  sigmaDb: z.number().describe('planning spread σ, dB'),
  sigmaSource: sigmaSourceSchema,
  sigmaLocationDb: z.number(),
  sigmaModelDb: z.number(),
  calibrationBiasDb: z.number(),
  nodeAzimuthDeg: z.number(),
  nodeElevationDeg: z.number(),
  gatewayAzimuthDeg: z.number(),
  gatewayElevationDeg: z.number(),
  nodeGainDbi: z.number(),
  gatewayGainDbi: z.number(),
  nodeFeedlineLossDb: z.number(),
  gatewayFeedlineLossDb: z.number(),
  nodeMismatchLossDb: z.number(),
  gatewayMismatchLossDb: z.number(),
  environmentLossDb: z.number(),
  environmentSource: z.string(),
  perSf: z.array(
    z.object({
      sf: z.number().int(),
      sensitivityDbm: z.number(),
      marginDb: z.number(),
      timeOnAirMs: z.number(),
      meetsTarget: z.boolean(),
      messagesPerHour: z.number().nullable().describe('what the duty-cycle rule allows; null = no rule'),
      dwellOk: z.boolean().nullable().describe('frame within the dwell-time limit; null = no limit'),
    }),
  ),
  terms: z.record(z.string(), z.number()).describe('the path loss terms by name, dB'),
  warnings: z.array(z.string()),
});

const serviceTarget = z.object({ targetMarginDb: z.number(), targetDelivery: z.number() });
/** The node's kit as the answer evaluated it. */
const nodeKit = z.object({ antennaDesignId: z.string(), antennaHeightAglM: z.number(), feedlineId: z.string().nullable(), feedlineLengthM: z.number() });
const cache = z.object({ computed: z.number().int(), cached: z.number().int() });

/** GET …/nodes/:nodeId/links (nodeLinks in server/app/links.ts). */
export const nodeLinksResponse = z.object({
  nodeId: z.string(),
  links: z.array(linkSchema).describe('best first (highest delivery probability, then margin)'),
  combinedDeliveryProbability: z.number(),
  status: linkStatusSchema,
  bestGatewayId: z.string().nullable(),
  target: serviceTarget,
  assumptions: z.object({
    method: z.string(),
    frequencyMhz: z.number(),
    bandwidthKhz: z.number(),
    sigmaDb: z.number(),
    sigmaSource: sigmaSourceSchema,
    sigmaLocationDb: z.number(),
    sigmaModelDb: z.number(),
    sigmaNote: z.string(),
    locationSigmaDb: z.number().describe('older name of sigmaLocationDb, kept for existing clients'),
    locationSigmaSource: z.string(),
    gatewayCorrelation: z.number(),
    combination: z.string(),
  }),
  kit: nodeKit,
  outOfRange: z.array(z.object({ gatewayId: z.string(), distanceM: z.number() })),
  cache,
  warnings: z.array(z.string()),
  preview: z.boolean().describe('true when kit query parameters were applied (nothing saved)'),
});

const priceLine = z.object({ part: z.enum(['antenna', 'feedline', 'connectors', 'mast']), name: z.string(), quantity: z.number(), unit: z.enum(['each', 'm']), costUsd: z.number() });
/** The one kit price with part names (server/app/kit-price.ts nodeKitPrice). */
export const kitPriceSchema = z.object({ lines: z.array(priceLine), totalUsd: z.number(), unpriced: z.array(z.string()), mastName: z.string().nullable(), mastOptionId: z.string().nullable() });

/** One ranked kit option (RankedKitOption in server/planning/recommend.ts). */
const rankedKitOption = z.object({
  antennaDesignId: z.string(),
  mastHeightM: z.number(),
  mastOptionId: z.string().nullable(),
  feedlineId: z.string().nullable().describe('null = the radio sits at the antenna'),
  feedlineLengthM: z.number(),
  cost: z.number().describe('kit cost, USD (catalog prices)'),
  marginDb: z.number().nullable().describe('best link margin at the chosen SF; null = no gateway in range'),
  deliveryProbability: z.number(),
  bestGatewayId: z.string().nullable(),
  meetsTarget: z.boolean(),
  reason: z.string(),
});
/** A ranked option with names and its price (PricedKitOption in server/app/recommend.ts). */
export const pricedKitOption = rankedKitOption.extend({ antennaName: z.string(), feedlineName: z.string().nullable(), mastName: z.string().nullable(), price: kitPriceSchema });

const cautionGroup = z.object({ topic: z.enum(['Work at height', 'Lightning and grounding', 'RF exposure', 'Legal power', 'On site']), items: z.array(z.string()) });

/** POST …/nodes/:nodeId/recommend (NodeRecommendation in server/app/recommend.ts). */
export const recommendationResponse = z.object({
  nodeId: z.string(),
  target: serviceTarget,
  currentKit: nodeKit,
  options: z.array(pricedKitOption).describe('cheapest meeting the target first'),
  anyMeetsTarget: z.boolean(),
  best: rankedKitOption.nullable().describe('the best option found, meeting or not (null when the catalog is empty)'),
  advice: z.array(z.string()).describe('plain advice when nothing meets the target'),
  evaluated: z.number().int(),
  combinations: z.number().int(),
  catalog: z.object({
    antennas: z.array(z.object({ id: z.string(), name: z.string(), costUsd: z.number() })),
    masts: z.array(z.object({ heightM: z.number(), mastOptionId: z.string().nullable(), costUsd: z.number() })),
    feedlines: z.array(z.object({ id: z.string().nullable(), name: z.string(), costUsdPerM: z.number() })),
  }),
  fittedCautions: z.array(cautionGroup).describe('cautions fitted to the first option'),
  cautionsFooter: z.string(),
  warnings: z.array(z.string()),
});

const expectedRange = z.object({ p10: z.number(), p50: z.number(), p90: z.number() });

/** GET …/nodes/:nodeId/check (nodeLinkCheck in server/app/links.ts; linkCheck in server/planning/check.ts). */
export const linkCheckResponse = z.object({
  nodeId: z.string(),
  nodeName: z.string(),
  status: linkStatusSchema,
  combinedDeliveryProbability: z.number(),
  gatewayId: z.string().nullable(),
  gatewayName: z.string().nullable(),
  link: linkSchema.nullable(),
  profile: z
    .object({
      gatewayId: z.string(),
      lineOfSight: z.boolean(),
      worstClearanceRatio: z.number().nullable(),
      worstClearanceAtM: z.number().nullable(),
      kFactor: z.number(),
      points: z.array(
        z.object({
          distanceM: z.number(),
          lat: z.number().nullable(),
          lon: z.number().nullable(),
          groundM: z.number(),
          clutterTopM: z.number().describe('ground + clutter height, m'),
          rayM: z.number().describe('straight ray node → gateway on the flat baseline, m'),
          fresnelUpperM: z.number(),
          fresnelLowerM: z.number(),
          obstacleM: z.number().describe('ground + clutter + earth bulge, m'),
        }),
      ),
      obstructions: z.array(z.object({ distanceM: z.number(), obstacleM: z.number(), clearanceM: z.number(), clearanceRatio: z.number() })),
      expected: z.object({ rssiDbm: expectedRange, snrDb: expectedRange, sigmaDb: z.number(), sf: z.number().int(), note: z.string() }),
    })
    .nullable()
    .describe('null when no gateway is in range'),
  currentKit: nodeKit,
  recommendedKit: pricedKitOption.nullable(),
  recommendation: z.object({ anyMeetsTarget: z.boolean(), advice: z.array(z.string()) }),
  cautions: z.array(z.string()),
  fittedCautions: z.array(cautionGroup),
  cautionsFooter: z.string(),
  warnings: z.array(z.string()),
});

/** A home-made antenna's build sheet (server/radio/build-sheets.ts BuildSheet). */
const buildSheet = z.object({
  design: z.string(),
  designName: z.string(),
  frequencyMhz: z.number(),
  wavelengthMm: z.number(),
  lengthFactor: z.number(),
  elements: z.array(z.object({ name: z.string(), count: z.number().int(), lengthMm: z.number(), lengthIn: z.number(), note: z.string().optional() })),
  notes: z.array(z.string()),
  cautions: z.array(z.string()),
  feedImpedanceOhm: z.number().optional(),
  estimatedVswr: z.number().optional(),
  radialCount: z.number().int().optional(),
  droopDeg: z.number().optional(),
  sources: z.array(z.string()),
});

/** GET …/nodes/:nodeId/visit-sheet?format=json (VisitSheet in server/app/visit-sheet.ts). */
export const visitSheetResponse = z.object({
  title: z.string(),
  generatedAt: z.string(),
  plan: z.object({ id: z.string(), name: z.string(), bandPlan: z.string(), frequencyMhz: z.number() }),
  node: z.object({ id: z.string(), name: z.string(), deviceType: z.string(), lat: z.number(), lon: z.number(), environment: z.string(), installStatus: z.string(), accessNotes: z.string() }),
  status: linkStatusSchema,
  combinedDeliveryProbability: z.number(),
  kit: z.object({
    antenna: z.object({ id: z.string(), name: z.string(), homemade: z.boolean(), gainDbi: z.number() }),
    feedline: z.object({ id: z.string(), name: z.string(), lengthM: z.number() }).nullable(),
    antennaHeightAglM: z.number(),
    mastOptionId: z.string().nullable(),
    mastName: z.string().nullable(),
    price: kitPriceSchema,
    meetsTarget: z.boolean(),
    recommended: z
      .object({
        antennaDesignId: z.string(),
        antennaName: z.string(),
        mastHeightM: z.number(),
        mastName: z.string().nullable(),
        feedlineId: z.string().nullable(),
        feedlineName: z.string().nullable(),
        feedlineLengthM: z.number(),
        cost: z.number(),
        price: kitPriceSchema,
        reason: z.string(),
      })
      .nullable(),
  }),
  buildSheet: buildSheet.nullable(),
  gateways: z.array(
    z.object({
      id: z.string(),
      name: z.string(),
      distanceM: z.number(),
      aimAzimuthDeg: z.number(),
      elevationDeg: z.number(),
      sf: z.number().int(),
      expectedRssiDbm: expectedRange,
      expectedSnrDb: expectedRange,
      sigmaDb: z.number(),
      marginDb: z.number(),
    }),
  ),
  measurements: z.array(z.object({ gatewayId: z.string(), gatewayName: z.string(), sf: z.number().int(), measuredRssiDbm: z.null(), measuredSnrDb: z.null(), time: z.null() })).describe('blanks for the installer to fill in'),
  cautions: z.array(z.string()),
  fittedCautions: z.array(cautionGroup),
  cautionsFooter: z.string(),
  statusText: z.string(),
  warnings: z.array(z.string()),
});

/** POST /plans/:planId/recommend (202): the fleet recommendation run just started. */
export const fleetRecommendationStarted = z.object({ id: z.string(), status: z.literal('running'), progress: z.number(), poll: z.string().describe('URL to poll for progress and the result') });

/** GET /plans/:planId/recommend/:runId: its progress, and the result once done (startFleetRecommendation in server/app/links.ts). */
export const fleetRecommendationJob = z.object({
  id: z.string(),
  status: z.string().describe('running, done or failed'),
  progress: z.number().describe('0 … 1'),
  error: z.string().nullable(),
  createdAt: dateTime,
  finishedAt: dateTime.nullable(),
  result: z
    .object({
      counts: z.object({ meetsTarget: z.number().int(), noOption: z.number().int(), alreadyServed: z.number().int() }),
      nodes: z.array(
        z.object({ nodeId: z.string(), nodeName: z.string(), status: linkStatusSchema, anyMeetsTarget: z.boolean(), best: pricedKitOption.nullable(), advice: z.array(z.string()) }),
      ),
    })
    .nullable()
    .describe('null until the run is done'),
});

const rowProblem = z.object({ row: z.number().int(), field: z.string(), message: z.string() });
const readingImportCommon = {
  dryRun: z.boolean(),
  valid: z.boolean(),
  rowCount: z.number().int(),
  created: z.number().int().describe('rows that will be (or were) stored'),
  duplicates: z.array(z.object({ row: z.number().int(), sameAs: z.string() })).describe('rows recognised as an uplink already stored or repeated in this import; never stored twice'),
  errors: z.array(rowProblem),
  ignoredColumns: z.array(z.string()),
};
const newReading = z.object({
  nodeId: z.string(),
  gatewayId: z.string().nullable(),
  rssiDbm: z.number(),
  snrDb: z.number(),
  sf: z.number().int(),
  measuredAt: dateTime,
  lat: z.number().nullable(),
  lon: z.number().nullable(),
  note: z.string(),
  kit: z.unknown().describe('JSON: the node kit at the time of the reading').optional(),
  source: z.string().optional(),
});
/** POST /plans/:planId/readings/import?dryRun=true (200): what would be stored. */
export const readingImportPreview = z.object({ ...readingImportCommon, preview: z.array(newReading) });
/** POST /plans/:planId/readings/import (201): what was stored (the first 100 readings). */
export const readingImportDone = (stored: z.ZodType) => z.object({ ...readingImportCommon, items: z.array(stored), itemsNote: z.string().optional() });
