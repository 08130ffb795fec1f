// Plans belong to a team; every query is scoped by teamId.
import { changeStamp, GenerationMemo } from '../change-feed.ts';
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';
import { terrainFilePaths } from './terrain-layers.ts';

export type PlanRow = Awaited<ReturnType<Database['prisma']['plan']['findFirstOrThrow']>>;
export type PlanCreate = Omit<Prisma.PlanUncheckedCreateInput, 'id' | 'teamId' | 'version' | 'createdAt' | 'updatedAt'>;
export type PlanPatch = Partial<PlanCreate>;

export async function createPlan(db: Database, teamId: string, data: PlanCreate): Promise<PlanRow> {
  return db.prisma.plan.create({ data: { ...data, teamId } });
}

export async function findPlan(db: Database, teamId: string, planId: string): Promise<PlanRow | null> {
  return db.prisma.plan.findFirst({ where: { id: planId, teamId } });
}

const planMemo = new WeakMap<object, GenerationMemo<PlanRow | null>>();

/**
 * findPlan for read-only answers under load: the row read once per generation of the change
 * feed (server/db/change-feed.ts), so a crowd of reads costs no query until something is
 * written. The row is shared between callers: treat it as read-only. Writes use findPlan.
 */
export async function findPlanForRead(db: Database, teamId: string, planId: string): Promise<PlanRow | null> {
  const stamp = changeStamp(db);
  if (stamp === null || !db.changes) return findPlan(db, teamId, planId);
  let memo = planMemo.get(db.changes);
  if (!memo) planMemo.set(db.changes, (memo = new GenerationMemo()));
  const key = `${teamId}:${planId}`;
  const hit = memo.get(key, stamp);
  if (hit !== undefined) return hit;
  const row = await findPlan(db, teamId, planId);
  memo.set(key, stamp, row);
  return row;
}

export async function listPlans(db: Database, teamId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = { teamId };
  const [items, total] = await Promise.all([
    db.prisma.plan.findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }),
    db.prisma.plan.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function updatePlan(db: Database, teamId: string, planId: string, version: number, patch: PlanPatch): Promise<PlanRow> {
  return versionedUpdate('plan', {
    attempt: () => db.prisma.plan.updateMany({ where: { id: planId, teamId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => findPlan(db, teamId, planId),
  });
}

export async function deletePlan(db: Database, teamId: string, planId: string): Promise<void> {
  const { count } = await db.prisma.plan.deleteMany({ where: { id: planId, teamId } });
  if (count === 0) throw new NotFoundError('plan');
}

/** Files under <filesDir> that belonged to a deleted plan (paths relative to filesDir, as stored). */
export interface PlanFiles {
  /** Terrain layer files no other plan's layer references (the demo DEM may be shared). */
  terrainFiles: string[];
  /** The plan's terrain files another plan's layer still references (a plan copy): kept. */
  sharedTerrainFiles?: string[];
  /** Coverage runs of the plan: their result folders are <filesDir>/coverage/<runId>/. */
  coverageRunIds: string[];
  /** Result paths stored on the runs (normally coverage/<runId>). */
  coverageResultPaths: string[];
}

/**
 * Deletes a plan (rows cascade) and returns the files it leaves behind, read in the same
 * transaction when `db` is a transaction (see writeWithAudit), so nothing added meanwhile is missed.
 */
export async function deletePlanReturningFiles(db: Database, teamId: string, planId: string): Promise<PlanFiles> {
  const ownTerrain = await terrainFilePaths(db, planId);
  const runs = await db.prisma.coverageRun.findMany({ where: { planId }, select: { id: true, resultPath: true } });
  await deletePlan(db, teamId, planId);
  const stillUsed = new Set(
    (await db.prisma.terrainLayer.findMany({ where: { filePath: { in: ownTerrain } }, select: { filePath: true } })).map((row) => row.filePath),
  );
  return {
    terrainFiles: ownTerrain.filter((filePath) => !stillUsed.has(filePath)),
    sharedTerrainFiles: ownTerrain.filter((filePath) => stillUsed.has(filePath)),
    coverageRunIds: runs.map((run) => run.id),
    coverageResultPaths: runs.flatMap((run) => (run.resultPath ? [run.resultPath] : [])),
  };
}

/** Counts of what a plan holds (for the plan summary). */
export async function planCounts(db: Database, planId: string) {
  const [sites, gateways, nodes, terrainLayers] = await Promise.all([
    db.prisma.site.count({ where: { planId } }),
    db.prisma.gateway.count({ where: { planId } }),
    db.prisma.node.count({ where: { planId } }),
    db.prisma.terrainLayer.count({ where: { planId } }),
  ]);
  return { sites, gateways, nodes, terrainLayers };
}
