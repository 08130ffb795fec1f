// Cached link predictions (model Link). A row holds, for one node–gateway
// pair, the hash of every input its result was computed from and the result
// (the path prediction with its own path hash, and the link budget result).
// A lookup with a different hash is a miss, so any change to the node, the
// gateway, the kit, the plan's settings or the terrain invalidates it.
import { randomUUID } from 'node:crypto';
import type { Database } from '../client.ts';
import { Prisma } from '../generated/client.ts';

export interface LinkRow {
  nodeId: string;
  gatewayId: string;
  inputHash: string;
  result: unknown;
}

/** Cached rows of one node. */
export async function listNodeLinkRows(db: Database, planId: string, nodeId: string): Promise<LinkRow[]> {
  return db.prisma.link.findMany({ where: { planId, nodeId }, select: { nodeId: true, gatewayId: true, inputHash: true, result: true } });
}

/** Cached rows of a whole plan. */
export async function listPlanLinkRows(db: Database, planId: string): Promise<LinkRow[]> {
  return db.prisma.link.findMany({ where: { planId }, select: { nodeId: true, gatewayId: true, inputHash: true, result: true } });
}

/**
 * The path hash of every cached row of a plan, without the stored path: what the fleet
 * needs up front to know which paths the cache lacks (a few dozen bytes a row, where a
 * full row carries the whole path prediction).
 */
export async function listPlanLinkPathHashes(db: Database, planId: string): Promise<Array<{ nodeId: string; gatewayId: string; pathHash: string | null }>> {
  return db.prisma.$queryRaw<Array<{ nodeId: string; gatewayId: string; pathHash: string | null }>>`SELECT "nodeId", "gatewayId", "result"->>'pathHash' AS "pathHash" FROM "Link" WHERE "planId" = ${planId}`;
}

/** Cached rows of some nodes of a plan (one page of the fleet). */
export async function listLinkRowsForNodes(db: Database, planId: string, nodeIds: readonly string[]): Promise<LinkRow[]> {
  if (nodeIds.length === 0) return [];
  return db.prisma.link.findMany({ where: { planId, nodeId: { in: [...nodeIds] } }, select: { nodeId: true, gatewayId: true, inputHash: true, result: true } });
}

/** Rows per INSERT: 500 rows × 6 parameters stays far below PostgreSQL's 65 535 bind parameters. */
const SAVE_CHUNK_ROWS = 500;

/**
 * Stores (or replaces) the cached result of each pair: one multi-row
 * `INSERT ... ON CONFLICT ("nodeId", "gatewayId") DO UPDATE` per 500 rows (the
 * unique key of Link), several chunks in one transaction. A cold 2 500-link fleet
 * is five statements instead of a delete and an insert per chunk. A pair listed
 * twice keeps its last row (one statement may not update a row twice). The id of
 * a new row is a random UUID (Prisma's cuid() default is client-side, so raw SQL
 * has to bring its own); nothing reads Link ids.
 */
export async function saveLinkRows(db: Database, planId: string, rows: readonly LinkRow[]): Promise<void> {
  if (rows.length === 0) return;
  const latest = new Map<string, LinkRow>();
  for (const row of rows) {
    const key = `${row.nodeId}\u0000${row.gatewayId}`;
    latest.delete(key);
    latest.set(key, row);
  }
  const unique = [...latest.values()];
  const statements: Prisma.PrismaPromise<number>[] = [];
  for (let start = 0; start < unique.length; start += SAVE_CHUNK_ROWS) {
    const values = Prisma.join(
      unique
        .slice(start, start + SAVE_CHUNK_ROWS)
        .map((row) => Prisma.sql`(${randomUUID()}, ${planId}, ${row.nodeId}, ${row.gatewayId}, ${row.inputHash}, ${JSON.stringify(row.result)}::jsonb, CURRENT_TIMESTAMP)`),
    );
    statements.push(
      db.prisma.$executeRaw`INSERT INTO "Link" ("id", "planId", "nodeId", "gatewayId", "inputHash", "result", "computedAt") VALUES ${values}
        ON CONFLICT ("nodeId", "gatewayId") DO UPDATE SET "planId" = EXCLUDED."planId", "inputHash" = EXCLUDED."inputHash", "result" = EXCLUDED."result", "computedAt" = EXCLUDED."computedAt"`,
    );
  }
  if (statements.length === 1) await statements[0];
  else await db.prisma.$transaction(statements);
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
export const KIT_JOB_KIND = 'kit-recommendation';

export async function createKitJob(db: Database, planId: string, params: unknown, createdById: string | null, lockedBy: string) {
  return db.prisma.coverageRun.create({
    data: { planId, kind: KIT_JOB_KIND, params: params as Prisma.InputJsonValue, status: 'running', progress: 0, createdById, startedAt: new Date(), lockedBy, lockedAt: new Date() },
  });
}

export async function updateKitJob(db: Database, id: string, patch: { progress?: number; status?: 'running' | 'done' | 'failed'; error?: string | null; summary?: unknown }) {
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

export async function findKitJob(db: Database, planId: string, id: string) {
  return db.prisma.coverageRun.findFirst({ where: { id, planId, kind: KIT_JOB_KIND } });
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
  return db.prisma.link.findMany({ where: { planId, nodeId: { in: [...nodeIds] }, gatewayId: { in: [...gatewayIds] } }, select: { nodeId: true, gatewayId: true, inputHash: true, result: true } });
}
