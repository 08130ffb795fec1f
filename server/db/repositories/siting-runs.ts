// Gateway siting runs (model SitingRun): queued → running (progress) → done |
// failed | cancelled, then optionally applied once. Transitions are guarded
// updates (WHERE status IN ...) like coverage runs, so a cancel and a finish
// racing each other end the run exactly once.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import type { GatewayRow } from './gateways.ts';

export type SitingRunRow = Awaited<ReturnType<Database['prisma']['sitingRun']['findFirstOrThrow']>>;

/** Columns of a run without the (large) matrix. */
const withoutMatrix = {
  id: true,
  planId: true,
  params: true,
  status: true,
  progress: true,
  error: true,
  planFingerprint: true,
  matrixHash: true,
  result: true,
  appliedAt: true,
  appliedGatewayIds: true,
  removedGateways: true,
  undoneAt: true,
  createdById: true,
  createdAt: true,
  startedAt: true,
  finishedAt: true,
} as const;
export type SitingRunSummaryRow = Omit<SitingRunRow, 'matrix' | 'matrixMeets' | 'matrixMarginCdB'>;

/** A stored matrix: its JSON part and, for runs stored since the packed format, its two byte columns. */
export interface StoredSitingMatrix {
  matrix: unknown;
  meetsBits: Uint8Array | null;
  marginCdB: Uint8Array | null;
}

const matrixColumns = { matrix: true, matrixMeets: true, matrixMarginCdB: true } as const;

function stored(row: { matrix: unknown; matrixMeets: Uint8Array | null; matrixMarginCdB: Uint8Array | null } | null): StoredSitingMatrix | null {
  if (!row || row.matrix === null) return null;
  return { matrix: row.matrix, meetsBits: row.matrixMeets ? new Uint8Array(row.matrixMeets) : null, marginCdB: row.matrixMarginCdB ? new Uint8Array(row.matrixMarginCdB) : null };
}

export async function createSitingRun(db: Database, planId: string, input: { params: unknown; planFingerprint: string; createdById: string | null }): Promise<SitingRunSummaryRow> {
  return db.prisma.sitingRun.create({ data: { planId, params: input.params as Prisma.InputJsonValue, planFingerprint: input.planFingerprint, createdById: input.createdById, status: 'queued' }, select: withoutMatrix });
}

export async function findSitingRun(db: Database, planId: string, id: string): Promise<SitingRunSummaryRow | null> {
  return db.prisma.sitingRun.findFirst({ where: { id, planId }, select: withoutMatrix });
}

export async function findSitingRunById(db: Database, id: string): Promise<SitingRunSummaryRow | null> {
  return db.prisma.sitingRun.findFirst({ where: { id }, select: withoutMatrix });
}

export async function findSitingMatrix(db: Database, planId: string, id: string): Promise<StoredSitingMatrix | null> {
  return stored(await db.prisma.sitingRun.findFirst({ where: { id, planId }, select: matrixColumns }));
}

/** A matrix an earlier run of the plan computed from the same inputs (the cache by input hash). */
export async function findCachedMatrix(db: Database, planId: string, matrixHash: string): Promise<StoredSitingMatrix | null> {
  return stored(await db.prisma.sitingRun.findFirst({ where: { planId, matrixHash }, orderBy: { createdAt: 'desc' }, select: matrixColumns }));
}

export async function listSitingRuns(db: Database, planId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = { planId };
  const [items, total] = await Promise.all([db.prisma.sitingRun.findMany({ where, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }], ...window, select: withoutMatrix }), db.prisma.sitingRun.count({ where })]);
  return toPage(items, total, window);
}

export async function claimSitingRun(db: Database, id: string): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, status: { in: ['queued', 'running'] } }, data: { status: 'running', startedAt: new Date(), progress: 0 } });
  return count === 1;
}

/** Progress 0..1 while running; false when the run is no longer running (cancelled). */
export async function reportSitingProgress(db: Database, id: string, progress: number): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, status: 'running' }, data: { progress: Math.max(0, Math.min(1, progress)) } });
  return count === 1;
}

/** Keeps the matrix as soon as it exists (so a failed solve still leaves it cached). */
export async function saveSitingMatrix(db: Database, id: string, matrixHash: string, matrix: { meta: unknown; meetsBits: Uint8Array; marginCdB: Uint8Array }): Promise<void> {
  await db.prisma.sitingRun.updateMany({
    where: { id },
    data: { matrixHash, matrix: matrix.meta as Prisma.InputJsonValue, matrixMeets: new Uint8Array(matrix.meetsBits), matrixMarginCdB: new Uint8Array(matrix.marginCdB) },
  });
}

export async function completeSitingRun(db: Database, id: string, result: unknown): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, status: 'running' }, data: { status: 'done', progress: 1, result: result as Prisma.InputJsonValue, finishedAt: new Date(), error: null } });
  return count === 1;
}

export async function failSitingRun(db: Database, id: string, error: string): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, status: { in: ['queued', 'running'] } }, data: { status: 'failed', error: error.slice(0, 2000), finishedAt: new Date() } });
  return count === 1;
}

export async function cancelSitingRun(db: Database, planId: string, id: string): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, planId, status: { in: ['queued', 'running'] } }, data: { status: 'cancelled', finishedAt: new Date() } });
  return count === 1;
}

/** done and not yet applied → applied with the gateways made; false when applied already. */
export async function markSitingApplied(db: Database, id: string, gatewayIds: string[]): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, status: 'done', appliedAt: null }, data: { appliedAt: new Date(), appliedGatewayIds: gatewayIds } });
  return count === 1;
}

/** A gateway apply removed, as it was: its row and the field readings that named it (undo puts both back). */
export interface RemovedGateway {
  row: GatewayRow;
  fieldReadingIds: string[];
}

/**
 * keepExistingGateways false: removes the plan's gateways the answer did not keep, remembering each
 * row and the field readings that named it (their gatewayId becomes null as the schema's SetNull does).
 */
export async function removeGatewaysForSiting(db: Database, planId: string, gatewayIds: readonly string[]): Promise<RemovedGateway[]> {
  const removed: RemovedGateway[] = [];
  for (const id of gatewayIds) {
    const row = await db.prisma.gateway.findFirst({ where: { id, planId } });
    if (!row) continue;
    const readings = await db.prisma.fieldReading.findMany({ where: { planId, gatewayId: id }, select: { id: true } });
    await db.prisma.gateway.deleteMany({ where: { id, planId } });
    removed.push({ row, fieldReadingIds: readings.map((r) => r.id) });
  }
  return removed;
}

/** Undo of an apply: deletes the gateways it created, restores the ones it removed (same ids and fields) and their readings' gateway. */
export async function restoreGatewaysForSiting(db: Database, planId: string, createdIds: readonly string[], removed: readonly RemovedGateway[]): Promise<void> {
  await db.prisma.gateway.deleteMany({ where: { planId, id: { in: [...createdIds] } } });
  for (const entry of removed) {
    const { row } = entry;
    // The site may have been deleted since; the gateway comes back without it then (as SetNull would have left it).
    const siteId = row.siteId && (await db.prisma.site.findFirst({ where: { id: row.siteId, planId }, select: { id: true } })) ? row.siteId : null;
    await db.prisma.gateway.create({ data: { ...row, siteId, planId, createdAt: new Date(row.createdAt), updatedAt: new Date() } });
    if (entry.fieldReadingIds.length > 0) await db.prisma.fieldReading.updateMany({ where: { planId, id: { in: entry.fieldReadingIds }, gatewayId: null }, data: { gatewayId: row.id } });
  }
}

/** applied → applied with the removed gateways remembered. */
export async function recordSitingRemoved(db: Database, id: string, removed: readonly RemovedGateway[]): Promise<void> {
  await db.prisma.sitingRun.updateMany({ where: { id }, data: { removedGateways: removed as unknown as Prisma.InputJsonValue } });
}

/** applied and not undone → undone; false when it was not applied or is undone already. */
export async function markSitingUndone(db: Database, id: string): Promise<boolean> {
  const { count } = await db.prisma.sitingRun.updateMany({ where: { id, appliedAt: { not: null }, undoneAt: null }, data: { undoneAt: new Date() } });
  return count === 1;
}

export async function unfinishedSitingRuns(db: Database): Promise<SitingRunSummaryRow[]> {
  return db.prisma.sitingRun.findMany({ where: { status: { in: ['queued', 'running'] } }, orderBy: { createdAt: 'asc' }, select: withoutMatrix });
}

/**
 * One-query fingerprint of a plan's siting inputs: the plan row, its nodes,
 * gateways, sites and terrain layers (latest change and counts, so deletions
 * show too). A changed fingerprint means the run's answer may no longer hold.
 */
export async function sitingPlanFingerprint(db: Database, planId: string): Promise<string> {
  const rows = await db.prisma.$queryRaw<Array<Record<string, unknown>>>`SELECT
    (SELECT "version" FROM "Plan" WHERE "id" = ${planId}) AS plan_version,
    (SELECT "updatedAt" FROM "Plan" WHERE "id" = ${planId}) AS plan_at,
    (SELECT max("updatedAt") FROM "Node" WHERE "planId" = ${planId}) AS node_at,
    (SELECT count(*) FROM "Node" WHERE "planId" = ${planId}) AS nodes,
    (SELECT max("updatedAt") FROM "Gateway" WHERE "planId" = ${planId}) AS gateway_at,
    (SELECT count(*) FROM "Gateway" WHERE "planId" = ${planId}) AS gateways,
    (SELECT max("updatedAt") FROM "Site" WHERE "planId" = ${planId}) AS site_at,
    (SELECT count(*) FROM "Site" WHERE "planId" = ${planId}) AS sites,
    (SELECT max("createdAt") FROM "TerrainLayer" WHERE "planId" = ${planId}) AS terrain_at,
    (SELECT count(*) FROM "TerrainLayer" WHERE "planId" = ${planId}) AS terrain_layers`;
  return JSON.stringify(rows[0] ?? {}, (_key, value: unknown) => (typeof value === 'bigint' ? value.toString() : value));
}

/** Every site of a plan (siting candidates come from them), oldest first. */
export async function listSitesForSiting(db: Database, planId: string) {
  return db.prisma.site.findMany({ where: { planId }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
}

/** Positions of a plan's nodes (the area terrain points are searched in). */
export async function listNodePositionsForSiting(db: Database, planId: string): Promise<Array<{ lat: number; lon: number }>> {
  return db.prisma.node.findMany({ where: { planId }, select: { lat: true, lon: true } });
}
