// Plans belong to a team; every query is scoped by teamId.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';

export type PlanRow = Awaited<ReturnType<Database['prisma']['plan']['findFirstOrThrow']>>;
export type PlanCreate = Omit<Prisma.PlanUncheckedCreateInput, 'id' | 'teamId' | 'version' | 'createdAt' | 'updatedAt'>;
export type PlanPatch = Partial<PlanCreate>;

export async function createPlan(db: Database, teamId: string, data: PlanCreate): Promise<PlanRow> {
  return db.prisma.plan.create({ data: { ...data, teamId } });
}

export async function findPlan(db: Database, teamId: string, planId: string): Promise<PlanRow | null> {
  return db.prisma.plan.findFirst({ where: { id: planId, teamId } });
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
