// Cached link predictions (model Link). A row holds, for one node–gateway
// pair, the hash of every input its result was computed from and the result
// (the path prediction with its own path hash, and the link budget result).
// A lookup with a different hash is a miss, so any change to the node, the
// gateway, the kit, the plan's settings or the terrain invalidates it.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';

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

/** Stores (or replaces) the cached result of each pair, in one transaction. */
export async function saveLinkRows(db: Database, planId: string, rows: readonly LinkRow[]): Promise<void> {
  if (rows.length === 0) return;
  const chunk = 500;
  const operations: Prisma.PrismaPromise<unknown>[] = [];
  for (let start = 0; start < rows.length; start += chunk) {
    const part = rows.slice(start, start + chunk);
    operations.push(
      db.prisma.link.deleteMany({ where: { planId, OR: part.map((row) => ({ nodeId: row.nodeId, gatewayId: row.gatewayId })) } }),
      db.prisma.link.createMany({
        data: part.map((row) => ({ planId, nodeId: row.nodeId, gatewayId: row.gatewayId, inputHash: row.inputHash, result: row.result as Prisma.InputJsonValue })),
      }),
    );
  }
  await db.prisma.$transaction(operations);
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
