// Fleet link table runs (issue 20) as a use case: start one (cut the fleet into
// tiles, record the run and its tiles with the audit entry, queue the tiles),
// read one (progress summed from its tiles, the workers that took part), cancel
// one (the run and every unfinished tile; queued tiles are taken off the queue).
// The fleet table (server/app/links.ts fleetTable) then reads the Link rows the
// run wrote: they are the engine's own cache rows, keyed by input hash.
import { writeWithAudit, type AuditPrincipal } from '../db/repositories/audit.ts';
import { cancelLinkRun, createLinkRun, findLinkRun, finishEmptyLinkRun, linkRunTotals, listLinkRuns, unfinishedLinkTiles, type LinkRunRow } from '../db/repositories/link-runs.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { cutLinkTiles, DEFAULT_TILE_PAIRS } from '../jobs/link-runs.ts';
import type { LinkRunJobs } from '../jobs/link-run-jobs.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import { AppError } from './errors.ts';

export interface LinkRunRequest {
  /** Pairs within range per tile (default DEFAULT_TILE_PAIRS). */
  tilePairs?: number;
}

export interface LinkRunDeps {
  engine: LinkEngine;
  jobs: LinkRunJobs;
}

/** Smallest and largest tile the API accepts (a tile must take seconds, not milliseconds or hours). */
export const TILE_PAIRS_RANGE = { min: 10, max: 100_000 } as const;

export async function startLinkRun(deps: LinkRunDeps, principal: AuditPrincipal, plan: PlanRow, request: LinkRunRequest) {
  const tilePairs = request.tilePairs ?? DEFAULT_TILE_PAIRS;
  if (!Number.isInteger(tilePairs) || tilePairs < TILE_PAIRS_RANGE.min || tilePairs > TILE_PAIRS_RANGE.max) {
    throw new AppError('invalid_input', 'invalid_input', `tilePairs: must be a whole number ${TILE_PAIRS_RANGE.min}–${TILE_PAIRS_RANGE.max}`);
  }
  const ctx = await deps.engine.planContext(plan);
  const cut = await cutLinkTiles(deps.engine, ctx, tilePairs);
  const params = { tilePairs, nodes: cut.nodes, gateways: ctx.gateways.length, skippedNodes: cut.skippedNodes, pairsOutOfRange: cut.pairsOutOfRange, warnings: ctx.warnings };
  const run = await writeWithAudit(
    deps.engine.database,
    (tx) => createLinkRun(tx, plan.id, { params, createdById: principal.userId, tiles: cut.tiles }),
    (row) => ({ principal, action: 'create', entity: 'link_run', entityId: row.id, detail: { planId: plan.id, tiles: row.tilesTotal, pairs: row.pairsTotal } }),
  );
  if (cut.tiles.length === 0) {
    // Nothing within range: the run is done at once (the fleet table still lists every node).
    await finishEmptyLinkRun(deps.engine.database, run.id);
  } else {
    await deps.jobs.enqueue(run.id, cut.tiles.map((_tile, index) => index));
  }
  return linkRunView(deps, (await findLinkRun(deps.engine.database, plan.id, run.id))!);
}

export async function linkRunView(deps: Pick<LinkRunDeps, 'engine'>, run: LinkRunRow) {
  const totals = await linkRunTotals(deps.engine.database, run.id);
  const end = run.finishedAt ?? (run.startedAt ? new Date() : null);
  const params = (run.params ?? {}) as { tilePairs?: number; nodes?: number; gateways?: number; skippedNodes?: number; pairsOutOfRange?: number; warnings?: string[] };
  const tileSeconds = totals.tileSeconds;
  return {
    id: run.id,
    planId: run.planId,
    status: run.status,
    // Done tiles count whole, running ones by the paths predicted so far (recorded at each of their checks).
    progress: run.status === 'done' ? 1 : run.pairsTotal > 0 ? Math.min(0.999, (totals.pairsDone + totals.pairsRunning) / run.pairsTotal) : 0,
    children: { total: run.tilesTotal, done: totals.tilesDone, retried: totals.tilesRetried, failed: totals.tilesFailed, cancelled: totals.tilesCancelled },
    workers: totals.workers,
    pairs: run.pairsTotal,
    pairsDone: totals.pairsDone,
    linksWritten: totals.linksWritten,
    seconds: run.startedAt && end ? Math.round((end.getTime() - run.startedAt.getTime()) / 10) / 100 : 0,
    /** Share of the done tiles' time spent writing their rows (the database's part). */
    writeShare: tileSeconds > 0 ? Math.round((totals.writeSeconds / tileSeconds) * 1000) / 1000 : null,
    nodes: params.nodes ?? null,
    gateways: params.gateways ?? null,
    tilePairs: params.tilePairs ?? null,
    pairsOutOfRange: params.pairsOutOfRange ?? null,
    error: run.error,
    warnings: params.warnings ?? [],
    createdAt: run.createdAt.toISOString(),
    startedAt: run.startedAt?.toISOString() ?? null,
    finishedAt: run.finishedAt?.toISOString() ?? null,
  };
}

export type LinkRunView = Awaited<ReturnType<typeof linkRunView>>;

export async function findLinkRunView(deps: Pick<LinkRunDeps, 'engine'>, planId: string, runId: string): Promise<LinkRunView> {
  const run = await findLinkRun(deps.engine.database, planId, runId);
  if (!run) throw new AppError('not_found', 'not_found', 'link run not found');
  return linkRunView(deps, run);
}

export async function listLinkRunViews(deps: Pick<LinkRunDeps, 'engine'>, planId: string): Promise<LinkRunView[]> {
  const runs = await listLinkRuns(deps.engine.database, planId);
  return Promise.all(runs.map((run) => linkRunView(deps, run)));
}

/** Cancels a queued or running run: its row and every unfinished tile at once, then the queued tiles leave the queue. */
export async function cancelLinkRunFor(deps: LinkRunDeps, principal: AuditPrincipal, planId: string, runId: string): Promise<LinkRunView> {
  const db = deps.engine.database;
  const run = await findLinkRun(db, planId, runId);
  if (!run) throw new AppError('not_found', 'not_found', 'link run not found');
  const pending = await unfinishedLinkTiles(db, run.id);
  await writeWithAudit(
    db,
    async (tx) => {
      if (!(await cancelLinkRun(tx, planId, run.id))) throw new AppError('conflict', 'already_finished', `the run is already ${run.status}`);
    },
    () => ({ principal, action: 'cancel', entity: 'link_run', entityId: run.id, detail: { planId } }),
  );
  await deps.jobs.withdraw(run.id, pending);
  return findLinkRunView(deps, planId, runId);
}
