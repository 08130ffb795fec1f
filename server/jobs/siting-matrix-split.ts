// A siting run's matrix split over the queue (issue 20): the matrix of
// server/jobs/siting-matrix.ts cut into blocks of nodes × candidates, each a
// tile of a LinkRun of kind siting-matrix that any `npm run worker` process
// predicts with predictSitingBlock (the same function the whole matrix uses)
// and hands back as the tile's result, written in one transaction with the
// tile's completion. The siting run (the parent) waits here, reports the
// progress summed from the tiles, cancels every tile when it is cancelled, and
// puts the blocks together: the assembled matrix equals the one predicted whole.
import type { Database } from '../db/client.ts';
import { cancelLinkRun, createLinkRun, findLinkRunById, linkRunTotals, linkTileResults, unfinishedLinkRunsOf, unfinishedLinkTiles, type NewLinkTile } from '../db/repositories/link-runs.ts';
import type { LinkEngine, PlanContext } from './link-engine.ts';
import { DEFAULT_TILE_PAIRS, needsAllGateways, SITING_MATRIX_KIND, TILE_GATEWAYS, type SitingMatrixParams } from './link-runs.ts';
import type { LinkRunJobs } from './link-run-jobs.ts';
import { assembleSitingMatrix, SitingCancelled, type MatrixInputs, type SitingCandidate, type SitingMatrix, type SitingMatrixBlock } from './siting-matrix.ts';

/** How often the parent looks at its tiles, ms. */
const POLL_MS = 300;

/** Blocks of nodes × candidates of about `tilePairs` pairs (before the range and horizon rules skip some). */
export function cutSitingTiles(inputs: MatrixInputs, tilePairs = DEFAULT_TILE_PAIRS): NewLinkTile[] {
  const tiles: NewLinkTile[] = [];
  const columns = inputs.gateways.map((g) => g.row.id);
  const split = inputs.nodes.filter((node) => !needsAllGateways(node));
  const whole = inputs.nodes.filter((node) => needsAllGateways(node));
  const cut = (nodes: typeof inputs.nodes, gatewayIds: string[]) => {
    const rows = Math.max(1, Math.floor(tilePairs / Math.max(1, gatewayIds.length)));
    for (let start = 0; start < nodes.length; start += rows) {
      const nodeIds = nodes.slice(start, start + rows).map((node) => node.row.id);
      tiles.push({ nodeIds, gatewayIds, pairs: nodeIds.length * gatewayIds.length });
    }
  };
  for (let start = 0; start < columns.length; start += TILE_GATEWAYS) cut(split, columns.slice(start, start + TILE_GATEWAYS));
  if (whole.length > 0 && columns.length > 0) cut(whole, columns);
  return tiles;
}

/**
 * The matrix of siting run `sitingRunId`, predicted by the queue's workers.
 * `onProgress(fraction)` is awaited on every look at the tiles; false (or a
 * SitingCancelled thrown) cancels the tiles and throws SitingCancelled. A failed
 * tile (e.g. a worker that cannot read the terrain) fails the matrix with its message.
 */
export async function splitSitingMatrix(
  engine: LinkEngine,
  jobs: LinkRunJobs,
  ctx: PlanContext,
  candidates: readonly SitingCandidate[],
  inputs: MatrixInputs,
  options: { sitingRunId: string; areaMinElevationM: number | null; tilePairs?: number; onProgress?: (fraction: number) => Promise<boolean | void> | boolean | void },
): Promise<SitingMatrix> {
  const db: Database = engine.database;
  // A matrix run left by an earlier attempt of this siting run (a restart) is cancelled first.
  for (const old of await unfinishedLinkRunsOf(db, SITING_MATRIX_KIND, 'sitingRunId', options.sitingRunId)) {
    const pending = await unfinishedLinkTiles(db, old.id);
    await cancelLinkRun(db, old.planId, old.id);
    await jobs.withdraw(old.id, pending);
  }
  const tiles = cutSitingTiles(inputs, options.tilePairs);
  const params: SitingMatrixParams = { sitingRunId: options.sitingRunId, candidates: [...candidates], areaMinElevationM: options.areaMinElevationM };
  const run = await createLinkRun(db, ctx.plan.id, { kind: SITING_MATRIX_KIND, params, createdById: null, tiles });
  const meets: boolean[][] = inputs.nodes.map(() => new Array<boolean>(inputs.gateways.length).fill(false));
  const marginDb: Array<Array<number | null>> = inputs.nodes.map(() => new Array<number | null>(inputs.gateways.length).fill(null));
  if (tiles.length === 0) return assembleSitingMatrix(ctx, candidates, inputs, { meets, marginDb, pairsPredicted: 0, pairsSkipped: 0 });
  await jobs.enqueue(run.id, tiles.map((_tile, index) => index));
  for (;;) {
    const row = await findLinkRunById(db, run.id);
    if (!row) throw new Error('the matrix run is gone');
    if (row.status === 'done') break;
    if (row.status === 'failed') throw new Error(row.error ?? 'a tile of the matrix failed');
    if (row.status === 'cancelled') throw new SitingCancelled();
    const totals = await linkRunTotals(db, run.id);
    let go: boolean | void = true;
    try {
      go = await options.onProgress?.((0.95 * Math.min(row.pairsTotal, totals.pairsDone + totals.pairsRunning)) / Math.max(1, row.pairsTotal));
    } catch (error) {
      if (!(error instanceof SitingCancelled)) throw error;
      go = false;
    }
    if (go === false) {
      const pending = await unfinishedLinkTiles(db, run.id);
      await cancelLinkRun(db, ctx.plan.id, run.id);
      await jobs.withdraw(run.id, pending);
      throw new SitingCancelled();
    }
    await new Promise((resolve) => setTimeout(resolve, POLL_MS));
  }
  // Put the blocks together: rows by node id, columns by candidate id.
  const rowOf = new Map(inputs.nodes.map((node, n) => [node.row.id, n]));
  const columnOf = new Map(inputs.gateways.map((g, j) => [g.row.id, j]));
  let pairsPredicted = 0;
  let pairsSkipped = 0;
  for (const tile of await linkTileResults(db, run.id)) {
    const block = tile.result as SitingMatrixBlock | null;
    if (!block) throw new Error(`tile ${tile.index} of the matrix has no result`);
    const nodeIds = tile.nodeIds as string[];
    const gatewayIds = tile.gatewayIds as string[];
    pairsPredicted += block.pairsPredicted;
    pairsSkipped += block.pairsSkipped;
    nodeIds.forEach((nodeId, r) => {
      const n = rowOf.get(nodeId) as number;
      gatewayIds.forEach((gatewayId, c) => {
        const j = columnOf.get(gatewayId) as number;
        meets[n][j] = block.meets[r][c];
        marginDb[n][j] = block.marginDb[r][c];
      });
    });
  }
  await options.onProgress?.(0.97);
  return assembleSitingMatrix(ctx, candidates, inputs, { meets, marginDb, pairsPredicted, pairsSkipped });
}
