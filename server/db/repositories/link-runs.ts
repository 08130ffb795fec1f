// Fleet link table runs split into tiles (model LinkRun, the parent, and
// LinkRunTile, its children). A tile is claimed by one worker at a time
// (attempts + 1, the worker id appended), and finished in ONE transaction that
// writes its Link rows (one multi-row upsert), marks the tile done only if
// this attempt still owns it and the run still runs, and marks the run done
// when no tile is left. A worker killed anywhere before COMMIT leaves nothing
// behind; a stale or cancelled attempt rolls back; the run completes once.
import type { Database } from '../client.ts';
import { Prisma } from '../generated/client.ts';
import { transactionLimits } from './audit.ts';
import { upsertLinkRows, type LinkRow } from './links.ts';

export type LinkRunRow = Awaited<ReturnType<Database['prisma']['linkRun']['findFirstOrThrow']>>;
export type LinkRunTileRow = Awaited<ReturnType<Database['prisma']['linkRunTile']['findFirstOrThrow']>>;

export interface NewLinkTile {
  nodeIds: string[];
  gatewayIds: string[];
  pairs: number;
}

/** Tiles per createMany statement (each tile carries its node ids). */
const TILE_INSERT_CHUNK = 500;

/** Records a queued run and its tiles (call inside writeWithAudit for the audit entry). */
export async function createLinkRun(db: Database, planId: string, input: { kind?: string; params: unknown; createdById: string | null; tiles: readonly NewLinkTile[] }): Promise<LinkRunRow> {
  const pairsTotal = input.tiles.reduce((sum, tile) => sum + tile.pairs, 0);
  const run = await db.prisma.linkRun.create({
    data: { planId, kind: input.kind ?? FLEET_LINKS_KIND, params: input.params as Prisma.InputJsonValue, status: 'queued', tilesTotal: input.tiles.length, pairsTotal, createdById: input.createdById },
  });
  for (let start = 0; start < input.tiles.length; start += TILE_INSERT_CHUNK) {
    await db.prisma.linkRunTile.createMany({
      data: input.tiles.slice(start, start + TILE_INSERT_CHUNK).map((tile, k) => ({ runId: run.id, index: start + k, nodeIds: tile.nodeIds, gatewayIds: tile.gatewayIds, pairs: tile.pairs })),
    });
  }
  return run;
}

/** Kind of the fleet link table runs the API serves (other kinds are internal, e.g. siting matrices). */
export const FLEET_LINKS_KIND = 'fleet-links';

export async function findLinkRun(db: Database, planId: string, id: string, kind = FLEET_LINKS_KIND): Promise<LinkRunRow | null> {
  return db.prisma.linkRun.findFirst({ where: { id, planId, kind } });
}

export async function findLinkRunById(db: Database, id: string): Promise<LinkRunRow | null> {
  return db.prisma.linkRun.findUnique({ where: { id } });
}

export async function findLinkTile(db: Database, runId: string, index: number): Promise<LinkRunTileRow | null> {
  return db.prisma.linkRunTile.findUnique({ where: { runId_index: { runId, index } } });
}

/** What the run's children add up to (one aggregate query). */
export interface LinkRunTotals {
  tilesDone: number;
  tilesFailed: number;
  tilesCancelled: number;
  /** Tiles claimed more than once (their first worker died or gave up). */
  tilesRetried: number;
  pairsDone: number;
  /** Paths the running tiles have predicted so far (not yet written: a killed attempt loses them). */
  pairsRunning: number;
  linksWritten: number;
  /** Worker ids that claimed any tile, sorted. */
  workers: string[];
  /** Sum over done tiles of their attempt's seconds, and of the part spent writing rows. */
  tileSeconds: number;
  writeSeconds: number;
}

export async function linkRunTotals(db: Database, runId: string): Promise<LinkRunTotals> {
  const [row] = await db.prisma.$queryRaw<Array<Record<string, unknown>>>`SELECT
      count(*) FILTER (WHERE "status" = 'done') AS done,
      count(*) FILTER (WHERE "status" = 'failed') AS failed,
      count(*) FILTER (WHERE "status" = 'cancelled') AS cancelled,
      count(*) FILTER (WHERE "attempts" > 1) AS retried,
      coalesce(sum("pairs") FILTER (WHERE "status" = 'done'), 0) AS pairs_done,
      coalesce(sum("pairsDone") FILTER (WHERE "status" = 'running'), 0) AS pairs_running,
      coalesce(sum("linksWritten"), 0) AS links_written,
      coalesce(sum("seconds") FILTER (WHERE "status" = 'done'), 0) AS tile_seconds,
      coalesce(sum("writeSeconds") FILTER (WHERE "status" = 'done'), 0) AS write_seconds,
      (SELECT coalesce(jsonb_agg(DISTINCT w ORDER BY w), '[]'::jsonb) FROM "LinkRunTile" t2, jsonb_array_elements_text(t2."workerIds") AS w WHERE t2."runId" = ${runId}) AS workers
    FROM "LinkRunTile" WHERE "runId" = ${runId}`;
  const n = (value: unknown) => Number(value ?? 0);
  const workers = typeof row.workers === 'string' ? (JSON.parse(row.workers) as string[]) : ((row.workers as string[] | null) ?? []);
  return {
    tilesDone: n(row.done),
    tilesFailed: n(row.failed),
    tilesCancelled: n(row.cancelled),
    tilesRetried: n(row.retried),
    pairsDone: n(row.pairs_done),
    pairsRunning: n(row.pairs_running),
    linksWritten: n(row.links_written),
    workers,
    tileSeconds: n(row.tile_seconds),
    writeSeconds: n(row.write_seconds),
  };
}

/**
 * Claims a tile for one attempt: queued (or running, when the queue hands back
 * a tile whose worker died) → running, attempts + 1, the worker id appended;
 * the run goes queued → running. Returns the attempt number, or null when the
 * tile or its run is finished (a duplicate delivery, or a cancel): drop the job.
 */
export async function claimLinkTile(db: Database, runId: string, index: number, workerId: string): Promise<number | null> {
  const rows = await retryTransient(() => db.prisma.$queryRaw<Array<{ attempts: number }>>`UPDATE "LinkRunTile" AS t
      SET "status" = 'running', "attempts" = t."attempts" + 1, "workerIds" = t."workerIds" || jsonb_build_array(${workerId}::text), "startedAt" = CURRENT_TIMESTAMP, "error" = NULL, "pairsDone" = 0
    FROM "LinkRun" AS r
    WHERE t."runId" = ${runId} AND t."index" = ${index} AND t."status" IN ('queued', 'running') AND r."id" = t."runId" AND r."status" IN ('queued', 'running')
    RETURNING t."attempts"`);
  if (rows.length === 0) return null;
  await db.prisma.linkRun.updateMany({ where: { id: runId, status: 'queued' }, data: { status: 'running', startedAt: new Date() } });
  return Number(rows[0].attempts);
}

/**
 * Whether this attempt still owns a running tile of a running run (checked between batches),
 * recording on the way how many of its paths it has predicted (`pairsDone`, the run's progress
 * counts it): one statement, the round trip the check costs anyway.
 */
export async function linkTileStillOwned(db: Database, runId: string, index: number, attempt: number, pairsDone?: number): Promise<boolean> {
  if (pairsDone === undefined) {
    const rows = await db.prisma.$queryRaw<Array<{ ok: number }>>`SELECT 1 AS ok FROM "LinkRunTile" t JOIN "LinkRun" r ON r."id" = t."runId"
      WHERE t."runId" = ${runId} AND t."index" = ${index} AND t."attempts" = ${attempt} AND t."status" = 'running' AND r."status" = 'running'`;
    return rows.length === 1;
  }
  const updated = await db.prisma.$executeRaw`UPDATE "LinkRunTile" AS t SET "pairsDone" = LEAST(${pairsDone}::int, t."pairs")
    FROM "LinkRun" AS r
    WHERE t."runId" = ${runId} AND t."index" = ${index} AND t."attempts" = ${attempt} AND t."status" = 'running' AND r."id" = t."runId" AND r."status" = 'running'`;
  return updated === 1;
}

/** PostgreSQL's deadlock and serialization failures: the transaction was rolled back whole and may simply run again. */
function isTransient(error: unknown): boolean {
  const text = error instanceof Error ? error.message : String(error);
  return /40P01|40001|deadlock detected|could not serialize/.test(text);
}

/** Runs a transaction again (up to 4 times, with a short random pause) when PostgreSQL aborted it as a deadlock victim. */
async function retryTransient<T>(work: () => Promise<T>): Promise<T> {
  for (let attempt = 1; ; attempt++) {
    try {
      return await work();
    } catch (error) {
      if (attempt >= 4 || !isTransient(error)) throw error;
      await new Promise((resolve) => setTimeout(resolve, 20 + Math.random() * 80 * attempt));
    }
  }
}

/** Raised inside the completion transaction when the attempt lost its tile; rolls everything back. */
export class LinkTileLost extends Error {
  constructor() {
    super('the tile was cancelled or taken over by another attempt; nothing was written');
  }
}

/**
 * Finishes an attempt in one transaction: the tile → done (only while this
 * attempt owns it and the run runs; else LinkTileLost and nothing is kept), its
 * rows upserted, then, under a lock on the run row (so two last tiles cannot both
 * miss each other), the run → done once no tile is left. `writeSeconds` is
 * measured here and stored with the tile.
 */
export async function completeLinkTile(
  db: Database,
  input: { runId: string; planId: string; index: number; attempt: number; workerId: string; rows: readonly LinkRow[]; seconds: number; result?: unknown },
): Promise<{ written: number; runDone: boolean; writeSeconds: number }> {
  const t0 = performance.now();
  // Lock order everywhere: tile rows first, then the run row (cancel and fail follow it too).
  return retryTransient(() => db.prisma.$transaction(async (tx) => {
    const owned = await tx.$executeRaw`UPDATE "LinkRunTile" SET "status" = 'done', "doneBy" = ${input.workerId}, "finishedAt" = CURRENT_TIMESTAMP
      WHERE "runId" = ${input.runId} AND "index" = ${input.index} AND "attempts" = ${input.attempt} AND "status" = 'running'
        AND EXISTS (SELECT 1 FROM "LinkRun" r WHERE r."id" = ${input.runId} AND r."status" = 'running')`;
    if (owned !== 1) throw new LinkTileLost();
    const written = await upsertLinkRows(tx, input.planId, input.rows);
    const writeSeconds = (performance.now() - t0) / 1000;
    const result = input.result === undefined ? null : JSON.stringify(input.result);
    await tx.$executeRaw`UPDATE "LinkRunTile" SET "linksWritten" = ${input.rows.length}, "seconds" = ${input.seconds + writeSeconds}, "writeSeconds" = ${writeSeconds}, "result" = ${result}::jsonb
      WHERE "runId" = ${input.runId} AND "index" = ${input.index}`;
    await tx.$queryRaw`SELECT "id" FROM "LinkRun" WHERE "id" = ${input.runId} FOR UPDATE`;
    const finished = await tx.$executeRaw`UPDATE "LinkRun" SET "status" = 'done', "finishedAt" = CURRENT_TIMESTAMP
      WHERE "id" = ${input.runId} AND "status" = 'running' AND NOT EXISTS (SELECT 1 FROM "LinkRunTile" t WHERE t."runId" = ${input.runId} AND t."status" <> 'done')`;
    return { written, runDone: finished === 1, writeSeconds };
  }, transactionLimits));
}

/**
 * An attempt failed. `final`: no retry is left, so the tile and its run fail
 * with the message (once; a finished run is left alone). Otherwise the tile is
 * queued again with the message kept for the record.
 */
export async function failLinkTile(db: Database, input: { runId: string; index: number; attempt: number; error: string; final: boolean }): Promise<void> {
  const error = input.error.slice(0, 2000);
  if (!input.final) {
    await db.prisma.linkRunTile.updateMany({ where: { runId: input.runId, index: input.index, attempts: input.attempt, status: 'running' }, data: { status: 'queued', error } });
    return;
  }
  await retryTransient(() =>
    db.prisma.$transaction(async (tx) => {
      await tx.linkRunTile.updateMany({ where: { runId: input.runId, index: input.index, attempts: input.attempt, status: { in: ['queued', 'running'] } }, data: { status: 'failed', error, finishedAt: new Date() } });
      // The other tiles of a failed run stop where they are (their completion finds the run no longer running).
      await tx.linkRunTile.updateMany({ where: { runId: input.runId, status: 'queued' }, data: { status: 'cancelled', finishedAt: new Date() } });
      await tx.linkRun.updateMany({ where: { id: input.runId, status: { in: ['queued', 'running'] } }, data: { status: 'failed', error: `tile ${input.index}: ${error}`.slice(0, 2000), finishedAt: new Date() } });
    }, transactionLimits),
  );
}

/** A run (queued or running) and every unfinished tile → cancelled; false when the run had already finished. */
export async function cancelLinkRun(db: Database, planId: string, id: string): Promise<boolean> {
  // Tiles first, then the run: the order a tile's completion takes its locks in, so the two cannot deadlock.
  const run = await db.prisma.linkRun.findFirst({ where: { id, planId, status: { in: ['queued', 'running'] } }, select: { id: true } });
  if (!run) return false;
  await db.prisma.linkRunTile.updateMany({ where: { runId: id, status: { in: ['queued', 'running'] } }, data: { status: 'cancelled', finishedAt: new Date() } });
  const { count } = await db.prisma.linkRun.updateMany({ where: { id, planId, status: { in: ['queued', 'running'] } }, data: { status: 'cancelled', finishedAt: new Date() } });
  return count === 1;
}

/** The results of a run's tiles in index order (a siting matrix's blocks). */
export async function linkTileResults(db: Database, runId: string): Promise<Array<{ index: number; nodeIds: unknown; gatewayIds: unknown; result: unknown }>> {
  return db.prisma.linkRunTile.findMany({ where: { runId }, select: { index: true, nodeIds: true, gatewayIds: true, result: true }, orderBy: { index: 'asc' } });
}

/** Unfinished runs of a kind whose params name this parent (e.g. the matrix of a siting run that restarted). */
export async function unfinishedLinkRunsOf(db: Database, kind: string, parentKey: string, parentId: string): Promise<LinkRunRow[]> {
  return db.prisma.linkRun.findMany({ where: { kind, status: { in: ['queued', 'running'] }, params: { path: [parentKey], equals: parentId } } });
}

/** The newest run of a kind whose params name this parent, whatever its status (a split coverage run's parts). */
export async function latestLinkRunOf(db: Database, kind: string, parentKey: string, parentId: string): Promise<LinkRunRow | null> {
  return db.prisma.linkRun.findFirst({ where: { kind, params: { path: [parentKey], equals: parentId } }, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }] });
}

/**
 * Cancels every unfinished run of a kind whose params name this parent, with their
 * unfinished tiles (cancelLinkRun each); returns the tiles that were pending, to take
 * off the queue once the caller's transaction committed.
 */
export async function cancelLinkRunsOf(db: Database, kind: string, parentKey: string, parentId: string): Promise<Array<{ runId: string; pending: number[] }>> {
  const out: Array<{ runId: string; pending: number[] }> = [];
  for (const run of await unfinishedLinkRunsOf(db, kind, parentKey, parentId)) {
    const pending = await unfinishedLinkTiles(db, run.id);
    if (await cancelLinkRun(db, run.planId, run.id)) out.push({ runId: run.id, pending });
  }
  return out;
}

/** The failed tile of a run (lowest index), whose error says why the run failed. */
export async function failedLinkTile(db: Database, runId: string): Promise<LinkRunTileRow | null> {
  return db.prisma.linkRunTile.findFirst({ where: { runId, status: 'failed' }, orderBy: { index: 'asc' } });
}

/** Tile indices of a run not yet finished (to queue again after a restart), in order. */
export async function unfinishedLinkTiles(db: Database, runId: string): Promise<number[]> {
  const rows = await db.prisma.linkRunTile.findMany({ where: { runId, status: { in: ['queued', 'running'] } }, select: { index: true }, orderBy: { index: 'asc' } });
  return rows.map((row) => row.index);
}

/** Runs left queued or running (e.g. by a server restart), oldest first. */
export async function unfinishedLinkRuns(db: Database): Promise<LinkRunRow[]> {
  return db.prisma.linkRun.findMany({ where: { status: { in: ['queued', 'running'] } }, orderBy: { createdAt: 'asc' } });
}

export async function listLinkRuns(db: Database, planId: string, take = 20): Promise<LinkRunRow[]> {
  return db.prisma.linkRun.findMany({ where: { planId, kind: FLEET_LINKS_KIND }, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }], take });
}

/** A run with no tile (nothing within range) is done as soon as it is recorded. */
export async function finishEmptyLinkRun(db: Database, id: string): Promise<void> {
  await db.prisma.linkRun.updateMany({ where: { id, status: 'queued', tilesTotal: 0 }, data: { status: 'done', startedAt: new Date(), finishedAt: new Date() } });
}
