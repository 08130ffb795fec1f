// Coverage runs (model CoverageRun, kind "coverage"): queued → running
// (progress) → done | failed | cancelled. Every transition is a guarded
// update (WHERE status IN ...), so a run is finished exactly once even when
// a retried job and a cancel race each other.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';

export const COVERAGE_KIND = 'coverage';

export type CoverageRunRow = Awaited<ReturnType<Database['prisma']['coverageRun']['findFirstOrThrow']>>;

export async function createCoverageRun(db: Database, planId: string, input: { gatewayIds: string[]; params: unknown; createdById: string | null }): Promise<CoverageRunRow> {
  return db.prisma.coverageRun.create({
    data: { planId, kind: COVERAGE_KIND, gatewayIds: input.gatewayIds, params: input.params as Prisma.InputJsonValue, status: 'queued', createdById: input.createdById },
  });
}

export async function findCoverageRun(db: Database, planId: string, id: string): Promise<CoverageRunRow | null> {
  return db.prisma.coverageRun.findFirst({ where: { id, planId, kind: COVERAGE_KIND } });
}

/** By id alone, for workers (which are handed run ids by the queue). */
export async function findCoverageRunById(db: Database, id: string): Promise<CoverageRunRow | null> {
  return db.prisma.coverageRun.findFirst({ where: { id, kind: COVERAGE_KIND } });
}

export async function listCoverageRuns(db: Database, planId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = { planId, kind: COVERAGE_KIND };
  const [items, total] = await Promise.all([
    db.prisma.coverageRun.findMany({ where, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }], ...window }),
    db.prisma.coverageRun.count({ where }),
  ]);
  return toPage(items, total, window);
}

/**
 * Claims a run for a worker: queued (or running, when a previous worker died
 * and the queue retries it) → running, attempts + 1. Returns false when the
 * run is already finished or cancelled, so the job is dropped.
 */
export async function claimCoverageRun(db: Database, id: string, workerId: string): Promise<boolean> {
  const { count } = await db.prisma.coverageRun.updateMany({
    where: { id, kind: COVERAGE_KIND, status: { in: ['queued', 'running'] } },
    data: { status: 'running', lockedBy: workerId, lockedAt: new Date(), startedAt: new Date(), attempts: { increment: 1 }, progress: 0 },
  });
  return count === 1;
}

/** Persists progress (0..1) while running; returns false when the run is no longer running (e.g. cancelled). */
export async function reportCoverageProgress(db: Database, id: string, progress: number): Promise<boolean> {
  const { count } = await db.prisma.coverageRun.updateMany({
    where: { id, status: 'running' },
    data: { progress: Math.max(0, Math.min(1, progress)), lockedAt: new Date() },
  });
  return count === 1;
}

/** running → done with the result, once. */
export async function completeCoverageRun(db: Database, id: string, result: { resultPath: string; summary: unknown }): Promise<boolean> {
  const { count } = await db.prisma.coverageRun.updateMany({
    where: { id, status: 'running' },
    data: { status: 'done', progress: 1, resultPath: result.resultPath, summary: result.summary as Prisma.InputJsonValue, finishedAt: new Date(), error: null },
  });
  return count === 1;
}

/** queued/running → failed with the error. */
export async function failCoverageRun(db: Database, id: string, error: string): Promise<boolean> {
  const { count } = await db.prisma.coverageRun.updateMany({
    where: { id, status: { in: ['queued', 'running'] } },
    data: { status: 'failed', error: error.slice(0, 2000), finishedAt: new Date() },
  });
  return count === 1;
}

/** queued/running → cancelled; false when the run had already finished. */
export async function cancelCoverageRun(db: Database, planId: string, id: string): Promise<boolean> {
  const { count } = await db.prisma.coverageRun.updateMany({
    where: { id, planId, kind: COVERAGE_KIND, status: { in: ['queued', 'running'] } },
    data: { status: 'cancelled', finishedAt: new Date() },
  });
  return count === 1;
}

/** Runs left queued or running (e.g. by a server restart), oldest first, to be queued again. */
export async function unfinishedCoverageRuns(db: Database): Promise<CoverageRunRow[]> {
  return db.prisma.coverageRun.findMany({ where: { kind: COVERAGE_KIND, status: { in: ['queued', 'running'] } }, orderBy: { createdAt: 'asc' } });
}
