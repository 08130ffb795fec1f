// The kit catalog: /kit/antenna-designs, /kit/feedlines, /kit/masts. Built-ins (from
// server/radio, builtIn: true) are read-only for everyone; a team's planners add, edit and
// delete their own rows.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { JsonValue } from '../../db/types.ts';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import {
  createAntennaDesign,
  createFeedline,
  createMast,
  deleteKitRow,
  findAntennaDesignRow,
  findFeedlineRow,
  findMastRow,
  listAntennaDesigns,
  listFeedlines,
  listMasts,
  updateAntennaDesign,
  updateFeedline,
  updateMast,
  type KitKind,
} from '../../db/repositories/kit.ts';
import type { Database } from '../../db/client.ts';
import { requireRole } from '../auth.ts';
import { antennaPatternSchema, omniPattern } from '../../radio/pattern-schema.ts';
import { ApiError } from '../errors.ts';
import { dateTime, errorResponses, finite, id, itemParams, jsonObject, name, nonNegative, notes, pageOf, pageQuery, positive, version } from '../schemas.ts';

const antennaFields = {
  name: name(),
  kind: z.string().regex(/^[a-z0-9-]{1,40}$/, 'must be a kind such as collinear or yagi'),
  gainDbi: finite().min(-30, 'must be ≥ -30 dBi').max(40, 'must be ≤ 40 dBi'),
  // Omitted on create: stored explicitly as an omni of gainDbi (see server/radio/pattern-schema.ts).
  pattern: antennaPatternSchema.default(omniPattern),
  polarization: z.enum(['vertical', 'horizontal', 'circular', 'mixed'], { error: 'must be vertical, horizontal, circular or mixed' }).optional(),
  fromMhz: positive(),
  toMhz: positive(),
  typicalVswr: finite().min(1, 'must be ≥ 1').max(20, 'must be ≤ 20').optional(),
  costUsd: nonNegative().optional(),
  homemade: z.boolean().optional(),
  buildSheetId: id().nullable().optional(),
  notes: notes().optional(),
};
const bandRule = (body: { fromMhz?: number; toMhz?: number }, ctx: z.RefinementCtx) => {
  if (body.fromMhz !== undefined && body.toMhz !== undefined && body.toMhz <= body.fromMhz) ctx.addIssue({ code: 'custom', path: ['toMhz'], message: 'must be above fromMhz' });
};
const antennaCreate = z.strictObject(antennaFields).superRefine(bandRule);
const antennaPatch = z
  .strictObject({ ...antennaFields, pattern: antennaPatternSchema.optional(), name: name().optional(), kind: antennaFields.kind.optional(), gainDbi: antennaFields.gainDbi.optional(), fromMhz: positive().optional(), toMhz: positive().optional(), version: version() })
  .superRefine(bandRule);

const lossPoint = z.strictObject({ frequencyMhz: positive(), lossDbPer100m: nonNegative() });
const feedlineFields = {
  name: name(),
  lossDbPer100m: nonNegative().max(1000, 'must be ≤ 1000 dB/100 m'),
  referenceMhz: positive(),
  lossTable: z.array(lossPoint).max(50).optional(),
  connectorLossDb: nonNegative().max(10, 'must be ≤ 10 dB').optional(),
  impedanceOhm: positive().optional(),
  velocityFactor: finite().gt(0, 'must be > 0').max(1, 'must be ≤ 1').nullable().optional(),
  costUsdPerM: nonNegative().optional(),
  notes: notes().optional(),
};
const feedlineCreate = z.strictObject(feedlineFields);
const feedlinePatch = z.strictObject({ ...feedlineFields, name: name().optional(), lossDbPer100m: feedlineFields.lossDbPer100m.optional(), referenceMhz: positive().optional(), version: version() });

const mastFields = {
  name: name(),
  heightM: positive().max(500, 'must be ≤ 500 m'),
  costUsd: nonNegative().optional(),
  details: jsonObject.optional(),
  notes: notes().optional(),
};
const mastCreate = z.strictObject(mastFields);
const mastPatch = z.strictObject({ ...mastFields, name: name().optional(), heightM: mastFields.heightM.optional(), version: version() });

/** Columns every catalog row has (each row schema lists every field; unlisted keys are dropped). */
const kitRowFields = {
  id: z.string(),
  teamId: z.string().nullable().describe('null for built-in rows'),
  builtIn: z.boolean().describe('true: from server/radio, read-only'),
  name: z.string(),
  notes: z.string(),
  details: z.unknown().describe('the rest of the row as server/radio describes it (JSON object)'),
  version: z.number().int(),
  createdAt: dateTime,
  updatedAt: dateTime,
};
export const antennaResponse = z
  .object({
    ...kitRowFields,
    kind: z.string(),
    gainDbi: z.number().describe('dBi'),
    pattern: z.unknown().describe('radiation pattern tables, dB relative to peak (JSON object)'),
    polarization: z.string(),
    fromMhz: z.number(),
    toMhz: z.number(),
    typicalVswr: z.number(),
    costUsd: z.number(),
    homemade: z.boolean(),
    buildSheetId: z.string().nullable(),
  });
export const feedlineResponse = z
  .object({
    ...kitRowFields,
    lossDbPer100m: z.number().describe('dB per 100 m at referenceMhz'),
    referenceMhz: z.number(),
    lossTable: z.unknown().describe('[{ frequencyMhz, lossDbPer100m }]'),
    connectorLossDb: z.number(),
    impedanceOhm: z.number(),
    velocityFactor: z.number().nullable(),
    costUsdPerM: z.number(),
  });
export const mastResponse = z.object({ ...kitRowFields, heightM: z.number().describe('m'), costUsd: z.number() });

type Row = { id: string; teamId: string | null };
const withBuiltIn = <T extends Row>(row: T) => ({ ...row, builtIn: row.teamId === null });
const asJson = <T extends Record<string, unknown>>(body: T) => body as T & Record<string, JsonValue | undefined>;

interface Catalog {
  kind: KitKind;
  entity: string;
  create: z.ZodType;
  patch: z.ZodType;
  response: z.ZodType;
  list: (db: Database, teamId: string, query: { limit?: number; cursor?: string }) => Promise<{ items: Row[]; total: number; next: string | null }>;
  find: (db: Database, teamId: string, id: string) => Promise<Row | null>;
  insert: (db: Database, teamId: string, data: Record<string, unknown>) => Promise<Row>;
  update: (db: Database, teamId: string, id: string, version: number, patch: Record<string, unknown>) => Promise<Row & { version: number }>;
}

const catalogs: Catalog[] = [
  {
    kind: 'antenna-designs',
    entity: 'antenna design',
    create: antennaCreate,
    patch: antennaPatch,
    response: antennaResponse,
    list: listAntennaDesigns,
    find: findAntennaDesignRow,
    insert: (db, teamId, data) => createAntennaDesign(db, teamId, asJson(data) as Parameters<typeof createAntennaDesign>[2]),
    update: (db, teamId, rowId, v, data) => updateAntennaDesign(db, teamId, rowId, v, asJson(data)),
  },
  {
    kind: 'feedlines',
    entity: 'feedline',
    create: feedlineCreate,
    patch: feedlinePatch,
    response: feedlineResponse,
    list: listFeedlines,
    find: findFeedlineRow,
    insert: (db, teamId, data) => createFeedline(db, teamId, asJson(data) as Parameters<typeof createFeedline>[2]),
    update: (db, teamId, rowId, v, data) => updateFeedline(db, teamId, rowId, v, asJson(data)),
  },
  {
    kind: 'masts',
    entity: 'mast option',
    create: mastCreate,
    patch: mastPatch,
    response: mastResponse,
    list: listMasts,
    find: findMastRow,
    insert: (db, teamId, data) => createMast(db, teamId, asJson(data) as Parameters<typeof createMast>[2]),
    update: (db, teamId, rowId, v, data) => updateMast(db, teamId, rowId, v, asJson(data)),
  },
];

export default async function kitRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['kit'];

  for (const catalog of catalogs) {
    const base = `/kit/${catalog.kind}`;
    const ownRow = async (teamId: string, rowId: string) => {
      const row = await catalog.find(db, teamId, rowId);
      if (!row) throw new ApiError(404, 'not_found', `${catalog.entity} not found`);
      if (row.teamId === null) throw new ApiError(403, 'forbidden', `built-in ${catalog.entity}s are read-only; add your own copy instead`);
      return row;
    };

    api.get(base, { schema: { summary: `Built-in and team ${catalog.entity}s`, tags, querystring: pageQuery, response: { 200: pageOf(catalog.response), ...errorResponses } } }, async (request) => {
      const page = await catalog.list(db, request.principal.teamId, request.query);
      return { ...page, items: page.items.map(withBuiltIn) };
    });

    api.get(`${base}/:id`, { schema: { summary: `One ${catalog.entity}`, tags, params: itemParams, response: { 200: catalog.response, ...errorResponses } } }, async (request) => {
      const row = await catalog.find(db, request.principal.teamId, request.params.id);
      if (!row) throw new ApiError(404, 'not_found', `${catalog.entity} not found`);
      return withBuiltIn(row);
    });

    api.post(base, { schema: { summary: `Add a team ${catalog.entity}`, tags, body: catalog.create, response: { 201: catalog.response, ...errorResponses } } }, async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const row = await writeWithAudit(db, (tx) => catalog.insert(tx, principal.teamId, request.body as Record<string, unknown>), (created) => ({ principal, action: 'create', entity: catalog.entity, entityId: created.id }));
      return reply.status(201).send(withBuiltIn(row));
    });

    api.patch(`${base}/:id`, { schema: { summary: `Update a team ${catalog.entity} (send the version you read)`, tags, params: itemParams, body: catalog.patch, response: { 200: catalog.response, ...errorResponses } } }, async (request) => {
      const principal = requireRole(request, 'planner');
      await ownRow(principal.teamId, request.params.id);
      const { version: expected, ...patch } = request.body as { version: number } & Record<string, unknown>;
      const row = await writeWithAudit(db, (tx) => catalog.update(tx, principal.teamId, request.params.id, expected, patch), (updated) => ({ principal, action: 'update', entity: catalog.entity, entityId: updated.id, detail: { fields: Object.keys(patch), version: updated.version } }));
      return withBuiltIn(row);
    });

    api.delete(`${base}/:id`, { schema: { summary: `Delete a team ${catalog.entity}`, tags, params: itemParams } }, async (request, reply) => {
      const principal = requireRole(request, 'planner');
      await ownRow(principal.teamId, request.params.id);
      await writeWithAudit(db, (tx) => deleteKitRow(tx, principal.teamId, catalog.kind, request.params.id), () => ({ principal, action: 'delete', entity: catalog.entity, entityId: request.params.id }));
      return reply.status(204).send();
    });
  }
}
