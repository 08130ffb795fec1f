// Sites of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId (plan-scoped.ts).
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { planScopedRepository } from './plan-scoped.ts';

export type SiteRow = Awaited<ReturnType<Database['prisma']['site']['findFirstOrThrow']>>;
export type SiteCreate = Omit<Prisma.SiteUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type SitePatch = Partial<SiteCreate>;

const sites = planScopedRepository<SiteRow, SiteCreate, Prisma.SiteWhereInput>('site', (db) => db.prisma.site);

export const createSite = sites.create;
export const findSite = sites.find;
/** The plan's sites, oldest first; `filter` narrows them further. */
export const listSites = sites.list;
export const updateSite = sites.update;
export const deleteSite = sites.remove;
