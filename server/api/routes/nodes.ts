// Nodes of a plan: position, device, kit, radio settings, environment, install status.
// Installers may change installStatus and notes only; planners edit everything.
// POST /plans/:planId/nodes/import takes CSV or GeoJSON: all rows or none (?dryRun=true previews).
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { createNode, createNodesAtomically, deleteNode, findNode, listNodes, updateNode, type NodeCreate } from '../../db/repositories/nodes.ts';
import type { Database } from '../../db/client.ts';
import type { DbInstallStatus as InstallStatus } from '../../db/types.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { assertKitVisible } from '../kit-check.ts';
import { ImportFormatError, importRecords, validateRecords, type RowError } from '../node-import.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { dateTime, errorResponses, finite, id, latitude, longitude, name, nodeAntennaHeightAglM, nodeEnvironment, nodeFeedlineLengthM, nodeTxPowerDbm, notes, pageOf, pageQuery, payloadBytes, planItemParams, planParams, version } from '../schemas.ts';
import { findAntennaDesignRow, findFeedlineRow, findMastRow } from '../../db/repositories/kit.ts';

export const defaultNodeAntennaId = 'helical-stub';
export const installStatuses = ['planned', 'installed', 'needs-visit'] as const;
type ApiInstallStatus = (typeof installStatuses)[number];

// The database enum spells needs-visit as needs_visit (Prisma identifiers); the API uses the hyphen.
const toDbStatus = (status: ApiInstallStatus): InstallStatus => (status === 'needs-visit' ? 'needs_visit' : status);
/** A node as the API shows it (installStatus spelled with the hyphen). */
export function nodeView<T extends { installStatus?: unknown }>(node: T): Omit<T, 'installStatus'> & { installStatus: ApiInstallStatus } {
  const status = node.installStatus ?? 'planned';
  return { ...node, installStatus: (status === 'needs_visit' ? 'needs-visit' : status) as ApiInstallStatus };
}

/** LoRaWAN DevEUI: 16 hex digits; separators (-, :, space) are dropped and letters upper-cased. */
export const devEuiField = () =>
  z
    .string({ error: 'must be a text of 16 hexadecimal digits' })
    .regex(/^[0-9A-Fa-f]{2}([\s:-]?[0-9A-Fa-f]{2}){7}$/, 'must be 16 hexadecimal digits (LoRaWAN DevEUI)')
    .transform((value) => value.replace(/[\s:-]/g, '').toUpperCase());

const nodeFields = {
  name: name(),
  lat: latitude(),
  lon: longitude(),
  deviceType: name(),
  antennaDesignId: id().optional(),
  antennaHeightAglM: nodeAntennaHeightAglM().optional(),
  feedlineId: id().nullable().optional(),
  feedlineLengthM: nodeFeedlineLengthM().optional(),
  mastOptionId: id().nullable().optional(),
  txPowerDbm: nodeTxPowerDbm().optional(),
  sfPolicy: z.enum(['adaptive', 'fixed'], { error: 'must be adaptive or fixed' }).optional(),
  fixedSf: z.number({ error: 'must be a number' }).int('must be a whole number').min(5, 'must be 5-12').max(12, 'must be 5-12').nullable().optional(),
  payloadBytes: payloadBytes().optional(),
  messagesPerHour: finite().positive('must be > 0').max(3600, 'must be ≤ 3600').optional(),
  environment: nodeEnvironment().optional(),
  buildingType: z.string().max(100).nullable().optional(),
  installStatus: z.enum(installStatuses, { error: 'must be planned, installed or needs-visit' }).optional(),
  notes: notes().optional(),
  devEui: devEuiField().nullable().optional(),
};

function fixedSfRule(body: { sfPolicy?: string; fixedSf?: number | null }, ctx: z.RefinementCtx) {
  if (body.sfPolicy === 'fixed' && (body.fixedSf === undefined || body.fixedSf === null)) {
    ctx.addIssue({ code: 'custom', path: ['fixedSf'], message: 'required when sfPolicy is fixed' });
  }
}

export const nodeCreateBody = z.strictObject(nodeFields).superRefine(fixedSfRule);
export const nodePatchBody = z.strictObject({
  ...nodeFields,
  name: name().optional(),
  lat: latitude().optional(),
  lon: longitude().optional(),
  deviceType: name().optional(),
  version: version(),
});
const nodeFieldNames = Object.keys(nodeFields);
const installerFields = new Set(['installStatus', 'notes']);

type NodeBody = z.infer<typeof nodeCreateBody>;
function toNodeData(body: NodeBody): NodeCreate {
  return { ...body, antennaDesignId: body.antennaDesignId ?? defaultNodeAntennaId, antennaHeightAglM: body.antennaHeightAglM ?? 1.5, installStatus: body.installStatus ? toDbStatus(body.installStatus) : undefined };
}

/** Kit references of many rows, checked against the catalog once per distinct id. */
async function kitErrors(db: Database, teamId: string, rows: NodeCreate[]): Promise<RowError[]> {
  const errors: RowError[] = [];
  const cache = new Map<string, boolean>();
  const visible = async (field: string, value: string) => {
    const key = `${field}:${value}`;
    if (!cache.has(key)) {
      const row =
        field === 'antennaDesignId' ? await findAntennaDesignRow(db, teamId, value) : field === 'feedlineId' ? await findFeedlineRow(db, teamId, value) : await findMastRow(db, teamId, value);
      cache.set(key, row !== null);
    }
    return cache.get(key) === true;
  };
  for (const [index, row] of rows.entries()) {
    for (const field of ['antennaDesignId', 'feedlineId', 'mastOptionId'] as const) {
      const value = row[field];
      if (value && !(await visible(field, value))) errors.push({ row: index + 1, field, message: `no ${field.replace(/Id$/, '')} "${value}" in the kit catalog` });
    }
  }
  return errors;
}

/** A node as the API answers it: every field listed (the serializer drops unlisted keys). */
export const nodeResponse = z
  .object({
    id: z.string(),
    planId: z.string(),
    name: z.string(),
    lat: z.number().describe('degrees WGS84'),
    lon: z.number().describe('degrees WGS84'),
    deviceType: z.string(),
    antennaDesignId: z.string(),
    antennaHeightAglM: z.number().describe('m above ground (negative in a pit)'),
    feedlineId: z.string().nullable(),
    feedlineLengthM: z.number().describe('m'),
    mastOptionId: z.string().nullable(),
    txPowerDbm: z.number().describe('dBm at the radio port'),
    sfPolicy: z.enum(['adaptive', 'fixed']),
    fixedSf: z.number().int().nullable(),
    payloadBytes: z.number().int(),
    messagesPerHour: z.number(),
    environment: z.enum(['outdoor', 'indoor', 'pit']),
    buildingType: z.string().nullable(),
    installStatus: z.enum(installStatuses),
    notes: z.string(),
    devEui: z.string().nullable().describe('LoRaWAN DevEUI, 16 hex digits'),
    originId: z.string().nullable().describe('the node this one was copied from (plan copies), so scenarios compare node by node'),
    version: z.number().int(),
    createdAt: dateTime,
    updatedAt: dateTime,
  });

const rowErrorResponse = z.object({ row: z.number().int().describe('1-based data row (CSV: not counting the header; GeoJSON: feature number)'), field: z.string(), message: z.string() });
/** ?dryRun=true: whether every row passed, the row errors, and the first 100 rows as they would be stored. */
const importPreviewResponse = z.object({
  dryRun: z.literal(true),
  valid: z.boolean(),
  rowCount: z.number().int(),
  errors: z.array(rowErrorResponse),
  preview: z.array(nodeResponse.omit({ id: true, planId: true, originId: true, version: true, createdAt: true, updatedAt: true }).partial()),
});
/** The rows were stored (all of them; with any row error nothing is, and the answer is a 400 invalid_rows with error.rows). */
const importDoneResponse = z.object({ created: z.number().int(), items: z.array(nodeResponse) });

export default async function nodeRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const tags = ['nodes'];

  api.get(
    '/plans/:planId/nodes',
    {
      schema: {
        summary: 'Nodes of a plan',
        tags,
        params: planParams,
        querystring: pageQuery.extend({ installStatus: z.enum(installStatuses).optional(), deviceType: z.string().max(200).optional() }),
        response: { 200: pageOf(nodeResponse), ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const { installStatus, deviceType, ...page } = request.query;
      const filter: { installStatus?: InstallStatus; deviceType?: string } = { ...(installStatus ? { installStatus: toDbStatus(installStatus) } : {}), ...(deviceType ? { deviceType } : {}) };
      const result = await listNodes(db, plan.id, page, filter);
      return { ...result, items: result.items.map(nodeView) };
    },
  );

  api.post('/plans/:planId/nodes', { schema: { summary: 'Add a node (antenna defaults to a helical stub)', tags, params: planParams, body: nodeCreateBody, response: { 201: nodeResponse, ...errorResponses } } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const data = toNodeData(request.body);
    await assertKitVisible(db, principal.teamId, data);
    const node = await writeWithAudit(db, (tx) => createNode(tx, plan.id, data), (row) => ({ principal, action: 'create', entity: 'node', entityId: row.id, detail: { planId: plan.id, name: row.name } }));
    return reply.status(201).send(nodeView(node));
  });

  api.post(
    '/plans/:planId/nodes/import',
    {
      bodyLimit: Math.min(config.maxUploadBytes, 64 * 1024 * 1024),
      schema: {
        summary: 'Import nodes from CSV (text/csv, header row of field names) or GeoJSON (FeatureCollection of Points): all rows or none; ?dryRun=true previews',
        tags,
        params: planParams,
        querystring: z.strictObject({ dryRun: z.enum(['true', 'false', '1', '0']).optional() }),
        response: { 200: importPreviewResponse, 201: importDoneResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const dryRun = request.query.dryRun === 'true' || request.query.dryRun === '1';
      let records: Record<string, unknown>[];
      try {
        records = importRecords(request.body, nodeFieldNames);
      } catch (error) {
        if (error instanceof ImportFormatError) throw new ApiError(400, 'invalid_input', error.message);
        throw error;
      }
      if (records.length === 0) throw new ApiError(400, 'invalid_input', 'body: no rows to import');
      if (records.length > 20_000) throw new ApiError(400, 'invalid_input', `body: ${records.length} rows; at most 20000 per import`);
      const { rows, errors } = validateRecords(records, nodeCreateBody);
      const data = rows.map(toNodeData);
      if (errors.length === 0) errors.push(...(await kitErrors(db, principal.teamId, data)));
      errors.sort((a, b) => a.row - b.row);
      if (dryRun) {
        return { dryRun: true as const, valid: errors.length === 0, rowCount: records.length, errors, preview: data.slice(0, 100).map(nodeView) };
      }
      if (errors.length > 0) {
        throw new ApiError(400, 'invalid_rows', `${new Set(errors.map((e) => e.row)).size} of ${records.length} rows have errors; nothing was imported (first: row ${errors[0].row} ${errors[0].field}: ${errors[0].message})`, {
          rows: errors.slice(0, 500),
        });
      }
      const created = await createNodesAtomically(db, plan.id, data, { principal, action: 'import', entity: 'node', entityId: plan.id, detail: { planId: plan.id, count: data.length } });
      return reply.status(201).send({ created: created.length, items: created.map(nodeView) });
    },
  );

  api.get('/plans/:planId/nodes/:id', { schema: { summary: 'One node', tags, params: planItemParams, response: { 200: nodeResponse, ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const node = await findNode(db, plan.id, request.params.id);
    if (!node) throw new ApiError(404, 'not_found', 'node not found');
    return nodeView(node);
  });

  api.patch(
    '/plans/:planId/nodes/:id',
    { schema: { summary: 'Update a node (send the version you read); installers may change installStatus and notes', tags, params: planItemParams, body: nodePatchBody, response: { 200: nodeResponse, ...errorResponses } } },
    async (request) => {
      const principal = requireRole(request, 'planner', 'installer');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const { version: expected, ...patch } = request.body;
      if (principal.role === 'installer') {
        const forbidden = Object.keys(patch).filter((field) => !installerFields.has(field));
        if (forbidden.length > 0) throw new ApiError(403, 'forbidden', `installers may change installStatus and notes only (not ${forbidden.join(', ')})`);
      }
      if (patch.sfPolicy === 'fixed' && patch.fixedSf == null) {
        const current = await findNode(db, plan.id, request.params.id);
        if (current && current.fixedSf == null) throw new ApiError(400, 'invalid_input', 'fixedSf: required when sfPolicy is fixed');
      }
      await assertKitVisible(db, principal.teamId, patch);
      const data = { ...patch, installStatus: patch.installStatus ? toDbStatus(patch.installStatus) : undefined };
      const node = await writeWithAudit(db, (tx) => updateNode(tx, plan.id, request.params.id, expected, data), (row) => ({ principal, action: 'update', entity: 'node', entityId: row.id, detail: { planId: plan.id, fields: Object.keys(patch), version: row.version } }));
      return nodeView(node);
    },
  );

  api.delete('/plans/:planId/nodes/:id', { schema: { summary: 'Delete a node (and its cached links and field readings)', tags, params: planItemParams } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    await writeWithAudit(db, (tx) => deleteNode(tx, plan.id, request.params.id), () => ({ principal, action: 'delete', entity: 'node', entityId: request.params.id, detail: { planId: plan.id } }));
    return reply.status(204).send();
  });
}
