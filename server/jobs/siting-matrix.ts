// The siting matrix: for every node × candidate, the link the link table would
// predict if a gateway stood there, through the SAME link engine (path on the
// link worker pool, the radio room's budget, the band plan's SF rule, the
// plan's σ) and the link table's served rule per link. Pairs beyond the plan's
// link range are skipped; so are pairs far beyond the smooth-earth radio horizon
// whose link would fail the served rule even over free space (freeSpaceCloses).
import type { GatewayRow } from '../db/repositories/gateways.ts';
import { listNodesForLinks } from '../db/repositories/links.ts';
import { NotFoundError } from '../db/errors.ts';
import { bearingsBetween, medianEarthFactor } from '../planning/geometry.ts';
import { hashOf, LINK_ENGINE_VERSION } from '../planning/node-links.ts';
import { environmentLoss } from '../planning/environment.ts';
import { pathAtPlace, type PathPrediction } from '../planning/path.ts';
import { deliveryProbability } from '../planning/probability.ts';
import { linkStatus } from '../planning/status.ts';
import { lowestBasicLossDb, radioHorizonM } from '../siting/horizon.ts';
import { LinkInputError, pathEnd, type GatewayContext, type LinkEngine, type PlanContext, type ResolvedNode } from './link-engine.ts';
import type { LinkPathPair } from './link-pool.ts';

/** Bumped when the matrix's rule (not the link engine's) changes, so cached matrices miss. */
export const SITING_MATRIX_VERSION = 'siting-matrix-2';

/**
 * Pairs within this multiple of the smooth-earth radio horizon are always
 * predicted. Further out (the straight ray dips below the area's lowest ground)
 * a pair is skipped only when freeSpaceCloses proves that no path loss the
 * plan's method can predict lets it meet the served rule; the factor 1.5 (our
 * own, not a published figure) only decides which pairs are worth that check.
 * The plan's link range (maxLinkRangeKm, the same rule as the link table)
 * always applies.
 */
export const HORIZON_ALLOWANCE = 1.5;

/**
 * Whether a pair could meet the link table's served rule over the most favourable path its
 * distance allows: the path loss at the method's floor (lowestBasicLossDb: free space of ITU-R
 * P.525, less what P.1812 can take off at the plan's time percentage), through the SAME budget
 * as every link (engine.linksOverPaths: EIRP, gains, feedlines, mismatch, environment loss, the
 * calibration's bias, σ), then the best case of what the path could change: each antenna at its
 * peak gain (whatever the aim and elevation), an indoor node's building entry loss flat on (elevation 0°), the slowest allowed SF (most margin; dwell limits
 * ignored) and the least σ (the node taken above any clutter: §4.8 height factor at clutter
 * 0 m, the smallest σL). The served rule and Φ(margin/σ) are those of server/planning
 * (linkStatus, deliveryProbability). False proves the pair is not heard, so skipping it
 * changes no cell of "meets".
 */
export function freeSpaceCloses(engine: LinkEngine, ctx: PlanContext, node: ResolvedNode, gateway: GatewayContext, geometry: { distanceM: number; nodeGroundM: number; gatewayGroundM: number; nodeAzimuthDeg: number; gatewayAzimuthDeg: number }): boolean {
  const path = ctx.settings.path;
  const floorDb = lowestBasicLossDb(path.method, geometry.distanceM, ctx.settings.frequencyMhz, path.timePercent);
  const place = pathAtPlace({
    method: path.method,
    basicLossDb: floorDb,
    freeSpaceLossDb: floorDb,
    distanceM: geometry.distanceM,
    nodeGroundM: geometry.nodeGroundM,
    gatewayGroundM: geometry.gatewayGroundM,
    nodeAntennaHeightAglM: node.antennaHeightAglM,
    gatewayAntennaHeightAglM: gateway.row.antennaHeightAglM,
    nodeAzimuthDeg: geometry.nodeAzimuthDeg,
    gatewayAzimuthDeg: geometry.gatewayAzimuthDeg,
    deltaN: path.deltaN,
    nodeClutterHeightM: 0,
  });
  const [link] = engine.linksOverPaths(node, [{ gateway, path: place }]);
  const gainSlackDb = Math.max(0, node.kit.antenna.gainDbi - link.nodeGainDbi) + Math.max(0, gateway.kit.antenna.gainDbi - link.gatewayGainDbi);
  // An indoor node's building entry loss grows with the path's elevation (P.2109); its level flat on is the better case.
  const flatOn = environmentLoss(node.radio.environment, ctx.settings.frequencyMhz, 0, node.radioSettings.environment).lossDb;
  const environmentSlackDb = Math.max(0, link.environmentLossDb - flatOn);
  let bestMarginDb = link.marginDb;
  for (const entry of link.perSf) if (entry.marginDb > bestMarginDb) bestMarginDb = entry.marginDb;
  bestMarginDb += gainSlackDb + environmentSlackDb;
  const target = { targetMarginDb: ctx.settings.targetMarginDb, targetDelivery: ctx.settings.targetDelivery };
  return linkStatus(bestMarginDb, deliveryProbability(bestMarginDb, link.sigmaDb), target) === 'served';
}

export interface SitingCandidate {
  /** Stable within a run: "site:<id>", "gateway:<id>" or "terrain:<n>". */
  id: string;
  source: 'site' | 'gateway' | 'terrain';
  siteId: string | null;
  /** Existing gateway this candidate stands for (kept as built). */
  gatewayId: string | null;
  name: string;
  lat: number;
  lon: number;
  antennaDesignId: string;
  antennaHeightAglM: number;
  feedlineId: string;
  feedlineLengthM: number;
  mastOptionId: string | null;
  noiseFigureDb: number;
  costUsd: number;
  fixed: boolean;
}

export interface SitingMatrix {
  nodeIds: string[];
  nodeNames: string[];
  candidates: SitingCandidate[];
  /** rows = nodes, columns = candidates: the link alone meets the plan's served rule. */
  meets: boolean[][];
  /** Margin at the SF the node would use, dB (0.01 dB); null = pair skipped (out of range / beyond the horizon and short even over free space) or node unusable. */
  marginDb: Array<Array<number | null>>;
  pairsPredicted: number;
  pairsSkipped: number;
  warnings: string[];
}

export class SitingCancelled extends Error {
  constructor() {
    super('cancelled');
  }
}

/** Path pairs per group of nodes (a progress step; the pool works through each group in parallel). */
const GROUP_PAIRS = 2000;
/** Groups queued on the pool beyond the one being budgeted. */
const GROUPS_AHEAD = 2;
/** Longest stretch of budgets between two turns of the event loop, ms. */
const YIELD_EVERY_MS = 3;

/** A candidate as a gateway row (it exists only in the run), so the link engine can resolve its kit. */
export function candidateRow(ctx: PlanContext, candidate: SitingCandidate): GatewayRow {
  const epoch = new Date(0);
  return {
    id: candidate.id,
    planId: ctx.plan.id,
    siteId: candidate.siteId,
    name: candidate.name,
    lat: candidate.lat,
    lon: candidate.lon,
    antennaDesignId: candidate.antennaDesignId,
    antennaHeightAglM: candidate.antennaHeightAglM,
    antennaAzimuthDeg: null,
    feedlineId: candidate.feedlineId,
    feedlineLengthM: candidate.feedlineLengthM,
    mastOptionId: candidate.mastOptionId,
    noiseFigureDb: candidate.noiseFigureDb,
    txPowerDbm: 27,
    notes: '',
    version: 1,
    createdAt: epoch,
    updatedAt: epoch,
  } as GatewayRow;
}

/** Hash of everything the matrix depends on (for the cache of matrices). */
export function sitingMatrixHash(ctx: PlanContext, nodes: ReadonlyArray<{ id: string; kitHash: string; lat: number; lon: number; antennaHeightAglM: number }>, gateways: readonly GatewayContext[]): string {
  return hashOf({
    v: [SITING_MATRIX_VERSION, LINK_ENGINE_VERSION],
    path: ctx.pathSettingsHash,
    radio: ctx.radioSettingsHash,
    target: [ctx.settings.targetMarginDb, ctx.settings.targetDelivery, ctx.settings.maxLinkRangeM],
    nodes: nodes.map((n) => [n.id, n.kitHash, n.lat, n.lon, n.antennaHeightAglM]),
    candidates: gateways.map((g) => [g.row.id, g.kitHash, g.row.lat, g.row.lon, g.row.antennaHeightAglM]),
  });
}

export interface MatrixInputs {
  nodes: ResolvedNode[];
  broken: Array<{ id: string; name: string; message: string }>;
  gateways: GatewayContext[];
  hash: string;
}

/** Resolves the plan's nodes and the candidates' kits, and hashes the lot. */
export async function matrixInputs(engine: LinkEngine, ctx: PlanContext, candidates: readonly SitingCandidate[]): Promise<MatrixInputs> {
  const rows = await listNodesForLinks(engine.database, ctx.plan.id);
  const nodes: ResolvedNode[] = [];
  const broken: MatrixInputs['broken'] = [];
  for (const row of rows) {
    try {
      nodes.push(await engine.resolveNode(ctx, row));
    } catch (error) {
      if (!(error instanceof LinkInputError)) throw error;
      broken.push({ id: row.id, name: row.name, message: error.message });
    }
  }
  const gateways: GatewayContext[] = [];
  for (const candidate of candidates) {
    try {
      gateways.push(await engine.gatewayContext(ctx, candidateRow(ctx, candidate)));
    } catch (error) {
      if (error instanceof NotFoundError) throw new LinkInputError('invalid_input', 'invalid_input', `gatewayKit: ${error.message}`);
      throw error;
    }
  }
  const hash = sitingMatrixHash(
    ctx,
    [...nodes.map((n) => ({ id: n.row.id, kitHash: n.kitHash, lat: n.row.lat, lon: n.row.lon, antennaHeightAglM: n.antennaHeightAglM })), ...broken.map((b) => ({ id: b.id, kitHash: 'broken', lat: 0, lon: 0, antennaHeightAglM: 0 }))],
    gateways,
  );
  return { nodes, broken, gateways, hash };
}

/** One block of the matrix: rows = the nodes given, columns = the gateways given (margins and the served rule per pair). */
export interface SitingMatrixBlock {
  meets: boolean[][];
  marginDb: Array<Array<number | null>>;
  pairsPredicted: number;
  pairsSkipped: number;
}

/**
 * Predicts a block of the matrix (rows `nodes`, columns `gateways`).
 * `onBatch(pairsDone, pairsTotal)` is awaited after each group of paths; false
 * (or SitingCancelled thrown) stops. A pair's numbers depend on that pair alone
 * (and, for a directional node aimed at its best-heard candidate, on the node's
 * other columns: such nodes need every column in one block), so the blocks of a
 * split matrix (server/jobs/siting-matrix-split.ts) put together equal the
 * matrix predicted whole.
 */
export async function predictSitingBlock(
  engine: LinkEngine,
  ctx: PlanContext,
  nodes: readonly ResolvedNode[],
  gateways: readonly GatewayContext[],
  options: { areaMinElevationM: number | null; onBatch?: (pairsDone: number, pairsTotal: number) => Promise<boolean | void> | boolean | void },
): Promise<SitingMatrixBlock> {
  const kFactor = medianEarthFactor();
  const reference = options.areaMinElevationM ?? 0;
  const ground = async (lat: number, lon: number) => (ctx.terrain ? ((await ctx.terrain.sampleElevation(lat, lon)) ?? reference) : 0);
  const candidateGround = await Promise.all(gateways.map((g) => ground(g.row.lat, g.row.lon)));
  // 1. The pairs within range and either within the horizon allowance or, beyond it, not ruled out
  //    by the free-space check (no profile work for the others).
  const inRange: number[][] = [];
  let skipped = 0;
  let predicted = 0;
  for (const node of nodes) {
    const nodeGround = await ground(node.row.lat, node.row.lon);
    const list: number[] = [];
    for (let j = 0; j < gateways.length; j++) {
      const g = gateways[j];
      const bearings = bearingsBetween(node.row.lat, node.row.lon, g.row.lat, g.row.lon);
      const distanceM = bearings.distanceM;
      const horizonM = radioHorizonM(nodeGround - reference + Math.max(0, node.antennaHeightAglM), candidateGround[j] - reference + g.row.antennaHeightAglM, kFactor);
      const geometry = { distanceM, nodeGroundM: nodeGround, gatewayGroundM: candidateGround[j], nodeAzimuthDeg: bearings.forwardAzimuthDeg, gatewayAzimuthDeg: bearings.backAzimuthDeg };
      if (distanceM > ctx.settings.maxLinkRangeM || (distanceM > HORIZON_ALLOWANCE * horizonM && !freeSpaceCloses(engine, ctx, node, g, geometry))) {
        skipped++;
        continue;
      }
      list.push(j);
    }
    predicted += list.length;
    inRange.push(list);
  }
  // 2. Paths on the worker pool in groups of nodes, a few groups queued ahead so the workers never
  //    wait for this thread; each group's budgets are worked out as soon as its paths are back and
  //    the paths are dropped (the matrix keeps two figures per pair, not the paths).
  const target = { targetMarginDb: ctx.settings.targetMarginDb, targetDelivery: ctx.settings.targetDelivery };
  const meets: boolean[][] = [];
  const marginDb: Array<Array<number | null>> = [];
  const groups: Array<{ start: number; end: number }> = [];
  for (let start = 0, pairsInGroup = 0, n = 0; n < nodes.length; n++) {
    pairsInGroup += inRange[n].length;
    if (pairsInGroup >= GROUP_PAIRS || n === nodes.length - 1) {
      groups.push({ start, end: n + 1 });
      start = n + 1;
      pairsInGroup = 0;
    }
  }
  const launch = (g: number): Promise<PathPrediction[]> => {
    const pairs: LinkPathPair[] = [];
    for (let n = groups[g].start; n < groups[g].end; n++) {
      const node = nodes[n];
      for (const j of inRange[n]) pairs.push({ node: pathEnd(node.row, node.antennaHeightAglM), gateway: pathEnd(gateways[j].row, gateways[j].row.antennaHeightAglM) });
    }
    const work = engine.computePaths(ctx, pairs);
    work.catch(() => undefined); // awaited in order below; this only keeps a later group's failure from being reported as unhandled first
    return work;
  };
  const queued: Array<Promise<PathPrediction[]>> = [];
  let done = 0;
  try {
    for (let g = 0; g < groups.length; g++) {
      for (let ahead = queued.length; ahead < Math.min(groups.length, g + 1 + GROUPS_AHEAD); ahead++) queued.push(launch(ahead));
      const paths = await queued[g];
      queued[g] = Promise.resolve([]);
      let offset = 0;
      let lastYield = performance.now();
      for (let n = groups[g].start; n < groups[g].end; n++) {
        // Let the pool's messages in every few ms, so a worker that finished a task gets its next
        // one now rather than after this group's budgets (the workers, not this loop, are the cost).
        if (performance.now() - lastYield > YIELD_EVERY_MS) {
          await new Promise<void>((resolve) => setImmediate(resolve));
          lastYield = performance.now();
        }
        const node = nodes[n];
        const meetRow = new Array<boolean>(gateways.length).fill(false);
        const marginRow = new Array<number | null>(gateways.length).fill(null);
        const list = inRange[n];
        if (list.length > 0) {
          // The link table's budgets (server/jobs/link-engine.ts), one node over its in-range candidates.
          const links = engine.linksOverPaths(node, list.map((j, b) => ({ gateway: gateways[j], path: paths[offset + b] })));
          for (let b = 0; b < list.length; b++) {
            const link = links[b];
            marginRow[list[b]] = Math.round(link.marginDb * 100) / 100;
            // The link table's served rule, applied to this one link.
            meetRow[list[b]] = linkStatus(link.marginDb, link.deliveryProbability, target) === 'served';
          }
          offset += list.length;
        }
        meets.push(meetRow);
        marginDb.push(marginRow);
      }
      done += offset;
      const go = await options.onBatch?.(done, predicted);
      if (go === false) throw new SitingCancelled();
    }
  } finally {
    // A stopped run leaves no work behind it unawaited.
    await Promise.allSettled(queued);
  }
  return { meets, marginDb, pairsPredicted: predicted, pairsSkipped: skipped };
}

/** Puts the matrix together from the rows of the usable nodes (a whole block, or assembled blocks) and the unusable nodes. */
export function assembleSitingMatrix(ctx: PlanContext, candidates: readonly SitingCandidate[], inputs: MatrixInputs, block: SitingMatrixBlock): SitingMatrix {
  const { nodes, broken, gateways } = inputs;
  const warnings: string[] = [...ctx.warnings];
  for (const b of broken) warnings.push(`node ${b.name}: ${b.message}; left out of the matrix`);
  const nodeIds = [...nodes.map((n) => n.row.id), ...broken.map((b) => b.id)];
  const nodeNames = [...nodes.map((n) => n.row.name), ...broken.map((b) => b.name)];
  const meets = [...block.meets, ...broken.map(() => new Array<boolean>(gateways.length).fill(false))];
  const marginDb = [...block.marginDb, ...broken.map(() => new Array<number | null>(gateways.length).fill(null))];
  return { nodeIds, nodeNames, candidates: [...candidates], meets, marginDb, pairsPredicted: block.pairsPredicted, pairsSkipped: block.pairsSkipped, warnings };
}

/**
 * Predicts the matrix in this process. `onProgress(fraction)` is awaited after each group; it
 * may throw SitingCancelled (or return false) to stop.
 */
export async function computeSitingMatrix(
  engine: LinkEngine,
  ctx: PlanContext,
  candidates: readonly SitingCandidate[],
  inputs: MatrixInputs,
  options: { areaMinElevationM: number | null; onProgress?: (fraction: number) => Promise<boolean | void> | boolean | void },
): Promise<SitingMatrix> {
  const block = await predictSitingBlock(engine, ctx, inputs.nodes, inputs.gateways, {
    areaMinElevationM: options.areaMinElevationM,
    onBatch: (done, total) => options.onProgress?.((0.95 * done) / Math.max(1, total)),
  });
  await options.onProgress?.(0.97);
  return assembleSitingMatrix(ctx, candidates, inputs, block);
}
