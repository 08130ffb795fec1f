// What reports, exports and scenario copies read and write beyond the other
// repositories: a plan's sites and price catalog in one go, the team's name, the
// latest finished coverage run, where the plan's points are, a whole-plan copy (one transaction, with its audit
// entry) and which terrain files other layers still reference.
import { isAbsolute, join, normalize } from 'node:path';
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { recordAudit, transactionLimits, type AuditInput } from './audit.ts';
import { COVERAGE_KIND, type CoverageRunRow } from './coverage-runs.ts';
import type { PlanRow } from './plans.ts';

export type SiteListRow = Awaited<ReturnType<Database['prisma']['site']['findFirstOrThrow']>>;

/** Every site of a plan in a stable order. */
export async function listSitesForPlan(db: Database, planId: string): Promise<SiteListRow[]> {
  return db.prisma.site.findMany({ where: { planId }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
}

export async function teamName(db: Database, teamId: string): Promise<string> {
  return (await db.prisma.team.findUnique({ where: { id: teamId }, select: { name: true } }))?.name ?? teamId;
}

/** The team's visible catalog (built-ins and its own) with names and prices only. */
export async function priceCatalogRows(db: Database, teamId: string) {
  const where = { OR: [{ teamId: null }, { teamId }] };
  const [antennas, feedlines, masts] = await Promise.all([
    db.prisma.antennaDesign.findMany({ where, select: { id: true, name: true, costUsd: true, teamId: true } }),
    db.prisma.feedlineType.findMany({ where, select: { id: true, name: true, costUsdPerM: true, teamId: true } }),
    db.prisma.mastOption.findMany({ where, select: { id: true, name: true, costUsd: true, heightM: true, teamId: true } }),
  ]);
  return { antennas, feedlines, masts };
}

/** The most recently finished coverage run of a plan (null when none finished). */
export async function latestDoneCoverageRun(db: Database, planId: string): Promise<CoverageRunRow | null> {
  return db.prisma.coverageRun.findFirst({ where: { planId, kind: COVERAGE_KIND, status: 'done' }, orderBy: [{ finishedAt: 'desc' }, { id: 'desc' }] });
}

/** Where a plan's nodes, gateways and sites are (lat/lon only): the report's map extent before the fleet pass. */
export async function planPositions(db: Database, planId: string): Promise<Array<{ lat: number; lon: number }>> {
  const select = { lat: true, lon: true } as const;
  const [nodes, gateways, sites] = await Promise.all([db.prisma.node.findMany({ where: { planId }, select }), db.prisma.gateway.findMany({ where: { planId }, select }), db.prisma.site.findMany({ where: { planId }, select })]);
  return [...nodes, ...gateways, ...sites];
}

export interface PlanCopyResult {
  plan: PlanRow;
  counts: { sites: number; gateways: number; nodes: number; terrainLayers: number };
}

/**
 * Copies a plan of `teamId` under a new name: the plan's columns and settings, every
 * site, gateway (site references mapped), node (kit settings and all; `originId`
 * points back to the first node of the chain) and terrain layer row (the same file:
 * files are shared, never copied). One transaction with its audit entry: all or nothing.
 */
export async function copyPlanWithAudit(db: Database, teamId: string, sourceId: string, name: string, audit: (result: PlanCopyResult) => AuditInput): Promise<PlanCopyResult | null> {
  return db.prisma.$transaction(async (tx) => {
    const source = await tx.plan.findFirst({ where: { id: sourceId, teamId } });
    if (!source) return null;
    // Every plan column but identity, name and bookkeeping, so columns added later are copied too.
    const { id: _id, teamId: _team, name: _name, version: _version, createdAt: _created, updatedAt: _updated, settings, ...columns } = source;
    const plan = await tx.plan.create({ data: { ...columns, settings: settings as Prisma.InputJsonValue, teamId, name } });
    const siteMap = new Map<string, string>();
    const sites = await tx.site.findMany({ where: { planId: source.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
    for (const { id, planId: _p, version: _v, createdAt: _c, updatedAt: _u, ...rest } of sites) {
      const row = await tx.site.create({ data: { ...rest, planId: plan.id } });
      siteMap.set(id, row.id);
    }
    const gateways = await tx.gateway.findMany({ where: { planId: source.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
    for (const { id: _id, planId: _p, version: _v, createdAt: _c, updatedAt: _u, siteId, ...rest } of gateways) {
      await tx.gateway.create({ data: { ...rest, planId: plan.id, siteId: siteId ? (siteMap.get(siteId) ?? null) : null } });
    }
    const nodes = await tx.node.findMany({ where: { planId: source.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
    // createMany keeps one statement per chunk; createdAt is kept so the fleet order stays the same.
    for (let i = 0; i < nodes.length; i += 1000) {
      const chunk = nodes.slice(i, i + 1000).map(({ id, planId: _p, version: _v, updatedAt: _u, originId, ...rest }) => ({ ...rest, planId: plan.id, originId: originId ?? id }));
      await tx.node.createMany({ data: chunk });
    }
    const layers = await tx.terrainLayer.findMany({ where: { planId: source.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }] });
    for (const { id: _id, planId: _p, geoTransform, ...rest } of layers) {
      await tx.terrainLayer.create({ data: { ...rest, geoTransform: geoTransform as Prisma.InputJsonValue, planId: plan.id } });
    }
    const result: PlanCopyResult = { plan, counts: { sites: sites.length, gateways: gateways.length, nodes: nodes.length, terrainLayers: layers.length } };
    await recordAudit({ prisma: tx }, audit(result));
    return result;
  }, transactionLimits);
}

/** The same stored path written two ways ("terrain/a.tif", "terrain//a.tif") compares equal. */
function samePathKey(filePath: string): string {
  return isAbsolute(filePath) ? normalize(filePath) : normalize(join('.', filePath));
}

/** Of `filePaths` (as stored on terrain layer rows), those some layer row still references. */
export async function terrainFilesStillReferenced(db: Database, filePaths: readonly string[]): Promise<Set<string>> {
  if (filePaths.length === 0) return new Set();
  const rows = await db.prisma.terrainLayer.findMany({ where: { filePath: { in: [...filePaths] } }, select: { filePath: true } });
  const used = new Set(rows.map((row) => samePathKey(row.filePath)));
  return new Set(filePaths.filter((path) => used.has(samePathKey(path))));
}

/** File names under terrain/<planId>/ that any layer row (of this plan or a copy of it) references. */
export async function terrainFileNamesReferencedIn(db: Database, planId: string): Promise<Set<string>> {
  const rows = await db.prisma.terrainLayer.findMany({
    where: { OR: [{ planId }, { filePath: { startsWith: `terrain/${planId}/` } }, { filePath: { contains: `/terrain/${planId}/` } }] },
    select: { filePath: true },
  });
  return new Set(rows.map((row) => row.filePath.split(/[\\/]/).pop() as string));
}

/** The most recently finished siting run of a plan, without its (large) matrix (null when none finished). */
export async function latestDoneSitingRun(db: Database, planId: string) {
  return db.prisma.sitingRun.findFirst({
    where: { planId, status: 'done' },
    orderBy: [{ finishedAt: 'desc' }, { id: 'desc' }],
    select: { id: true, params: true, result: true, planFingerprint: true, finishedAt: true, appliedAt: true },
  });
}
