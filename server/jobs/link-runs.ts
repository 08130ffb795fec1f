// A fleet link table run split into tiles: the parent (a LinkRun row) is cut
// into children of nodes × gateways (LinkRunTile rows), sized so one takes
// seconds; any number of workers take tiles, each predicting its pairs through
// the link engine's own entry points (computePaths → nodeLinks, the same
// functions and hashes as the fleet table) and writing its Link rows in one
// transaction with the tile's completion (server/db/repositories/link-runs.ts).
// Without Redis the tiles run in this process on the link engine's worker
// threads; with REDIS_URL they go on a BullMQ queue and `npm run worker`
// processes on any machine take them.
import { hostname } from 'node:os';
import { Queue } from 'bullmq';
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import { listLinkRowsFor, listNodesByIds, listNodesForLinks, findPlanById, type LinkRow } from '../db/repositories/links.ts';
import {
  claimLinkTile,
  completeLinkTile,
  failLinkTile,
  findLinkRunById,
  findLinkTile,
  linkTileStillOwned,
  LinkTileLost,
  unfinishedLinkRuns,
  unfinishedLinkTiles,
  type NewLinkTile,
} from '../db/repositories/link-runs.ts';
import { bearingsBetween, isWithinDistanceM } from '../planning/geometry.ts';
import type { PathPrediction } from '../planning/path.ts';
import { AppError } from '../app/errors.ts';
import { LinkInputError, pathEnd, type GatewayContext, type LinkEngine, type PairKey, type PlanContext, type ResolvedNode } from './link-engine.ts';
import type { LinkPathPair } from './link-pool.ts';
import { queuePrefix, redisConnection } from './queue-connection.ts';
import type { LinkRunJobs } from './link-run-jobs.ts';
import { candidateRow, predictSitingBlock, SitingCancelled, type SitingCandidate, type SitingMatrixBlock } from './siting-matrix.ts';
import { COVERAGE_PARTS_KIND, CoveragePartExecutor, type CoveragePartsParams } from './coverage-split.ts';
import type { AreaPool } from './area-runner.ts';

/** Kind of a LinkRun whose tiles are blocks of a siting run's matrix (server/jobs/siting-matrix-split.ts). */
export const SITING_MATRIX_KIND = 'siting-matrix';

/** What the tiles of a siting matrix run need beside the plan: the run's candidates and the area's lowest ground. */
export interface SitingMatrixParams {
  sitingRunId: string;
  candidates: SitingCandidate[];
  areaMinElevationM: number | null;
}

export const LINK_TILE_QUEUE = 'link-tiles';

/**
 * Pairs per tile when the request names none: a cold P.1812 path over 30 m
 * terrain costs a few ms of one core (test/bench/links.ts), so ~1 500 pairs is a
 * few seconds, long enough that claiming and writing cost little beside it and
 * short enough that a killed worker loses little.
 */
export const DEFAULT_TILE_PAIRS = 1500;
/** Gateways per tile column: a tile reads its nodes' cached rows for these gateways in one query. */
export const TILE_GATEWAYS = 64;
/** Nodes per tile at most (their ids travel in the tile row). */
const TILE_MAX_NODES = 4000;
/** Pairs between checks for a cancel (and a yield to the event loop, so the queue lock is renewed). */
const BATCH_PAIRS = 48;
/** Least time between two cancel checks (and progress records) of a running link or siting tile, ms. */
const CHECK_INTERVAL_MS = 250;

/** A node whose directional antenna is aimed at its best-heard gateway needs all its gateways in one tile (the aim enters every link). */
export function needsAllGateways(node: ResolvedNode): boolean {
  return node.kit.antenna.pattern.kind === 'directional' && node.kit.boresightAzimuthDeg === null;
}

/**
 * Cuts the plan's fleet into tiles: columns of TILE_GATEWAYS gateways, and down
 * each column runs of nodes until about `tilePairs` pairs within range (the
 * fleet table's range rule) are collected. Nodes that cannot be resolved (an
 * unknown kit) are left out, as the fleet table leaves them without links.
 */
export async function cutLinkTiles(engine: LinkEngine, ctx: PlanContext, tilePairs = DEFAULT_TILE_PAIRS): Promise<{ tiles: NewLinkTile[]; nodes: number; skippedNodes: number; pairsOutOfRange: number }> {
  const rows = await listNodesForLinks(engine.database, ctx.plan.id);
  const split: ResolvedNode[] = [];
  const whole: ResolvedNode[] = [];
  let skippedNodes = 0;
  for (const row of rows) {
    try {
      const node = await engine.resolveNode(ctx, row);
      (needsAllGateways(node) ? whole : split).push(node);
    } catch (error) {
      if (!(error instanceof LinkInputError)) throw error;
      skippedNodes++;
    }
  }
  const tiles: NewLinkTile[] = [];
  let pairsOutOfRange = 0;
  const maxRangeM = ctx.settings.maxLinkRangeM;
  const cut = (nodes: readonly ResolvedNode[], gateways: readonly GatewayContext[]) => {
    let nodeIds: string[] = [];
    let pairs = 0;
    const gatewayIds = gateways.map((g) => g.row.id);
    for (const node of nodes) {
      let inRange = 0;
      for (const g of gateways) {
        if (isWithinDistanceM(node.row.lat, node.row.lon, g.row.lat, g.row.lon, maxRangeM)) inRange++;
        else pairsOutOfRange++;
      }
      if (inRange === 0) continue;
      nodeIds.push(node.row.id);
      pairs += inRange;
      if (pairs >= tilePairs || nodeIds.length >= TILE_MAX_NODES) {
        tiles.push({ nodeIds, gatewayIds, pairs });
        nodeIds = [];
        pairs = 0;
      }
    }
    if (nodeIds.length > 0) tiles.push({ nodeIds, gatewayIds, pairs });
  };
  for (let start = 0; start < ctx.gateways.length; start += TILE_GATEWAYS) cut(split, ctx.gateways.slice(start, start + TILE_GATEWAYS));
  if (whole.length > 0 && ctx.gateways.length > 0) cut(whole, ctx.gateways);
  return { tiles, nodes: rows.length, skippedNodes, pairsOutOfRange };
}

export type TileOutcome =
  | { kind: 'done'; written: number; runDone: boolean }
  /** Finished, cancelled or taken over: nothing (more) to do for this delivery. */
  | { kind: 'skipped'; reason: string }
  | { kind: 'failed'; error: string }
  /** Failed, with a retry left: the caller hands the tile back to the queue. */
  | { kind: 'retry'; error: string };

export interface TileOptions {
  workerId: string;
  /** No retry is left after this attempt: a failure fails the tile and its run. */
  final: boolean;
  /** Test hook, awaited after each batch of paths (before anything is written). */
  onBatch?: (info: { runId: string; index: number; pairsDone: number }) => Promise<void> | void;
}

/**
 * Executes tiles with one link engine; keeps each run's plan context for the next tile of that run.
 * Tiles of a split coverage run (one gateway each) go to a CoveragePartExecutor on this process's
 * area pool (`areaPool`, none: in the calling thread).
 */
export class LinkTileExecutor {
  private readonly contexts = new Map<string, { at: number; ctx: Promise<PlanContext> }>();
  private readonly coverage: CoveragePartExecutor;

  constructor(
    private readonly engine: LinkEngine,
    options: { config: Pick<Config, 'filesDir' | 'dataDir'>; areaPool?: () => AreaPool | undefined },
  ) {
    this.coverage = new CoveragePartExecutor(engine.database, options.config, options.areaPool);
  }

  private context(runId: string, planId: string, workerId: string): Promise<PlanContext> {
    const now = Date.now();
    const known = this.contexts.get(runId);
    if (known && now - known.at < 120_000) return known.ctx;
    const ctx = (async () => {
      const plan = await findPlanById(this.engine.database, planId);
      if (!plan) throw new AppError('not_found', 'not_found', 'the plan is gone');
      try {
        return await this.engine.planContext(plan);
      } catch (error) {
        if (error instanceof LinkInputError && error.code === 'terrain_unreadable') {
          // The terrain reaches workers through the shared files folder: say which worker could not read it.
          throw new AppError('unprocessable', 'terrain_unreadable', `worker ${workerId} could not read the plan's terrain layer: ${error.message}`);
        }
        throw error;
      }
    })();
    ctx.catch(() => this.contexts.delete(runId));
    this.contexts.set(runId, { at: now, ctx });
    if (this.contexts.size > 4) this.contexts.delete(this.contexts.keys().next().value as string);
    return ctx;
  }

  /** One attempt at tile `index` of run `runId`. Never throws for the tile's own failures. */
  async execute(runId: string, index: number, options: TileOptions): Promise<TileOutcome> {
    const db = this.engine.database;
    const run = await findLinkRunById(db, runId);
    if (!run) return { kind: 'skipped', reason: 'no such run' };
    const attempt = await claimLinkTile(db, runId, index, options.workerId);
    if (attempt === null) return { kind: 'skipped', reason: 'the tile or its run is finished' };
    const t0 = performance.now();
    try {
      const tile = await findLinkTile(db, runId, index);
      if (!tile) return { kind: 'skipped', reason: 'no such tile' };
      const checkpoint = async (pairsDone: number) => {
        await options.onBatch?.({ runId, index, pairsDone });
        // Give the event loop a turn (the queue's lock renewal runs on a timer), then check for a cancel.
        await new Promise((resolve) => setImmediate(resolve));
        return linkTileStillOwned(db, runId, index, attempt, pairsDone);
      };
      // Link paths and siting blocks check between batches of 48 pairs (a few ms each), but go to the
      // database at most every CHECK_INTERVAL_MS: a check per batch was ~4 000 UPDATEs in the scale
      // bench's run, database CPU and round trips the worker waited for. Cancel still stops a tile
      // within that interval; the final write checks ownership anyway (completeLinkTile).
      let lastCheckMs = performance.now();
      const batchCheckpoint = async (pairsDone: number): Promise<boolean> => {
        const nowMs = performance.now();
        if (nowMs - lastCheckMs < CHECK_INTERVAL_MS) {
          await options.onBatch?.({ runId, index, pairsDone });
          await new Promise((resolve) => setImmediate(resolve));
          return true;
        }
        lastCheckMs = nowMs;
        return checkpoint(pairsDone);
      };
      const nodeIds = tile.nodeIds as string[];
      const gatewayIds = tile.gatewayIds as string[];
      let rows: LinkRow[] | null = [];
      let result: unknown;
      if (run.kind === COVERAGE_PARTS_KIND) {
        // One gateway of a split coverage run: its part goes to the files folder, its place and checksum in the result.
        const part = await this.coverage.predict(run.params as unknown as CoveragePartsParams, index, tile.pairs, options.workerId, checkpoint);
        if (part === null) rows = null;
        else result = part;
      } else if (run.kind === SITING_MATRIX_KIND) {
        const ctx = await this.context(runId, run.planId, options.workerId);
        const block = await this.sitingBlock(ctx, run.params as unknown as SitingMatrixParams, nodeIds, gatewayIds, batchCheckpoint);
        if (block === null) rows = null;
        else result = block;
      } else rows = await this.predict(await this.context(runId, run.planId, options.workerId), nodeIds, gatewayIds, batchCheckpoint);
      if (rows === null) return { kind: 'skipped', reason: 'cancelled or taken over while running' };
      const done = await completeLinkTile(db, { runId, planId: run.planId, index, attempt, workerId: options.workerId, rows, result, seconds: (performance.now() - t0) / 1000 });
      return { kind: 'done', written: done.written, runDone: done.runDone };
    } catch (error) {
      if (error instanceof LinkTileLost) return { kind: 'skipped', reason: error.message };
      const message = error instanceof AppError ? error.message : `worker ${options.workerId}: ${error instanceof Error ? error.message : String(error)}`;
      await failLinkTile(db, { runId, index, attempt, error: message, final: options.final });
      return options.final ? { kind: 'failed', error: message } : { kind: 'retry', error: message };
    }
  }

  /**
   * A block of a siting matrix: the tile's nodes (rows, in the tile's order) over
   * its candidates (columns), by predictSitingBlock, the function the whole
   * matrix uses in one process. Null when a checkpoint says stop.
   */
  private async sitingBlock(ctx: PlanContext, params: SitingMatrixParams, nodeIds: readonly string[], candidateIds: readonly string[], checkpoint: (pairsDone: number) => Promise<boolean>): Promise<SitingMatrixBlock | null> {
    const engine = this.engine;
    const byId = new Map(params.candidates.map((c) => [c.id, c]));
    const gateways: GatewayContext[] = [];
    for (const id of candidateIds) {
      const candidate = byId.get(id);
      if (!candidate) throw new Error(`siting matrix tile names an unknown candidate ${id}`);
      gateways.push(await engine.gatewayContext(ctx, candidateRow(ctx, candidate)));
    }
    const rows = new Map((await listNodesByIds(engine.database, ctx.plan.id, nodeIds)).map((row) => [row.id, row]));
    const nodes: ResolvedNode[] = [];
    for (const id of nodeIds) {
      const row = rows.get(id);
      if (!row) throw new Error(`node ${id} of the matrix is gone from the plan`);
      nodes.push(await engine.resolveNode(ctx, row));
    }
    try {
      return await predictSitingBlock(engine, ctx, nodes, gateways, { areaMinElevationM: params.areaMinElevationM, onBatch: (done) => checkpoint(done) });
    } catch (error) {
      if (error instanceof SitingCancelled) return null;
      throw error;
    }
  }

  /**
   * The Link rows of a tile that the cache lacks: the tile's nodes over its
   * gateways, paths in batches (`checkpoint` after each; false stops and
   * returns null), budgets through the engine's nodeLinks, as the fleet table
   * computes them (same path hash, input hash and stored result).
   */
  private async predict(ctx: PlanContext, nodeIds: readonly string[], gatewayIds: readonly string[], checkpoint: (pairsDone: number) => Promise<boolean>): Promise<LinkRow[] | null> {
    const engine = this.engine;
    const wanted = new Set(gatewayIds);
    const gateways = ctx.gateways.filter((g) => wanted.has(g.row.id));
    const tileCtx: PlanContext = { ...ctx, gateways };
    const nodeRows = await listNodesByIds(engine.database, ctx.plan.id, nodeIds);
    const cached = await listLinkRowsFor(engine.database, ctx.plan.id, nodeIds, gatewayIds);
    const byNode = new Map<string, LinkRow[]>();
    for (const row of cached) {
      const list = byNode.get(row.nodeId);
      if (list) list.push(row);
      else byNode.set(row.nodeId, [row]);
    }
    // Each pair is range-tested and hashed once here; nodeLinks gets the node's
    // in-range gateways with their distances and hashes instead of redoing both.
    const nodes: Array<{ node: ResolvedNode; gatewaysInRange: GatewayContext[]; pairKeys: Map<string, PairKey> }> = [];
    const missing = new Map<string, LinkPathPair>();
    for (const row of nodeRows) {
      let node: ResolvedNode;
      try {
        node = await engine.resolveNode(tileCtx, row);
      } catch (error) {
        if (error instanceof LinkInputError) continue;
        throw error;
      }
      const gatewaysInRange: GatewayContext[] = [];
      const pairKeys = new Map<string, PairKey>();
      nodes.push({ node, gatewaysInRange, pairKeys });
      const stored = new Map((byNode.get(row.id) ?? []).map((link) => [link.gatewayId, (link.result as { pathHash?: unknown } | null)?.pathHash]));
      for (const g of gateways) {
        if (!isWithinDistanceM(row.lat, row.lon, g.row.lat, g.row.lon, ctx.settings.maxLinkRangeM)) continue;
        const hash = engine.pathHash(tileCtx, node, g);
        gatewaysInRange.push(g);
        pairKeys.set(g.row.id, { distanceM: bearingsBetween(row.lat, row.lon, g.row.lat, g.row.lon).distanceM, pathHash: hash });
        if (stored.get(g.row.id) === hash) continue;
        missing.set(hash, { node: pathEnd(row, node.antennaHeightAglM), gateway: pathEnd(g.row, g.row.antennaHeightAglM) });
      }
    }
    const precomputed = new Map<string, PathPrediction>();
    const hashes = [...missing.keys()];
    const pairs = [...missing.values()];
    for (let start = 0; start < pairs.length; start += BATCH_PAIRS) {
      const paths = await engine.computePaths(tileCtx, pairs.slice(start, start + BATCH_PAIRS));
      for (let k = 0; k < paths.length; k++) precomputed.set(hashes[start + k], paths[k]);
      if (!(await checkpoint(start + paths.length))) return null;
    }
    const rows: LinkRow[] = [];
    for (const { node, gatewaysInRange, pairKeys } of nodes) {
      const { toSave } = await engine.nodeLinks({ ...tileCtx, gateways: gatewaysInRange }, node, byNode.get(node.row.id) ?? [], true, precomputed, pairKeys);
      rows.push(...toSave);
    }
    return rows;
  }
}


/** The in-process runner: tiles one after the other, each spread over the link engine's worker threads. */
class InProcessLinkRuns implements LinkRunJobs {
  readonly kind = 'in-process' as const;
  private readonly executor: LinkTileExecutor;
  private queue: Array<{ runId: string; index: number }> = [];
  private running: Promise<void> | null = null;
  private closed = false;
  private readonly workerId = `${hostname()}:${process.pid}`;

  constructor(engine: LinkEngine, options: ConstructorParameters<typeof LinkTileExecutor>[1]) {
    this.executor = new LinkTileExecutor(engine, options);
  }

  async enqueue(runId: string, indices: readonly number[]): Promise<void> {
    if (this.closed) throw new Error('link run runner is closed');
    for (const index of indices) this.queue.push({ runId, index });
    this.running ??= this.drain();
  }

  async withdraw(runId: string): Promise<void> {
    this.queue = this.queue.filter((task) => task.runId !== runId);
  }

  async idle(): Promise<void> {
    while (this.running) await this.running;
  }

  private async drain(): Promise<void> {
    try {
      while (this.queue.length > 0 && !this.closed) {
        const { runId, index } = this.queue.shift()!;
        // Two attempts, as the queue would give a tile on another worker.
        const first = await this.executor.execute(runId, index, { workerId: this.workerId, final: false }).catch((): TileOutcome => ({ kind: 'skipped', reason: 'error' }));
        if (first.kind === 'retry') await this.executor.execute(runId, index, { workerId: this.workerId, final: true }).catch(() => undefined);
      }
    } finally {
      this.running = null;
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    this.queue = [];
    await this.running?.catch(() => undefined);
  }
}

/** Attempts per tile on the queue: a worker that dies or cannot read the terrain hands it to another. */
export const TILE_ATTEMPTS = 3;

/** BullMQ job id of a tile (custom ids may not contain ':'). */
export function tileJobId(runId: string, index: number): string {
  return `${runId}-${index}`;
}

class BullLinkRuns implements LinkRunJobs {
  readonly kind = 'bullmq' as const;
  private readonly queue: Queue;

  constructor(redisUrl: string, prefix: string) {
    this.queue = new Queue(LINK_TILE_QUEUE, { connection: redisConnection(redisUrl), prefix });
  }

  async enqueue(runId: string, indices: readonly number[]): Promise<void> {
    for (let start = 0; start < indices.length; start += 500) {
      // jobId per tile: a tile is never queued twice (a restart re-adds only what is missing).
      await this.queue.addBulk(
        indices.slice(start, start + 500).map((index) => ({
          name: 'tile',
          data: { runId, index },
          opts: { jobId: tileJobId(runId, index), attempts: TILE_ATTEMPTS, backoff: { type: 'fixed', delay: 500 }, removeOnComplete: { age: 3600, count: 100_000 }, removeOnFail: { age: 24 * 3600 } },
        })),
      );
    }
  }

  async withdraw(runId: string, indices: readonly number[]): Promise<void> {
    // Waiting jobs are removed; an active one is locked by its worker and stops at its next batch.
    for (let start = 0; start < indices.length; start += 200) {
      await Promise.all(indices.slice(start, start + 200).map((index) => this.queue.remove(tileJobId(runId, index)).catch(() => 0)));
    }
  }

  async idle(): Promise<void> {}

  async close(): Promise<void> {
    await this.queue.close();
  }
}

/**
 * The runner for this configuration, as it is: the BullMQ queue with REDIS_URL, else this
 * process (its coverage children on `areaPool`). A split coverage run's parent queues its own
 * children (coverage-split.ts), also after a restart.
 */
export function linkRunJobsFor(config: Config, engine: LinkEngine, options: { areaPool?: () => AreaPool | undefined } = {}, env: NodeJS.ProcessEnv = process.env): LinkRunJobs {
  return config.redisUrl ? new BullLinkRuns(config.redisUrl, queuePrefix(env)) : new InProcessLinkRuns(engine, { config, areaPool: options.areaPool });
}

/** The runner for this configuration; unfinished tiles of earlier runs are queued again (a coverage run's children by their parent). */
export async function createLinkRunJobs(db: Database, config: Config, engine: LinkEngine, env: NodeJS.ProcessEnv = process.env): Promise<LinkRunJobs> {
  const jobs = linkRunJobsFor(config, engine, {}, env);
  for (const run of await unfinishedLinkRuns(db)) if (run.kind !== COVERAGE_PARTS_KIND) await jobs.enqueue(run.id, await unfinishedLinkTiles(db, run.id));
  return jobs;
}
