// Cached link predictions (model Link). A row holds, for one node–gateway
// pair, the hash of every input its result was computed from and the result
// (its path hash; the path prediction itself packed into the `packed` bytes,
// server/planning/path-pack.ts; rows stored before that keep the path as JSON).
// A lookup with a different hash is a miss, so any change to the node, the
// gateway, the kit, the plan's settings or the terrain invalidates it.
import type { Database } from '../client.ts';
import { Prisma } from '../generated/client.ts';

export interface LinkRow {
  nodeId: string;
  gatewayId: string;
  inputHash: string;
  result: unknown;
  /** The packed path (server/planning/path-pack.ts); null/absent when `result` holds everything. */
  packed?: Uint8Array | null;
}

const ROW = { nodeId: true, gatewayId: true, inputHash: true, result: true, packed: true } as const;

/** Cached rows of one node. */
export async function listNodeLinkRows(db: Database, planId: string, nodeId: string): Promise<LinkRow[]> {
  return db.prisma.link.findMany({ where: { planId, nodeId }, select: ROW });
}

/** Cached rows of a whole plan. */
export async function listPlanLinkRows(db: Database, planId: string): Promise<LinkRow[]> {
  return db.prisma.link.findMany({ where: { planId }, select: ROW });
}

/**
 * The path hash of the cached rows of some nodes of a plan, without the stored path: what the
 * fleet's first step needs, a group of nodes at a time, to know which paths the cache lacks (a few
 * dozen bytes a row, where a full row carries the path). The ids travel as one comma-joined text
 * (cuid ids never hold a comma), as upsertLinkRows sends them.
 */
export async function listLinkPathHashesForNodes(db: Database, planId: string, nodeIds: readonly string[]): Promise<Array<{ nodeId: string; gatewayId: string; pathHash: string | null }>> {
  if (nodeIds.length === 0) return [];
  return db.prisma.$queryRaw<Array<{ nodeId: string; gatewayId: string; pathHash: string | null }>>`SELECT "nodeId", "gatewayId", "result"->>'pathHash' AS "pathHash" FROM "Link" WHERE "planId" = ${planId} AND "nodeId" = ANY(string_to_array(${nodeIds.join(',')}, ','))`;
}

/** Cached rows of some nodes of a plan (one page of the fleet). */
export async function listLinkRowsForNodes(db: Database, planId: string, nodeIds: readonly string[]): Promise<LinkRow[]> {
  if (nodeIds.length === 0) return [];
  return db.prisma.link.findMany({ where: { planId, nodeId: { in: [...nodeIds] } }, select: ROW });
}

/** A row in the slim form: the packed path beside a result that is only {pathHash}. */
function slimPathHash(row: LinkRow): string | null {
  if (!row.packed || !row.result || typeof row.result !== 'object') return null;
  const keys = Object.keys(row.result);
  const pathHash = (row.result as { pathHash?: unknown }).pathHash;
  return keys.length === 1 && typeof pathHash === 'string' && !pathHash.includes(',') ? pathHash : null;
}

/**
 * Upserts Link rows on their unique key (nodeId, gatewayId) in at most two
 * statements whatever their number (`tx`: the client or a transaction's):
 * rows in the slim form travel as five comma-joined text parameters (ids,
 * hashes and base64 bytes never hold a comma) unnested into one multi-row
 * INSERT, the JSON result built in SQL; any other row (a path the packed
 * layout does not know, or a test's free JSON) as one JSON parameter through
 * `jsonb_to_recordset`. A pair listed twice keeps its last row (one statement
 * may not update a row twice). A row is written only while its node and its
 * gateway are in the plan (the rule the table's foreign keys kept before
 * migration 20261207010000, at a fraction of their cost): a row of a node or
 * gateway deleted meanwhile is left out, not an error. Returns rows written.
 */
export async function upsertLinkRows(tx: Pick<Database['prisma'], '$executeRaw'>, planId: string, rows: readonly LinkRow[]): Promise<number> {
  if (rows.length === 0) return 0;
  const latest = new Map<string, LinkRow>();
  for (const row of rows) {
    const key = `${row.nodeId}\u0000${row.gatewayId}`;
    latest.delete(key);
    latest.set(key, row);
  }
  const slim = { nodeIds: [] as string[], gatewayIds: [] as string[], inputHashes: [] as string[], pathHashes: [] as string[], packed: [] as string[] };
  const other: LinkRow[] = [];
  for (const row of latest.values()) {
    const pathHash = slimPathHash(row);
    if (pathHash === null || row.nodeId.includes(',') || row.gatewayId.includes(',') || row.inputHash.includes(',')) {
      other.push(row);
      continue;
    }
    slim.nodeIds.push(row.nodeId);
    slim.gatewayIds.push(row.gatewayId);
    slim.inputHashes.push(row.inputHash);
    slim.pathHashes.push(pathHash);
    slim.packed.push(Buffer.from(row.packed!.buffer, row.packed!.byteOffset, row.packed!.byteLength).toString('base64'));
  }
  let written = 0;
  if (slim.nodeIds.length > 0) {
    written += await tx.$executeRaw`INSERT INTO "Link" ("planId", "nodeId", "gatewayId", "inputHash", "result", "packed", "computedAt")
        SELECT ${planId}, r.n, r.g, r.h, jsonb_build_object('pathHash', r.ph), decode(r.p, 'base64'), CURRENT_TIMESTAMP
        FROM unnest(string_to_array(${slim.nodeIds.join(',')}, ','), string_to_array(${slim.gatewayIds.join(',')}, ','), string_to_array(${slim.inputHashes.join(',')}, ','),
                    string_to_array(${slim.pathHashes.join(',')}, ','), string_to_array(${slim.packed.join(',')}, ',')) AS r(n, g, h, ph, p)
        WHERE EXISTS (SELECT 1 FROM "Node" x WHERE x."id" = r.n AND x."planId" = ${planId}) AND EXISTS (SELECT 1 FROM "Gateway" y WHERE y."id" = r.g AND y."planId" = ${planId})
      ON CONFLICT ("planId", "nodeId", "gatewayId") DO UPDATE SET "inputHash" = EXCLUDED."inputHash", "result" = EXCLUDED."result", "packed" = EXCLUDED."packed", "computedAt" = EXCLUDED."computedAt"`;
  }
  if (other.length > 0) {
    const json = JSON.stringify(
      other.map((row) => ({ nodeId: row.nodeId, gatewayId: row.gatewayId, inputHash: row.inputHash, result: row.result, packed: row.packed ? Buffer.from(row.packed.buffer, row.packed.byteOffset, row.packed.byteLength).toString('base64') : null })),
    );
    written += await tx.$executeRaw`INSERT INTO "Link" ("planId", "nodeId", "gatewayId", "inputHash", "result", "packed", "computedAt")
        SELECT ${planId}, r."nodeId", r."gatewayId", r."inputHash", r."result", decode(r."packed", 'base64'), CURRENT_TIMESTAMP
        FROM jsonb_to_recordset(${json}::jsonb) AS r("nodeId" text, "gatewayId" text, "inputHash" text, "result" jsonb, "packed" text)
        WHERE EXISTS (SELECT 1 FROM "Node" x WHERE x."id" = r."nodeId" AND x."planId" = ${planId}) AND EXISTS (SELECT 1 FROM "Gateway" y WHERE y."id" = r."gatewayId" AND y."planId" = ${planId})
      ON CONFLICT ("planId", "nodeId", "gatewayId") DO UPDATE SET "inputHash" = EXCLUDED."inputHash", "result" = EXCLUDED."result", "packed" = EXCLUDED."packed", "computedAt" = EXCLUDED."computedAt"`;
  }
  return written;
}

/**
 * Stores (or replaces) the cached result of each pair (upsertLinkRows; its two
 * statements, when both are needed, in one transaction). A cold 2 500-link fleet
 * is one statement.
 */
export async function saveLinkRows(db: Database, planId: string, rows: readonly LinkRow[]): Promise<void> {
  if (rows.length === 0) return;
  const slim = rows.filter((row) => slimPathHash(row) !== null).length;
  if (slim === 0 || slim === rows.length) await upsertLinkRows(db.prisma, planId, rows);
  else await db.prisma.$transaction(async (tx) => void (await upsertLinkRows(tx, planId, rows)));
}

/** Drops every cached link of a plan. */
export async function clearPlanLinks(db: Database, planId: string): Promise<number> {
  const { count } = await db.prisma.link.deleteMany({ where: { planId } });
  return count;
}

/** The plan's terrain layers as the link engine needs them (files and a change signature). */
export async function listTerrainForLinks(db: Database, planId: string) {
  return db.prisma.terrainLayer.findMany({
    where: { planId },
    orderBy: [{ priority: 'desc' }, { resolutionM: 'asc' }, { createdAt: 'asc' }],
    select: { id: true, kind: true, name: true, filePath: true, sha256: true, resolutionM: true, priority: true, createdAt: true },
  });
}

// Fleet-wide kit recommendation runs are kept in the job table (model
// CoverageRun, kind 'kit-recommendation') so their progress and result
// survive a restart.
export const KIT_RUN_KIND = 'kit-recommendation';

export async function createKitRun(db: Database, planId: string, params: unknown, createdById: string | null, lockedBy: string) {
  return db.prisma.coverageRun.create({
    data: { planId, kind: KIT_RUN_KIND, params: params as Prisma.InputJsonValue, status: 'running', progress: 0, createdById, startedAt: new Date(), lockedBy, lockedAt: new Date() },
  });
}

export async function updateKitRun(db: Database, id: string, patch: { progress?: number; status?: 'running' | 'done' | 'failed'; error?: string | null; summary?: unknown }) {
  const { summary, ...rest } = patch;
  return db.prisma.coverageRun.update({
    where: { id },
    data: {
      ...rest,
      ...(summary !== undefined ? { summary: summary as Prisma.InputJsonValue } : {}),
      lockedAt: new Date(),
      ...(patch.status === 'done' || patch.status === 'failed' ? { finishedAt: new Date() } : {}),
    },
  });
}

export async function findKitRun(db: Database, planId: string, id: string) {
  return db.prisma.coverageRun.findFirst({ where: { id, planId, kind: KIT_RUN_KIND } });
}

/** A plan by id alone, for the command line (an operator on the machine; the API always scopes by team). */
export async function findPlanById(db: Database, planId: string) {
  return db.prisma.plan.findUnique({ where: { id: planId } });
}

/** All gateways of a plan in one query (the link engine needs every one). */
export async function listGatewaysForLinks(db: Database, planId: string) {
  return db.prisma.gateway.findMany({ where: { planId }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
}

/** All nodes of a plan in one query, in a stable order (the fleet table). */
export async function listNodesForLinks(db: Database, planId: string) {
  return db.prisma.node.findMany({ where: { planId }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
}

/** The kit columns of a plan's nodes, in the fleet table's order (what a kit price needs, no more). */
export async function listNodeKitRows(db: Database, planId: string) {
  return db.prisma.node.findMany({ where: { planId }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], select: { id: true, name: true, antennaDesignId: true, feedlineId: true, feedlineLengthM: true, antennaHeightAglM: true, mastOptionId: true } });
}

/**
 * One-query fingerprint of everything a node's links depend on besides the plan row:
 * the node row, the plan's gateways and terrain layers, and the team's visible kit
 * catalog (latest change and row counts, so deletions show too). Equal fingerprints
 * mean equal inputs, so the engine may answer from memory.
 */
export async function nodeLinkFingerprint(db: Database, planId: string, nodeId: string, teamId: string): Promise<string> {
  const rows = await db.prisma.$queryRaw<Array<Record<string, unknown>>>`SELECT
    (SELECT "updatedAt" FROM "Node" WHERE "id" = ${nodeId} AND "planId" = ${planId}) AS node_at,
    (SELECT "version" FROM "Node" WHERE "id" = ${nodeId} AND "planId" = ${planId}) AS node_version,
    (SELECT max("updatedAt") FROM "Gateway" WHERE "planId" = ${planId}) AS gateway_at,
    (SELECT count(*) FROM "Gateway" WHERE "planId" = ${planId}) AS gateways,
    (SELECT max("createdAt") FROM "TerrainLayer" WHERE "planId" = ${planId}) AS terrain_at,
    (SELECT count(*) FROM "TerrainLayer" WHERE "planId" = ${planId}) AS terrain_layers,
    (SELECT max("updatedAt") FROM "AntennaDesign" WHERE "teamId" = ${teamId} OR "teamId" IS NULL) AS antenna_at,
    (SELECT count(*) FROM "AntennaDesign" WHERE "teamId" = ${teamId} OR "teamId" IS NULL) AS antennas,
    (SELECT max("updatedAt") FROM "FeedlineType" WHERE "teamId" = ${teamId} OR "teamId" IS NULL) AS feedline_at,
    (SELECT count(*) FROM "FeedlineType" WHERE "teamId" = ${teamId} OR "teamId" IS NULL) AS feedlines`;
  return JSON.stringify(rows[0] ?? {}, (_key, value: unknown) => (typeof value === 'bigint' ? value.toString() : value));
}

/** Nodes of a plan by id (a tile of a link run), in the fleet table's order. */
export async function listNodesByIds(db: Database, planId: string, ids: readonly string[]) {
  return db.prisma.node.findMany({ where: { planId, id: { in: [...ids] } }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
}

/** Cached rows of some nodes to some gateways (a tile of a link run). */
export async function listLinkRowsFor(db: Database, planId: string, nodeIds: readonly string[], gatewayIds: readonly string[]): Promise<LinkRow[]> {
  return db.prisma.link.findMany({ where: { planId, nodeId: { in: [...nodeIds] }, gatewayId: { in: [...gatewayIds] } }, select: ROW });
}
