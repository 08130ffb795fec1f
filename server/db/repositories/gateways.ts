// Gateways of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';

export type GatewayRow = Awaited<ReturnType<Database['prisma']['gateway']['findFirstOrThrow']>>;
export type GatewayCreate = Omit<Prisma.GatewayUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type GatewayPatch = Partial<GatewayCreate>;

export async function createGateway(db: Database, planId: string, data: GatewayCreate): Promise<GatewayRow> {
  return db.prisma.gateway.create({ data: { ...data, planId } });
}

export async function findGateway(db: Database, planId: string, id: string): Promise<GatewayRow | null> {
  return db.prisma.gateway.findFirst({ where: { id, planId } });
}

export async function listGateways(db: Database, planId: string, query: PageQuery, filter: Prisma.GatewayWhereInput = {}) {
  const window = pageWindow(query);
  const where = { ...filter, planId };
  const [items, total] = await Promise.all([
    db.prisma.gateway.findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }),
    db.prisma.gateway.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function updateGateway(db: Database, planId: string, id: string, version: number, patch: GatewayPatch): Promise<GatewayRow> {
  return versionedUpdate('gateway', {
    attempt: () => db.prisma.gateway.updateMany({ where: { id, planId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => findGateway(db, planId, id),
  });
}

export async function deleteGateway(db: Database, planId: string, id: string): Promise<void> {
  const { count } = await db.prisma.gateway.deleteMany({ where: { id, planId } });
  if (count === 0) throw new NotFoundError('gateway');
}
