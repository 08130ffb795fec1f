// Sites of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';

export type SiteRow = Awaited<ReturnType<Database['prisma']['site']['findFirstOrThrow']>>;
export type SiteCreate = Omit<Prisma.SiteUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type SitePatch = Partial<SiteCreate>;

export async function createSite(db: Database, planId: string, data: SiteCreate): Promise<SiteRow> {
  return db.prisma.site.create({ data: { ...data, planId } });
}

export async function findSite(db: Database, planId: string, id: string): Promise<SiteRow | null> {
  return db.prisma.site.findFirst({ where: { id, planId } });
}

export async function listSites(db: Database, planId: string, query: PageQuery, filter: Prisma.SiteWhereInput = {}) {
  const window = pageWindow(query);
  const where = { ...filter, planId };
  const [items, total] = await Promise.all([
    db.prisma.site.findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }),
    db.prisma.site.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function updateSite(db: Database, planId: string, id: string, version: number, patch: SitePatch): Promise<SiteRow> {
  return versionedUpdate('site', {
    attempt: () => db.prisma.site.updateMany({ where: { id, planId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => findSite(db, planId, id),
  });
}

export async function deleteSite(db: Database, planId: string, id: string): Promise<void> {
  const { count } = await db.prisma.site.deleteMany({ where: { id, planId } });
  if (count === 0) throw new NotFoundError('site');
}
