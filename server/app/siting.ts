// Gateway siting as a use case: start a run (validate, record, queue), execute
// it (candidates → matrix through the link engine → MILP), read the answer,
// and apply it (create the chosen gateways). The API routes and the CLI (via
// the running server) call these functions; the pure work is in server/siting.
import type { Highs } from 'highs';
import { AppError } from './errors.ts';
import type { Database } from '../db/client.ts';
import { writeWithAudit, type AuditPrincipal } from '../db/repositories/audit.ts';
import { createGateway } from '../db/repositories/gateways.ts';
import { findPlanById, listGatewaysForLinks } from '../db/repositories/links.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { findAntennaDesignForTeam, findFeedlineForTeam, findMastOptionForTeam } from '../db/repositories/kit.ts';
import { NotFoundError } from '../db/errors.ts';
import {
  cancelSitingRun,
  claimSitingRun,
  completeSitingRun,
  createSitingRun,
  failSitingRun,
  findCachedMatrix,
  findSitingMatrix,
  findSitingRun,
  findSitingRunById,
  markSitingApplied,
  reportSitingProgress,
  saveSitingMatrix,
  listNodePositionsForSiting,
  listSitesForSiting,
  sitingPlanFingerprint,
  unfinishedSitingRuns,
  type SitingRunSummaryRow,
  type StoredSitingMatrix,
  markSitingUndone,
  recordSitingRemoved,
  removeGatewaysForSiting,
  restoreGatewaysForSiting,
  type RemovedGateway,
} from '../db/repositories/siting-runs.ts';
import { type LinkEngine, type PlanContext } from '../jobs/link-engine.ts';
import { computeSitingMatrix, matrixInputs, SitingCancelled, type SitingCandidate, type SitingMatrix } from '../jobs/siting-matrix.ts';
import { splitSitingMatrix } from '../jobs/siting-matrix-split.ts';
import type { LinkRunJobs } from '../jobs/link-run-jobs.ts';
import { gatewayKitPrice } from './kit-price.ts';
import { DEFAULT_GATEWAY_ANTENNA_ID, DEFAULT_GATEWAY_FEEDLINE_ID, DEFAULT_GATEWAY_NOISE_FIGURE_DB } from '../planning/gateway-kit.ts';
import { isExcluded, localHighPoints, parseExclusionAreas, pickSpaced, type ExclusionArea, type HighPoint, type LonLatBox } from '../siting/candidates.ts';
import { coverInstance, hearingCounts, marginalNodes, requirements, selectionCostUsd, selectionCount, type CoverOptions } from '../siting/cover.ts';
import { solveSiting } from '../siting/milp.ts';
import { packMatrix, unpackMatrix } from '../siting/matrix-pack.ts';
import { openGeoRaster } from '../terrain/raster.ts';
import { clutterClassIndex } from '../terrain/clutter.ts';

/** A failure the caller must fix; its kind becomes the HTTP status in server/api/errors.ts. */
export class SitingError extends AppError {}

export interface GatewayKitChoice {
  antennaDesignId?: string;
  antennaHeightAglM?: number;
  feedlineId?: string;
  feedlineLengthM?: number;
  mastOptionId?: string | null;
  noiseFigureDb?: number;
}

export interface SitingRequest {
  requiredGateways: number;
  candidates: {
    sites: boolean;
    terrainPoints: number;
    /** Only these sites (default: every site marked as a candidate). */
    siteIds?: string[];
    /** Least distance between terrain points (and from the plan's sites), m. */
    spacingM?: number;
    /** Site cost assumed for a terrain point (nothing is known of it yet), USD. */
    terrainPointCostUsd?: number;
  };
  keepExistingGateways: boolean;
  minimise?: 'gateways' | 'cost';
  maxGateways?: number;
  budgetUsd?: number;
  maxNodesPerGateway?: number;
  gatewayKit?: GatewayKitChoice;
  excludeAreas?: unknown[];
  timeLimitS?: number;
}

/** Stored params: the request with its defaults filled in. */
type SitingParams = Omit<SitingRequest, 'gatewayKit'> & {
  gatewayKit: Required<Omit<GatewayKitChoice, 'feedlineLengthM' | 'mastOptionId'>> & { feedlineLengthM: number | null; mastOptionId: string | null };
};

export interface SitingSelected {
  rank: number;
  candidateId: string;
  source: SitingCandidate['source'];
  siteId: string | null;
  gatewayId: string | null;
  name: string;
  lat: number;
  lon: number;
  antennaHeightAglM: number;
  costUsd: number;
  /** An existing gateway that stays (fixed, or chosen with keepExistingGateways false). */
  kept: boolean;
  nodesHeard: number;
  nodesOnlyHere: number;
  nodeIdsOnlyHere: string[];
}

export interface SitingResult {
  selected: SitingSelected[];
  coveredNodeIds: string[];
  uncoveredNodeIds: string[];
  uncovered: Array<{ nodeId: string; name: string; reason: string }>;
  /** Coverable nodes heard by fewer candidates than asked (they get as many as can hear them). */
  shortOfRequired: Array<{ nodeId: string; name: string; candidatesHearing: number }>;
  nodesCoverable: number;
  nodesTotal: number;
  requiredGateways: number;
  objective: { gateways: number; costUsd: number };
  minimise: 'gateways' | 'cost' | 'nodes covered';
  status: 'optimal' | 'feasible' | 'infeasible';
  message: string | null;
  optimal: boolean;
  gapPercent: number | null;
  bound: number | null;
  solver: string;
  seconds: number;
  greedy: { gateways: number; costUsd: number; nodesCovered: number; feasible: boolean; seconds: number };
  matrix: { nodes: number; candidates: number; pairsPredicted: number; pairsSkipped: number; cached: boolean; seconds: number };
  before: { gateways: number };
  after: { gateways: number };
  /** keepExistingGateways false: the existing gateways the answer drops (apply removes them; undo restores them). */
  removed: Array<{ gatewayId: string; name: string }>;
  warnings: string[];
}

let highsModule: Promise<Highs> | null = null;
/** The HiGHS WebAssembly module, loaded once per process. */
export function loadHighs(): Promise<Highs> {
  // The package's typings describe the loader as the module itself; the runtime default export is the loader.
  highsModule ??= import('highs').then((m) => (m as unknown as { default: () => Promise<Highs> }).default());
  highsModule.catch(() => (highsModule = null));
  return highsModule;
}

export interface SitingDeps {
  db: Database;
  engine: LinkEngine;
  /**
   * With REDIS_URL: the queue the matrix is split over (blocks of nodes × candidates
   * on `npm run worker` processes, server/jobs/siting-matrix-split.ts). Left out, the
   * matrix is predicted in this process over the link engine's worker threads.
   */
  matrixJobs?: LinkRunJobs;
}

/** Plan-level default gateway kit: the plan's first gateway's kit, else the catalog defaults. */
async function defaultKit(deps: SitingDeps, plan: PlanRow, given: GatewayKitChoice | undefined): Promise<SitingParams['gatewayKit']> {
  const first = (await listGatewaysForLinks(deps.db, plan.id))[0];
  return {
    antennaDesignId: given?.antennaDesignId ?? first?.antennaDesignId ?? DEFAULT_GATEWAY_ANTENNA_ID,
    antennaHeightAglM: given?.antennaHeightAglM ?? first?.antennaHeightAglM ?? 15,
    feedlineId: given?.feedlineId ?? first?.feedlineId ?? DEFAULT_GATEWAY_FEEDLINE_ID,
    feedlineLengthM: given?.feedlineLengthM ?? null,
    mastOptionId: given?.mastOptionId ?? null,
    noiseFigureDb: given?.noiseFigureDb ?? first?.noiseFigureDb ?? DEFAULT_GATEWAY_NOISE_FIGURE_DB,
  };
}

/** Validates a request against the plan and records the queued run (audited). */
export async function createSitingRequest(deps: SitingDeps, principal: AuditPrincipal, plan: PlanRow, request: SitingRequest): Promise<SitingRunSummaryRow> {
  if (!Number.isInteger(request.requiredGateways) || request.requiredGateways < 1) throw new SitingError('invalid_input', 'invalid_input', 'requiredGateways: must be a whole number ≥ 1');
  if (request.budgetUsd !== undefined && !(request.budgetUsd >= 0)) throw new SitingError('invalid_input', 'invalid_input', 'budgetUsd: must be ≥ 0');
  if (request.excludeAreas) {
    try {
      parseExclusionAreas(request.excludeAreas);
    } catch (error) {
      throw new SitingError('invalid_input', 'invalid_input', (error as Error).message);
    }
  }
  if (request.candidates.siteIds) {
    const sites = await listSitesForSiting(deps.db, plan.id);
    const known = new Set(sites.map((s) => s.id));
    const index = request.candidates.siteIds.findIndex((id) => !known.has(id));
    if (index >= 0) throw new SitingError('invalid_input', 'invalid_input', `candidates.siteIds[${index}]: no site "${request.candidates.siteIds[index]}" in this plan`);
  }
  const gatewayKit = await defaultKit(deps, plan, request.gatewayKit);
  try {
    await findAntennaDesignForTeam(deps.db, plan.teamId, gatewayKit.antennaDesignId);
  } catch (error) {
    if (error instanceof NotFoundError) throw new SitingError('invalid_input', 'invalid_input', `gatewayKit.antennaDesignId: no antenna design "${gatewayKit.antennaDesignId}" in the catalog`);
    throw error;
  }
  try {
    await findFeedlineForTeam(deps.db, plan.teamId, gatewayKit.feedlineId);
  } catch (error) {
    if (error instanceof NotFoundError) throw new SitingError('invalid_input', 'invalid_input', `gatewayKit.feedlineId: no feedline "${gatewayKit.feedlineId}" in the catalog`);
    throw error;
  }
  if (gatewayKit.mastOptionId) {
    try {
      await findMastOptionForTeam(deps.db, plan.teamId, gatewayKit.mastOptionId);
    } catch (error) {
      if (error instanceof NotFoundError) throw new SitingError('invalid_input', 'invalid_input', `gatewayKit.mastOptionId: no mast option "${gatewayKit.mastOptionId}" in the catalog`);
      throw error;
    }
  }
  if (!request.candidates.sites && request.candidates.terrainPoints === 0 && (await listGatewaysForLinks(deps.db, plan.id)).length === 0) {
    throw new SitingError('invalid_input', 'invalid_input', 'candidates: choose sites or terrain points (terrainPoints ≥ 1); the plan has no gateways either, so there is nothing to choose from');
  }
  const params: SitingParams = { ...request, gatewayKit };
  const planFingerprint = await sitingPlanFingerprint(deps.db, plan.id);
  return writeWithAudit(
    deps.db,
    (tx) => createSitingRun(tx, plan.id, { params, planFingerprint, createdById: principal.userId }),
    (row) => ({ principal, action: 'create', entity: 'siting_run', entityId: row.id, detail: { planId: plan.id, requiredGateways: request.requiredGateways, budgetUsd: request.budgetUsd ?? null, maxGateways: request.maxGateways ?? null } }),
  );
}

/** The plan's area for terrain points: the box around its nodes (else sites), 10 % and 500 m wider. */
function planArea(points: ReadonlyArray<{ lat: number; lon: number }>): LonLatBox | null {
  if (points.length === 0) return null;
  let west = Infinity;
  let east = -Infinity;
  let south = Infinity;
  let north = -Infinity;
  for (const p of points) {
    west = Math.min(west, p.lon);
    east = Math.max(east, p.lon);
    south = Math.min(south, p.lat);
    north = Math.max(north, p.lat);
  }
  const padLat = (north - south) * 0.1 + 500 / 111_320;
  const padLon = (east - west) * 0.1 + 500 / (111_320 * Math.max(0.1, Math.cos((((north + south) / 2) * Math.PI) / 180)));
  return { west: west - padLon, east: east + padLon, south: south - padLat, north: north + padLat };
}

/** Most cells read from one elevation layer for the high-point search (an overview is used above it). */
const MAX_SEARCH_CELLS = 4_000_000;

/** Terrain high points of the plan's elevation layers inside the area, and the area's lowest ground. */
async function terrainHighPoints(ctx: PlanContext, area: LonLatBox): Promise<{ points: HighPoint[]; minElevationM: number | null }> {
  const files = ctx.terrainSpec?.files.filter((f) => f.kind === 'elevation') ?? [];
  const points: HighPoint[] = [];
  let minElevationM: number | null = null;
  for (const file of files) {
    const raster = await openGeoRaster(file.path).catch(() => null);
    if (!raster) continue;
    try {
      const corners = [raster.lonLatToPixel(area.west, area.north), raster.lonLatToPixel(area.east, area.south), raster.lonLatToPixel(area.west, area.south), raster.lonLatToPixel(area.east, area.north)];
      const x0 = Math.max(0, Math.floor(Math.min(...corners.map((c) => c.x))));
      const y0 = Math.max(0, Math.floor(Math.min(...corners.map((c) => c.y))));
      const x1 = Math.min(raster.widthPx, Math.ceil(Math.max(...corners.map((c) => c.x))));
      const y1 = Math.min(raster.heightPx, Math.ceil(Math.max(...corners.map((c) => c.y))));
      if (x1 - x0 < 3 || y1 - y0 < 3) continue;
      // The coarsest level that still keeps the window under the cell ceiling (level 0 = full resolution).
      let level = 0;
      let factor = 1;
      while ((x1 - x0) * (y1 - y0) > MAX_SEARCH_CELLS * factor * factor && level < raster.overviews.length) {
        level++;
        factor = raster.widthPx / raster.overviews[level - 1].widthPx;
      }
      const lx0 = Math.floor(x0 / factor);
      const ly0 = Math.floor(y0 / factor);
      const w = Math.max(1, Math.floor((x1 - x0) / factor));
      const h = Math.max(1, Math.floor((y1 - y0) / factor));
      const elevationM = await raster.readWindow(lx0, ly0, w, h, level);
      for (const z of elevationM) if (Number.isFinite(z) && (minElevationM === null || z < minElevationM)) minElevationM = z;
      points.push(...localHighPoints({ widthPx: w, heightPx: h, elevationM, pixelToLonLat: (x, y) => raster.pixelToLonLat((lx0 + x) * factor, (ly0 + y) * factor) }, area));
    } finally {
      await raster.close();
    }
  }
  points.sort((a, b) => b.groundM - a.groundM);
  return { points, minElevationM };
}

/** The candidates of a run: existing gateways (kept), candidate sites, terrain high points. */
async function buildCandidates(deps: SitingDeps, ctx: PlanContext, params: SitingParams, areas: ExclusionArea[]): Promise<{ candidates: SitingCandidate[]; minElevationM: number | null; warnings: string[] }> {
  const warnings: string[] = [];
  const kit = params.gatewayKit;
  const antenna = await findAntennaDesignForTeam(deps.db, ctx.teamId, kit.antennaDesignId);
  const feedline = await findFeedlineForTeam(deps.db, ctx.teamId, kit.feedlineId);
  const mast = kit.mastOptionId ? await findMastOptionForTeam(deps.db, ctx.teamId, kit.mastOptionId) : null;
  const kitFor = (maxHeightM: number | null) => {
    const antennaHeightAglM = maxHeightM !== null ? Math.min(kit.antennaHeightAglM, maxHeightM) : kit.antennaHeightAglM;
    const feedlineLengthM = kit.feedlineLengthM ?? antennaHeightAglM + ctx.settings.feedlineDropM;
    // The one gateway kit price (antenna, feedline, connectors and surge arrestor, chosen mast), as the bill of materials prices a gateway.
    return { antennaHeightAglM, feedlineLengthM, kitCostUsd: gatewayKitPrice({ antenna, feedline, feedlineLengthM, mastOptionId: mast?.id ?? null }, mast ? [mast] : []).totalUsd };
  };
  const candidates: SitingCandidate[] = [];
  // Existing gateways: kept as built (fixed, cost 0) or, with keepExistingGateways false, ordinary
  // candidates the answer may keep or drop (cost 0 USD: they are built already; apply removes the dropped ones).
  for (const g of ctx.gateways) {
    candidates.push({ id: `gateway:${g.row.id}`, source: 'gateway', siteId: g.row.siteId, gatewayId: g.row.id, name: g.row.name, lat: g.row.lat, lon: g.row.lon, antennaDesignId: g.row.antennaDesignId, antennaHeightAglM: g.row.antennaHeightAglM, feedlineId: g.row.feedlineId, feedlineLengthM: g.row.feedlineLengthM, mastOptionId: g.row.mastOptionId, noiseFigureDb: g.row.noiseFigureDb, costUsd: 0, fixed: params.keepExistingGateways });
  }
  const sites = await listSitesForSiting(deps.db, ctx.plan.id);
  const gatewaySites = new Set(ctx.gateways.map((g) => g.row.siteId).filter((id): id is string => !!id));
  if (params.candidates.sites) {
    const wanted = params.candidates.siteIds ? new Set(params.candidates.siteIds) : null;
    for (const site of sites) {
      if (wanted ? !wanted.has(site.id) : site.kind !== 'candidate') continue;
      // A site that holds a gateway is that gateway's candidate already.
      if (gatewaySites.has(site.id)) continue;
      if (isExcluded(areas, site.lat, site.lon)) {
        warnings.push(`site ${site.name} lies in an exclusion area; left out`);
        continue;
      }
      const k = kitFor(site.maxAntennaHeightAglM);
      candidates.push({ id: `site:${site.id}`, source: 'site', siteId: site.id, gatewayId: null, name: site.name, lat: site.lat, lon: site.lon, antennaDesignId: kit.antennaDesignId, antennaHeightAglM: k.antennaHeightAglM, feedlineId: kit.feedlineId, feedlineLengthM: k.feedlineLengthM, mastOptionId: kit.mastOptionId, noiseFigureDb: kit.noiseFigureDb, costUsd: round2((site.costUsd ?? 0) + k.kitCostUsd), fixed: false });
      if (site.costUsd === null) warnings.push(`site ${site.name} has no cost; only its kit (${k.kitCostUsd} USD) is counted`);
    }
  }
  let minElevationM: number | null = null;
  if (params.candidates.terrainPoints > 0) {
    const nodes = await listNodePositionsForSiting(deps.db, ctx.plan.id);
    const area = planArea(nodes.length > 0 ? nodes : sites);
    if (!ctx.terrainSpec || !area) warnings.push('terrain points need an elevation layer and nodes (or sites) to define the area; none were added');
    else {
      const found = await terrainHighPoints(ctx, area);
      minElevationM = found.minElevationM;
      // Water from the clutter layer, sampled for the best few points only.
      const water = new Set<HighPoint>();
      const waterIndex = clutterClassIndex('water');
      const shortlist = found.points.slice(0, Math.max(200, params.candidates.terrainPoints * 40));
      if (ctx.terrain) {
        for (const p of shortlist) {
          const clutter = await ctx.terrain.sampleClutter(p.lat, p.lon);
          if (clutter && clutterClassIndex(clutter.clutterClass) === waterIndex) water.add(p);
        }
      }
      const spacingM = params.candidates.spacingM ?? 500;
      const picked = pickSpaced(shortlist, params.candidates.terrainPoints, spacingM, (p) => !water.has(p) && !isExcluded(areas, p.lat, p.lon), [...sites, ...ctx.gateways.map((g) => g.row)]);
      if (picked.length < params.candidates.terrainPoints) warnings.push(`only ${picked.length} terrain points ${spacingM} m apart were found in the area (asked for ${params.candidates.terrainPoints})`);
      const k = kitFor(null);
      picked.forEach((p, n) => {
        candidates.push({ id: `terrain:${n + 1}`, source: 'terrain', siteId: null, gatewayId: null, name: `Terrain high point ${n + 1} (${Math.round(p.groundM)} m)`, lat: round6(p.lat), lon: round6(p.lon), antennaDesignId: kit.antennaDesignId, antennaHeightAglM: k.antennaHeightAglM, feedlineId: kit.feedlineId, feedlineLengthM: k.feedlineLengthM, mastOptionId: kit.mastOptionId, noiseFigureDb: kit.noiseFigureDb, costUsd: round2((params.candidates.terrainPointCostUsd ?? 0) + k.kitCostUsd), fixed: false });
      });
    }
  }
  return { candidates, minElevationM, warnings };
}

function round2(value: number): number {
  return Math.round(value * 100) / 100;
}
function round6(value: number): number {
  return Math.round(value * 1e6) / 1e6;
}

function isMatrix(value: unknown): value is SitingMatrix {
  return !!value && typeof value === 'object' && Array.isArray((value as SitingMatrix).meets) && Array.isArray((value as SitingMatrix).candidates);
}

/** The JSON part of a packed matrix (its cells are in the run's byte columns). */
type PackedMatrixMeta = Omit<SitingMatrix, 'meets' | 'marginDb'> & { format: typeof PACKED_FORMAT; rows: number; columns: number };
const PACKED_FORMAT = 'siting-matrix-packed-1';

/** A matrix as stored: ids, names, candidates and counts as JSON, the cells packed (server/siting/matrix-pack.ts). */
function toStored(matrix: SitingMatrix): { meta: PackedMatrixMeta; meetsBits: Uint8Array; marginCdB: Uint8Array } {
  const { meets, marginDb, ...rest } = matrix;
  const packed = packMatrix(meets, marginDb, matrix.candidates.length);
  return { meta: { ...rest, format: PACKED_FORMAT, rows: packed.rows, columns: packed.columns }, meetsBits: packed.meetsBits, marginCdB: packed.marginCdB };
}

/** A stored matrix back as the API serves it; runs stored before the packed format kept it all as JSON. */
function fromStored(stored: StoredSitingMatrix | null): SitingMatrix | null {
  if (!stored) return null;
  const meta = stored.matrix as Partial<PackedMatrixMeta> | null;
  if (meta && meta.format === PACKED_FORMAT && stored.meetsBits && stored.marginCdB && typeof meta.rows === 'number' && typeof meta.columns === 'number') {
    const { format: _f, rows, columns, ...rest } = meta as PackedMatrixMeta;
    const { meets, marginDb } = unpackMatrix({ rows, columns, meetsBits: stored.meetsBits, marginCdB: stored.marginCdB });
    return { ...rest, meets, marginDb };
  }
  return isMatrix(stored.matrix) ? stored.matrix : null;
}

/** Executes a queued run to done / failed / cancelled. Never throws for the run's own failures. */
export async function executeSitingRun(deps: SitingDeps, runId: string): Promise<void> {
  const run = await findSitingRunById(deps.db, runId);
  if (!run || !(await claimSitingRun(deps.db, runId))) return;
  try {
    const plan = await findPlanById(deps.db, run.planId);
    if (!plan) throw new SitingError('not_found', 'not_found', 'the plan is gone');
    const params = run.params as unknown as SitingParams;
    const areas = params.excludeAreas ? parseExclusionAreas(params.excludeAreas) : [];
    const ctx = await deps.engine.planContext(plan);
    const built = await buildCandidates(deps, ctx, params, areas);
    await reportSitingProgress(deps.db, runId, 0.02);
    const t0 = performance.now();
    const inputs = await matrixInputs(deps.engine, ctx, built.candidates);
    const cached = fromStored(await findCachedMatrix(deps.db, plan.id, inputs.hash));
    let matrix: SitingMatrix;
    let fromCache = false;
    if (cached && cached.candidates.length === built.candidates.length) {
      // The hash covers what the links depend on (positions, radio kit), not prices or the mast
      // choice: the cells are reused, the candidates (cost, mast, names) are this run's own.
      matrix = { ...cached, candidates: [...built.candidates] };
      fromCache = true;
    } else {
      const onProgress = async (fraction: number) => reportSitingProgress(deps.db, runId, 0.02 + 0.9 * fraction);
      matrix = deps.matrixJobs
        ? await splitSitingMatrix(deps.engine, deps.matrixJobs, ctx, built.candidates, inputs, { sitingRunId: runId, areaMinElevationM: built.minElevationM, onProgress })
        : await computeSitingMatrix(deps.engine, ctx, built.candidates, inputs, { areaMinElevationM: built.minElevationM, onProgress });
    }
    const matrixSeconds = (performance.now() - t0) / 1000;
    await saveSitingMatrix(deps.db, runId, inputs.hash, toStored(matrix));
    if (!(await reportSitingProgress(deps.db, runId, 0.93))) throw new SitingCancelled();
    const result = await solveMatrix(matrix, params, [...built.warnings, ...matrix.warnings], { cached: fromCache, seconds: matrixSeconds }, ctx.gateways.length);
    await completeSitingRun(deps.db, runId, result);
  } catch (error) {
    if (error instanceof SitingCancelled) return;
    const message = error instanceof AppError || error instanceof RangeError ? error.message : `the siting run failed: ${(error as Error).message}`;
    await failSitingRun(deps.db, runId, message);
  }
}

/** The MILP over a matrix, shaped as the API answers it. */
export async function solveMatrix(matrix: SitingMatrix, params: Omit<SitingRequest, 'gatewayKit'>, warnings: string[], matrixInfo: { cached: boolean; seconds: number }, gatewaysBefore: number): Promise<SitingResult> {
  const highs = await loadHighs();
  const instance = coverInstance(
    matrix.meets,
    matrix.candidates.length,
    matrix.candidates.map((c) => c.costUsd),
    matrix.candidates.map((c) => c.fixed),
  );
  const options: CoverOptions = {
    requiredGateways: params.requiredGateways,
    minimise: params.minimise ?? 'gateways',
    budgetUsd: params.budgetUsd,
    maxGateways: params.maxGateways,
    maxNodesPerGateway: params.maxNodesPerGateway,
  };
  const solution = solveSiting(highs, instance, options, { timeLimitS: params.timeLimitS ?? 10 });
  const required = requirements(instance, params.requiredGateways);
  // The one covered set (the solver's answer, within any capacity cap): coveredNodeIds, the
  // objective and each site's nodesOnlyHere are all counted on it.
  const covered = solution.covered;
  const lost = marginalNodes(instance, solution.selected, required, covered);
  const heard = hearingCounts(instance, new Uint8Array(instance.candidateCount).fill(1));
  const heardByChosen = hearingCounts(instance, solution.selected);
  const budget = options.budgetUsd !== undefined || options.maxGateways !== undefined;
  const byCandidate = new Map<number, number>();
  for (let i = 0; i < instance.nodeCount; i++) {
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) {
      const j = instance.hearIndex[p];
      if (solution.selected[j]) byCandidate.set(j, (byCandidate.get(j) ?? 0) + 1);
    }
  }
  const selected: SitingSelected[] = [];
  for (let j = 0; j < instance.candidateCount; j++) {
    if (!solution.selected[j]) continue;
    const c = matrix.candidates[j];
    const only = lost.get(j) ?? [];
    selected.push({ rank: 0, candidateId: c.id, source: c.source, siteId: c.siteId, gatewayId: c.gatewayId, name: c.name, lat: c.lat, lon: c.lon, antennaHeightAglM: c.antennaHeightAglM, costUsd: c.costUsd, kept: c.source === 'gateway', nodesHeard: byCandidate.get(j) ?? 0, nodesOnlyHere: only.length, nodeIdsOnlyHere: only.map((i) => matrix.nodeIds[i]) });
  }
  selected.sort((a, b) => b.nodesOnlyHere - a.nodesOnlyHere || b.nodesHeard - a.nodesHeard || a.costUsd - b.costUsd);
  selected.forEach((s, n) => (s.rank = n + 1));
  const coveredNodeIds: string[] = [];
  const uncovered: SitingResult['uncovered'] = [];
  const shortOfRequired: SitingResult['shortOfRequired'] = [];
  let coverable = 0;
  for (let i = 0; i < instance.nodeCount; i++) {
    const id = matrix.nodeIds[i];
    const name = matrix.nodeNames[i];
    if (required[i] > 0) coverable++;
    if (covered[i]) coveredNodeIds.push(id);
    else if (required[i] === 0) uncovered.push({ nodeId: id, name, reason: 'no candidate hears it at the plan\'s target margin and delivery' });
    else if (solution.status === 'infeasible') uncovered.push({ nodeId: id, name, reason: 'no answer: the rules cannot all be met' });
    else if (options.maxNodesPerGateway !== undefined && heardByChosen[i] >= required[i]) uncovered.push({ nodeId: id, name, reason: `heard by the chosen gateways, but they are full (at most ${options.maxNodesPerGateway} nodes each)` });
    else uncovered.push({ nodeId: id, name, reason: budget ? 'left out to stay within the budget or gateway limit' : 'not covered by the chosen set' });
    if (required[i] > 0 && heard[i] < params.requiredGateways) shortOfRequired.push({ nodeId: id, name, candidatesHearing: heard[i] });
  }
  const greedyCovered = solution.greedy.covered;
  const gateways = selectionCount(solution.selected);
  const removed: SitingResult['removed'] = [];
  if (solution.status !== 'infeasible') {
    matrix.candidates.forEach((c, j) => {
      if (c.source === 'gateway' && c.gatewayId && !solution.selected[j]) removed.push({ gatewayId: c.gatewayId, name: c.name });
    });
  }
  return {
    selected,
    coveredNodeIds,
    uncoveredNodeIds: uncovered.map((u) => u.nodeId),
    uncovered,
    shortOfRequired,
    nodesCoverable: coverable,
    nodesTotal: instance.nodeCount,
    requiredGateways: params.requiredGateways,
    objective: { gateways, costUsd: round2(selectionCostUsd(instance, solution.selected)) },
    minimise: budget ? 'nodes covered' : (options.minimise ?? 'gateways'),
    status: solution.status,
    message: solution.message,
    optimal: solution.status === 'optimal',
    gapPercent: Number.isFinite(solution.gapPercent) ? Math.round(solution.gapPercent * 1000) / 1000 : null,
    bound: solution.bound,
    solver: solution.solver,
    seconds: Math.round(solution.seconds * 1000) / 1000,
    greedy: { gateways: selectionCount(solution.greedy.selected), costUsd: round2(selectionCostUsd(instance, solution.greedy.selected)), nodesCovered: selectionCount(greedyCovered), feasible: solution.greedy.feasible, seconds: Math.round(solution.greedy.seconds * 1e4) / 1e4 },
    matrix: { nodes: matrix.nodeIds.length, candidates: matrix.candidates.length, pairsPredicted: matrix.pairsPredicted, pairsSkipped: matrix.pairsSkipped, cached: matrixInfo.cached, seconds: Math.round(matrixInfo.seconds * 100) / 100 },
    before: { gateways: gatewaysBefore },
    // Kept existing gateways plus new ones; with keepExistingGateways false the dropped ones are removed by apply.
    after: { gateways: gatewaysBefore - removed.length + selected.filter((s) => !s.kept).length },
    removed,
    warnings,
  };
}

export async function findRun(deps: SitingDeps, planId: string, runId: string): Promise<SitingRunSummaryRow> {
  const run = await findSitingRun(deps.db, planId, runId);
  if (!run) throw new SitingError('not_found', 'not_found', 'siting run not found');
  return run;
}

export async function runMatrix(deps: SitingDeps, planId: string, runId: string): Promise<SitingMatrix> {
  const run = await findRun(deps, planId, runId);
  const matrix = fromStored(await findSitingMatrix(deps.db, planId, run.id));
  if (!matrix) throw new SitingError('conflict', 'not_ready', `the run is ${run.status}; its matrix exists once the predictions are done`);
  return matrix;
}

export async function cancelRun(deps: SitingDeps, principal: AuditPrincipal, planId: string, runId: string): Promise<SitingRunSummaryRow> {
  const run = await findRun(deps, planId, runId);
  await writeWithAudit(
    deps.db,
    async (tx) => {
      if (!(await cancelSitingRun(tx, planId, run.id))) throw new SitingError('conflict', 'already_finished', `the run is already ${run.status}`);
    },
    () => ({ principal, action: 'cancel', entity: 'siting_run', entityId: run.id, detail: { planId } }),
  );
  return findRun(deps, planId, runId);
}

/** Creates the run's new gateways (kept ones exist already), audited, once; 409 when the plan changed since. */
export async function applyRun(
  deps: SitingDeps,
  principal: AuditPrincipal,
  planId: string,
  runId: string,
): Promise<{ gatewayIds: string[]; gateways: Array<{ id: string; name: string; candidateId: string }>; removedGatewayIds: string[] }> {
  const run = await findRun(deps, planId, runId);
  if (run.status !== 'done') throw new SitingError('conflict', 'not_ready', `the run is ${run.status}; only a finished run can be applied`);
  if (run.appliedAt) throw new SitingError('conflict', 'already_applied', `this run was applied at ${run.appliedAt.toISOString()}`);
  const result = run.result as unknown as SitingResult;
  if (result.status === 'infeasible') throw new SitingError('conflict', 'nothing_to_apply', 'the run found no selection that meets its rules');
  const now = await sitingPlanFingerprint(deps.db, planId);
  if (now !== run.planFingerprint) throw new SitingError('conflict', 'plan_changed', 'the plan changed since this run (nodes, gateways, sites, terrain or settings); start a new run');
  const matrix = await runMatrix(deps, planId, runId);
  const byId = new Map(matrix.candidates.map((c) => [c.id, c]));
  const created = await writeWithAudit(
    deps.db,
    async (tx) => {
      const out: Array<{ id: string; name: string; candidateId: string }> = [];
      for (const s of result.selected) {
        if (s.kept) continue;
        const c = byId.get(s.candidateId);
        if (!c) continue;
        const row = await createGateway(tx, planId, {
          name: `GW ${c.name}`.slice(0, 120),
          siteId: c.siteId,
          lat: c.lat,
          lon: c.lon,
          antennaDesignId: c.antennaDesignId,
          antennaHeightAglM: c.antennaHeightAglM,
          feedlineId: c.feedlineId,
          feedlineLengthM: c.feedlineLengthM,
          mastOptionId: c.mastOptionId,
          noiseFigureDb: c.noiseFigureDb,
          notes: `Placed by siting run ${run.id} (rank ${s.rank}; ${s.nodesOnlyHere} nodes depend on it).`,
        });
        out.push({ id: row.id, name: row.name, candidateId: c.id });
      }
      if (!(await markSitingApplied(tx, run.id, out.map((g) => g.id)))) throw new SitingError('conflict', 'already_applied', 'this run was applied meanwhile');
      // keepExistingGateways false: the answer replaces the plan's gateways; the dropped ones are
      // removed here and remembered on the run (rows and readings) for undo.
      const removed = await removeGatewaysForSiting(tx, planId, (result.removed ?? []).map((g) => g.gatewayId));
      if (removed.length > 0) await recordSitingRemoved(tx, run.id, removed);
      return { out, removedIds: removed.map((r) => r.row.id) };
    },
    ({ out, removedIds }) => ({ principal, action: 'apply', entity: 'siting_run', entityId: run.id, detail: { planId, gatewayIds: out.map((g) => g.id), removedGatewayIds: removedIds } }),
  );
  return { gatewayIds: created.out.map((g) => g.id), gateways: created.out, removedGatewayIds: created.removedIds };
}

/**
 * Undoes an apply, once: deletes the gateways it created and restores the ones it removed (same ids,
 * fields and field readings), audited. 409 when the run was not applied or is undone already.
 */
export async function undoRun(deps: SitingDeps, principal: AuditPrincipal, planId: string, runId: string): Promise<{ deletedGatewayIds: string[]; restoredGatewayIds: string[] }> {
  const run = await findRun(deps, planId, runId);
  if (!run.appliedAt) throw new SitingError('conflict', 'not_applied', 'the run was not applied; there is nothing to undo');
  if (run.undoneAt) throw new SitingError('conflict', 'already_undone', `this apply was undone at ${run.undoneAt.toISOString()}`);
  const created = (run.appliedGatewayIds ?? []) as string[];
  const removed = (run.removedGateways ?? []) as unknown as RemovedGateway[];
  return writeWithAudit(
    deps.db,
    async (tx) => {
      if (!(await markSitingUndone(tx, run.id))) throw new SitingError('conflict', 'already_undone', 'this apply was undone meanwhile');
      await restoreGatewaysForSiting(tx, planId, created, removed);
      return { deletedGatewayIds: created, restoredGatewayIds: removed.map((r) => r.row.id) };
    },
    (out) => ({ principal, action: 'undo', entity: 'siting_run', entityId: run.id, detail: { planId, ...out } }),
  );
}

/**
 * The in-process queue of siting runs: one at a time, over the app's link
 * engine (whose worker pool spreads the paths). Runs left unfinished by a
 * previous process are queued again on start.
 */
export class SitingJobs {
  private queue: string[] = [];
  private running: Promise<void> | null = null;
  private closed = false;

  constructor(private readonly deps: SitingDeps) {}

  static async start(deps: SitingDeps): Promise<SitingJobs> {
    const jobs = new SitingJobs(deps);
    for (const run of await unfinishedSitingRuns(deps.db)) jobs.enqueue(run.id);
    return jobs;
  }

  enqueue(runId: string): void {
    if (this.closed) throw new Error('siting runner is closed');
    if (!this.queue.includes(runId)) this.queue.push(runId);
    if (!this.running) this.running = this.drain();
  }

  /** Resolves when the queue is empty (tests, the CLI). */
  async idle(): Promise<void> {
    while (this.running) await this.running;
  }

  private async drain(): Promise<void> {
    try {
      while (this.queue.length > 0 && !this.closed) {
        const id = this.queue.shift() as string;
        await executeSitingRun(this.deps, id).catch(() => undefined);
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

/** What `earshot siting` sends: the plan id and the same request as the API. */
export interface SitingReportInput extends SitingRequest {
  plan: string;
}

/**
 * Runs a siting request to the end in this process (the CLI, directly or via
 * the running server's loopback route) and answers the run as the API does.
 * Recorded and audited like an API run; the principal is the operator on the
 * machine (no user).
 */
export async function sitingReport(deps: SitingDeps, input: SitingReportInput): Promise<SitingRunSummaryRow> {
  const { plan: planId, ...request } = input;
  const plan = await findPlanById(deps.db, planId);
  if (!plan) throw new SitingError('not_found', 'not_found', `--plan: no plan "${planId}"`);
  const principal: AuditPrincipal = { userId: null, teamId: plan.teamId, tokenId: null };
  const run = await createSitingRequest(deps, principal, plan, request);
  await executeSitingRun(deps, run.id);
  return findRun(deps, plan.id, run.id);
}
