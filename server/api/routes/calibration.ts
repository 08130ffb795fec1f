// Calibration from field readings (issue 15): bulk reading import, the fit, its history,
// apply and revert. Thin: parses, calls server/app/calibration.ts, shapes.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { applyPlanCalibration, calibrationHistory, calibrationView, CalibrationError, createPlanCalibration, importReadings, revertPlanCalibration, type ReadingImportRow, type RowProblem } from '../../app/calibration.ts';
import { findAppliedCalibration, findCalibration } from '../../db/repositories/calibrations.ts';
import { decodeCursor, encodeCursor } from '../../db/repositories/pagination.ts';
import { CALIBRATION_GROUPINGS } from '../../calibration/fit.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { STATUS_OF_KIND } from '../errors.ts';
import { ImportFormatError, importRecords, validateRecords, type ImportFormat } from '../node-import.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, finite, id, latitude, longitude, pageQuery, planParams } from '../schemas.ts';
import { devEuiField } from './nodes.ts';
import { asApiError } from './links.ts';
import { fieldReadingResponse } from './readings.ts';
import { readingImportDone, readingImportPreview } from '../link-answers.ts';

/** "SF7", "SF7BW125", "7" or 7 → 7 (a gateway log writes the data rate either way). */
function sfValue(value: unknown): unknown {
  if (typeof value !== 'string') return value;
  const match = /^\s*(?:SF)?\s*(\d{1,2})\s*(?:BW\s*\d+(?:\.\d+)?)?\s*$/i.exec(value);
  return match ? Number(match[1]) : value;
}

/** ISO 8601 text, or Unix time as a number (seconds below 10¹¹, else milliseconds). */
function timeValue(value: unknown): unknown {
  const number = typeof value === 'number' ? value : typeof value === 'string' && /^\s*\d+(\.\d+)?\s*$/.test(value) ? Number(value) : null;
  if (number === null) return value;
  const date = new Date(number < 1e11 ? number * 1000 : number);
  return Number.isNaN(date.getTime()) ? value : date.toISOString();
}

const readingRow = z
  .object({
    nodeId: id().optional(),
    devEui: devEuiField().optional(),
    nodeName: z.string().min(1, 'must not be empty').optional(),
    gatewayId: z.string({ error: 'required: the gateway id or its name in the plan' }).min(1, 'must not be empty'),
    rssiDbm: finite().min(-200, 'must be ≥ -200 dBm').max(30, 'must be ≤ 30 dBm'),
    snrDb: finite().min(-40, 'must be ≥ -40 dB').max(40, 'must be ≤ 40 dB'),
    sf: z.preprocess(sfValue, z.number({ error: 'must be a number 5–12 or SF7…SF12' }).int('must be a whole number').min(5, 'must be 5–12').max(12, 'must be 5–12')),
    measuredAt: z.preprocess(timeValue, z.iso.datetime({ offset: true, error: 'required: an ISO 8601 date-time (e.g. 2026-05-01T10:30:00Z) or Unix time' })),
    lat: latitude().optional(),
    lon: longitude().optional(),
    note: z.string().max(2000, 'must be at most 2000 characters').optional(),
  })
  .superRefine((row, ctx) => {
    if (row.nodeId === undefined && row.devEui === undefined && row.nodeName === undefined) ctx.addIssue({ code: 'custom', path: ['nodeId'], message: 'required: give nodeId, devEui or nodeName' });
    if ((row.lat === undefined) !== (row.lon === undefined)) ctx.addIssue({ code: 'custom', path: [row.lat === undefined ? 'lat' : 'lon'], message: 'give both lat and lon, or neither' });
  });

const readingFields = ['nodeId', 'devEui', 'nodeName', 'gatewayId', 'rssiDbm', 'snrDb', 'sf', 'measuredAt', 'lat', 'lon', 'note'];

/** The node import's parser, with the columns an uplink log or a drive test carries. */
const readingFormat: ImportFormat = {
  numericFields: new Set(['rssiDbm', 'snrDb', 'lat', 'lon']),
  aliases: {
    rssi: 'rssiDbm',
    snr: 'snrDb',
    lsnr: 'snrDb',
    spreadingfactor: 'sf',
    datarate: 'sf',
    time: 'measuredAt',
    timestamp: 'measuredAt',
    receivedat: 'measuredAt',
    datetime: 'measuredAt',
    deveui: 'devEui',
    eui: 'devEui',
    device: 'devEui',
    node: 'nodeName',
    name: 'nodeName',
    gateway: 'gatewayId',
    gw: 'gatewayId',
    latitude: 'lat',
    longitude: 'lon',
    lng: 'lon',
    long: 'lon',
  },
  geometry: 'optional',
  jsonArrays: true,
};

const importQuery = z.strictObject({ dryRun: z.enum(['true', 'false', '1', '0']).optional() });
const fitBody = z
  .strictObject({
    grouping: z.enum(CALIBRATION_GROUPINGS, { error: `must be one of ${CALIBRATION_GROUPINGS.join(', ')}` }).optional(),
    folds: z.number({ error: 'must be a number' }).int('must be a whole number').min(2, 'must be 2–20').max(20, 'must be 2–20').optional(),
    seed: z.number({ error: 'must be a number' }).int('must be a whole number').min(0, 'must be ≥ 0').max(2 ** 31, 'must be ≤ 2³¹').optional(),
  })
  .optional();
const applyBody = z.strictObject({ calibrationId: id() });
const calibrationParams = z.strictObject({ planId: id(), calibrationId: id() });

const interval = z.tuple([z.number(), z.number()]).describe('95 % interval [low, high], dB');
const calibrationResponse = z.object({
    id: z.string(),
    planId: z.string(),
    grouping: z.string(),
    n: z.number().int(),
    nodes: z.number().int(),
    biasDb: z.number().describe('add to every predicted RSSI, dB'),
    sigmaDb: z.number().describe('fitted spread σ, dB'),
    biasCi95Db: interval,
    sigmaCi95Db: interval,
    medianDb: z.number(),
    robustSigmaDb: z.number(),
    outlierCount: z.number().int(),
    groups: z.array(
      z.object({
        key: z.string(),
        n: z.number().int(),
        fitted: z.boolean().describe('false: fewer readings than a group needs; the plan-wide figures stand'),
        note: z.string().optional(),
        nodes: z.number().int().optional(),
        biasDb: z.number().optional(),
        sigmaDb: z.number().optional(),
        biasCi95Db: interval.optional(),
        sigmaCi95Db: interval.optional(),
        medianDb: z.number().optional(),
        robustSigmaDb: z.number().optional(),
        outlierCount: z.number().int().optional(),
      }),
    ),
    outliers: z.array(z.object({ readingId: z.string(), nodeId: z.string(), gatewayId: z.string(), residualDb: z.number(), modifiedZ: z.number(), group: z.string() })),
    crossValidation: z.object({ folds: z.number().int(), seed: z.number().int(), n: z.number().int(), rmseBeforeDb: z.number(), rmseAfterDb: z.number(), meanErrorBeforeDb: z.number(), meanErrorAfterDb: z.number(), method: z.string() }).nullable(),
    crossValidationNote: z.string().optional(),
    method: z.object({ bias: z.string(), sigma: z.string(), outliers: z.string(), crossValidation: z.string() }),
    excluded: z.array(z.object({ readingId: z.string(), nodeId: z.string(), gatewayId: z.string().nullable(), reason: z.string() })),
    residuals: z.array(z.object({ readingId: z.string(), nodeId: z.string(), gatewayId: z.string(), distanceM: z.number(), residualDb: z.number(), group: z.string() })),
    createdAt: z.string(),
    createdById: z.string().nullable(),
    applied: z.boolean(),
    appliedAt: z.string().nullable(),
    revertedAt: z.string().nullable(),
  });

function mapError(error: unknown): never {
  if (error instanceof CalibrationError) throw new ApiError(STATUS_OF_KIND[error.kind], error.code, error.message, error.extra);
  return asApiError(error);
}

export default async function calibrationRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const engine = app.linkEngine;
  const tags = ['calibration'];

  api.post(
    '/plans/:planId/readings/import',
    {
      bodyLimit: Math.min(config.maxUploadBytes, 64 * 1024 * 1024),
      schema: {
        summary:
          "Import field readings in bulk: a gateway's uplink log or a drive test as CSV (header row) or JSON (array of records, or a GeoJSON FeatureCollection). Columns: nodeId | devEui | nodeName, gatewayId (id or name), rssiDbm, snrDb, sf, measuredAt, optional lat/lon, note. All rows or none; duplicates (same node, gateway, time and SF) are recognised and skipped; ?dryRun=true previews",
        tags,
        params: planParams,
        querystring: importQuery,
        response: { 200: readingImportPreview.describe('?dryRun=true: what would be stored'), 201: readingImportDone(fieldReadingResponse).describe('stored: the first 100 readings'), ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner', 'installer');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const dryRun = request.query.dryRun === 'true' || request.query.dryRun === '1';
      let records: Record<string, unknown>[];
      try {
        records = importRecords(request.body, readingFields, readingFormat);
      } catch (error) {
        if (error instanceof ImportFormatError) throw new ApiError(400, 'invalid_input', error.message);
        throw error;
      }
      if (records.length === 0) throw new ApiError(400, 'invalid_input', 'body: no rows to import');
      if (records.length > 20_000) throw new ApiError(400, 'invalid_input', `body: ${records.length} rows; at most 20000 per import`);
      const ignoredColumns = [...new Set(records.flatMap((r) => Object.keys(r)))].filter((key) => !readingFields.includes(key) && key !== '__geometryError').sort();
      const { rows, errors } = validateRecords(records, readingRow);
      // validateRecords keeps the valid rows in order; their numbers are the rows without errors.
      const failed = new Set(errors.map((e) => e.row));
      const numbers = records.map((_, index) => index + 1).filter((row) => !failed.has(row));
      const valid: ReadingImportRow[] = rows.map((row, index) => ({ ...row, row: numbers[index], measuredAt: new Date(row.measuredAt) }));
      let outcome;
      try {
        outcome = await importReadings(db, principal, plan, { rowCount: records.length, rows: valid, errors: errors as RowProblem[] }, dryRun);
      } catch (error) {
        return mapError(error);
      }
      const { readings, preview, ...rest } = outcome;
      if (dryRun) return { ...rest, ignoredColumns, preview };
      return reply.status(201).send({ ...rest, ignoredColumns, items: readings.slice(0, 100), itemsNote: readings.length > 100 ? `the first 100 of ${readings.length} stored readings` : undefined });
    },
  );

  api.post(
    '/plans/:planId/calibration',
    {
      schema: {
        summary: "Fit the model's bias and spread to the plan's field readings (residual = measured − predicted RSSI), optionally per environment, clutter class or distance band; robust, with 95 % intervals, named outliers and node-grouped k-fold cross-validation. Stored, not applied",
        tags,
        params: planParams,
        body: fitBody,
        response: { 201: calibrationResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      try {
        return reply.status(201).send(await createPlanCalibration(db, engine, principal, plan, request.body ?? {}));
      } catch (error) {
        return mapError(error);
      }
    },
  );

  api.get(
    '/plans/:planId/calibration',
    {
      schema: {
        summary: "The plan's calibrations, newest first, and which one is applied (residual lists only in GET .../calibration/{calibrationId})",
        tags,
        params: planParams,
        querystring: pageQuery,
        response: { 200: z.object({ items: z.array(calibrationResponse), total: z.number().int(), next: z.string().nullable(), appliedId: z.string().nullable() }), ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const offset = decodeCursor(request.query.cursor);
      const limit = request.query.limit ?? 100;
      const { items, total, appliedId } = await calibrationHistory(db, plan, offset, limit);
      return { items, total, next: offset + items.length < total ? encodeCursor(offset + items.length) : null, appliedId };
    },
  );

  api.get(
    '/plans/:planId/calibration/:calibrationId',
    { schema: { summary: 'One calibration with its residuals (for the residual chart)', tags, params: calibrationParams, response: { 200: calibrationResponse, ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const row = await findCalibration(db, plan.id, request.params.calibrationId);
      if (!row) throw new ApiError(404, 'not_found', 'calibration not found');
      const applied = await findAppliedCalibration(db, plan.id);
      return calibrationView(row, applied?.id ?? null);
    },
  );

  api.post(
    '/plans/:planId/calibration/apply',
    {
      schema: {
        summary: "Apply a calibration to the plan (planner): every prediction adds its bias and every link's σ becomes its fitted spread (sigmaSource \"calibration\"). One at a time; audited",
        tags,
        params: planParams,
        body: applyBody,
        response: { 200: z.object({ applied: calibrationResponse, previousId: z.string().nullable(), changed: z.boolean() }), ...errorResponses },
      },
    },
    async (request) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      try {
        return await applyPlanCalibration(db, principal, plan, request.body.calibrationId);
      } catch (error) {
        return mapError(error);
      }
    },
  );

  api.post(
    '/plans/:planId/calibration/revert',
    {
      schema: {
        summary: 'Revert the applied calibration (planner): the one applied before it comes back, or none. Audited',
        tags,
        params: planParams,
        response: { 200: z.object({ reverted: calibrationResponse, restored: calibrationResponse.nullable() }), ...errorResponses },
      },
    },
    async (request) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      try {
        return await revertPlanCalibration(db, principal, plan);
      } catch (error) {
        return mapError(error);
      }
    },
  );
}
