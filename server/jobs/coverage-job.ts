// Executes one coverage run from its row: every gateway's area prediction on
// the plan's terrain layer, the composite on the union of their windows, the
// result files and the summary. Used alike by the in-process runner and by
// `npm run worker` (BullMQ). The result folder is written under a temporary
// name and renamed; the row goes to done once, guarded by its status.
import { existsSync, mkdirSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Database } from '../db/client.ts';
import type { Config } from '../config.ts';
import { RESULT_FILES, resolveStoredFile, resultDir } from '../db/files.ts';
import { claimCoverageRun, completeCoverageRun, failCoverageRun, findCoverageRunById, reportCoverageProgress } from '../db/repositories/coverage-runs.ts';
import { openGeoRaster, type GeoRaster } from '../terrain/raster.ts';
import { writeGeoTiff } from '../terrain/geotiff-writer.ts';
import { CLUTTER_CLASSES, CLUTTER_CODE_PRESETS, clutterLookup, type ClutterPreset } from '../terrain/clutter.ts';
import { loadClutterHeights, loadTerrainWindow, windowFor, windowGeoTransform, type WindowPlacement } from '../coverage/terrain-window.ts';
import { cellProducts, LOSS_NODATA } from '../coverage/outputs.ts';
import { sampleBilinear } from '../coverage/geometry.ts';
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { budgetAtPlace, type EndKit, type GatewayRadio, type LinkRadioSettings, type NodeRadio } from '../planning/link.ts';
import { bearingsBetween } from '../planning/geometry.ts';
import type { PropagationMethodId } from '../planning/path.ts';
import { resolveBandPlan } from '../planning/settings.ts';
import { buildComposite, summarise, type PlacedProducts } from '../coverage/composite.ts';
import { BYTE_NODATA } from '../coverage/rasterise.ts';
import type { CoverageMode } from '../coverage/area.ts';
import { runArea, RunCancelledError, type AreaPool } from './area-runner.ts';

/** The one link budget of a run (server/planning/link.ts), as plain data a worker can read from the row. */
export interface CoverageBudgetParams {
  /** The node kit everywhere on the map, as a node with that kit would have it (resolveNode). */
  nodeKit: EndKit;
  node: NodeRadio;
  /** The link settings of that node (allowed SFs for its payload, target, spread); bandPlan by id. */
  radio: Omit<LinkRadioSettings, 'bandPlan'> & { bandPlanId: string };
  /** Node antenna height above ground as given, m (negative in a pit). */
  nodeAntennaHeightAglM: number;
  method: PropagationMethodId;
  deltaN: number;
}

/** Everything a run needs, resolved when the run is created (server/app/coverage.ts), so workers need no plan logic. */
export interface CoverageJobParams {
  /** fast or full (los gives visibility only, which has no margin: CLI only). */
  mode: Exclude<CoverageMode, 'los'>;
  radiusKm: number;
  /** Node antenna height the sweeps use, m (the node kit's, at least 1 m as for link paths). */
  targetHeightM: number;
  /** A fixed SF for every cell, or null: the node SF rule (fastest allowed SF meeting the target). */
  sf: number | null;
  targetMarginDb: number;
  frequencyMhz: number;
  /** Median effective earth-radius factor k50 from the plan's ΔN (P.1812-8 Eq. (5)), as links use. */
  kFactor: number;
  /** P.1812 options of the plan (full mode): ΔN, N0, time percent, polarisation. */
  p1812: { deltaN: number; n0: number; timePercent: number; polarisation: 'horizontal' | 'vertical' };
  budget: CoverageBudgetParams;
  /** Elevation layer file (absolute, or relative to the files folder) and its id. */
  terrainPath: string;
  terrainLayerId: string;
  /**
   * The plan's clutter layer for this run (null or absent: none): file, class
   * table (terrain room's code presets) and representative height per class index (m,
   * the P.1812 defaults with the plan's overrides, `clutterHeightsByIndex`).
   */
  clutter?: { layerId: string; name: string; path: string; codes: ClutterPreset; heightByClassM: number[] } | null;
  gateways: Array<{ id: string; name: string; lat: number; lon: number; heightAglM: number; kit: EndKit; radio: GatewayRadio }>;
  nodes: Array<{ id: string; name?: string; lat: number; lon: number }>;
}

export interface ExecuteOptions {
  pool?: AreaPool;
  workers?: number;
  workerId: string;
  /** Called before anything is written; a test hook to kill a worker mid-job. */
  onProgress?: (fraction: number) => void;
}

/** Union window of several placements. */
function unionOf(placements: WindowPlacement[]): WindowPlacement {
  const x0 = Math.min(...placements.map((p) => p.x0));
  const y0 = Math.min(...placements.map((p) => p.y0));
  const x1 = Math.max(...placements.map((p) => p.x0 + p.widthPx));
  const y1 = Math.max(...placements.map((p) => p.y0 + p.heightPx));
  return { x0, y0, widthPx: x1 - x0, heightPx: y1 - y0 };
}

/**
 * A run's stored params in today's names. Runs stored before the rename kept the target margin
 * as `requiredMarginDb` (one concept, one name: targetMarginDb, as plans and links call it).
 */
export function storedCoverageParams(stored: unknown): Partial<CoverageJobParams> {
  const params = { ...((stored ?? {}) as Partial<CoverageJobParams> & { requiredMarginDb?: number }) };
  if (params.targetMarginDb === undefined && params.requiredMarginDb !== undefined) params.targetMarginDb = params.requiredMarginDb;
  delete params.requiredMarginDb;
  return params;
}

/** A run's stored summary in today's names (older summaries said `requiredMarginDb`, like their params). */
export function storedCoverageSummary(stored: unknown): Record<string, unknown> | null {
  if (stored === null || typeof stored !== 'object') return null;
  const { requiredMarginDb, ...summary } = stored as Record<string, unknown>;
  return summary.targetMarginDb === undefined && requiredMarginDb !== undefined ? { ...summary, targetMarginDb: requiredMarginDb } : summary;
}

/**
 * Runs the job for `runId`. Returns the final status it left the row in,
 * or 'skipped' when the row was already finished (a duplicate delivery).
 */
export async function executeCoverageRun(db: Database, config: Config, runId: string, options: ExecuteOptions): Promise<'done' | 'failed' | 'cancelled' | 'skipped'> {
  const row = await findCoverageRunById(db, runId);
  if (!row) return 'skipped';
  if (!(await claimCoverageRun(db, runId, options.workerId))) return 'skipped';
  const params = storedCoverageParams(row.params) as CoverageJobParams;
  const controller = new AbortController();
  let lastReport = 0;
  let reporting: Promise<void> = Promise.resolve();
  const gatewayCount = params.gateways.length;
  const report = (fraction: number) => {
    options.onProgress?.(fraction);
    const now = Date.now();
    if (now - lastReport < 250 && fraction < 1) return;
    lastReport = now;
    // Progress is best effort: a failed write (a busy or briefly lost database) must neither end a
    // long run nor reject while nobody awaits the chain (that would be an unhandled rejection);
    // the final write of the result is what counts, and it fails the run if the database is gone.
    reporting = reporting.then(async () => {
      try {
        const stillRunning = await reportCoverageProgress(db, runId, fraction);
        if (!stillRunning) controller.abort();
      } catch {
        // Best effort (see above): the next report or the final write tries again.
      }
    });
  };
  let raster: GeoRaster | null = null;
  let clutterRaster: GeoRaster | null = null;
  const dir = resultDir(config, runId);
  const temp = `${dir}.partial-${process.pid}-${Date.now()}`;
  try {
    // Temporary folders of an earlier attempt of this run (a worker killed while writing) go first.
    const parent = join(config.filesDir, 'coverage');
    if (existsSync(parent)) for (const name of readdirSync(parent)) if (name.startsWith(`${runId}.partial-`)) rmSync(join(parent, name), { recursive: true, force: true });
    raster = await openGeoRaster(resolveStoredFile(config, params.terrainPath));
    const clutter = params.clutter ?? null;
    if (clutter) clutterRaster = await openGeoRaster(resolveStoredFile(config, clutter.path));
    const classByCode = clutter ? clutterLookup(CLUTTER_CODE_PRESETS[clutter.codes]) : null;
    const radiusM = params.radiusKm * 1000;
    // A radius past the terrain is clipped: cells without terrain are NoData (the summary says how much of the disc had terrain).
    const placements = params.gateways.map((g) => windowFor(raster!, { lat: g.lat, lon: g.lon, radiusM, allowClip: true }));
    const radio: LinkRadioSettings = { ...params.budget.radio, bandPlan: resolveBandPlan(params.budget.radio.bandPlanId) };
    const discShares: number[] = [];
    const union = unionOf(placements);
    const geoTransform = windowGeoTransform(raster, union);
    const res = raster.resolutionM;
    const cellArea = (row: number): number => {
      if (raster!.crs.kind === 'projected') return (Math.abs(geoTransform[1] * geoTransform[5]) / 1e6);
      const lat = raster!.pixelToLonLat(union.x0 + 0.5, union.y0 + row + 0.5).lat;
      return (res.x * res.y * Math.cos((lat * Math.PI) / 180)) / Math.cos((((raster!.boundsLonLat.south + raster!.boundsLonLat.north) / 2) * Math.PI) / 180) / 1e6;
    };
    const parts: PlacedProducts[] = [];
    const inside = new Uint8Array(union.widthPx * union.heightPx);
    for (let index = 0; index < gatewayCount; index++) {
      const g = params.gateways[index];
      const { terrain, placement } = await loadTerrainWindow(raster, { lat: g.lat, lon: g.lon, radiusM }, placements[index]);
      if (clutter && clutterRaster && classByCode) {
        // Clutter heights on the DEM window's cells; the sweeps add them to intermediate profile points (P.1812-8 §3.2).
        terrain.clutterHeightM = await loadClutterHeights(raster, placement, clutterRaster, classByCode, clutter.heightByClassM);
      }
      const area = await runArea(
        terrain,
        {
          mode: params.mode,
          radiusM,
          heightAglM: g.heightAglM,
          targetHeightAglM: params.targetHeightM,
          kFactor: params.kFactor,
          frequencyMhz: params.frequencyMhz,
          p1812: { siteLatDeg: g.lat, ...params.p1812 },
        },
        { pool: options.pool, workers: options.workers, signal: controller.signal, onProgress: (f) => report((index + f * 0.95) / gatewayCount) },
      );
      if (!area.lossDb) throw new Error('coverage runs need a loss mode (fast or full)');
      const lossDb = area.lossDb;
      // The one budget per cell: a node with the run's kit at the cell centre, linked to this gateway.
      const { widthPx: w, heightPx: h } = placement;
      const sitePx = raster.lonLatToPixel(g.lon, g.lat);
      const gatewayGroundM = sampleBilinear(terrain.elevationM, w, h, sitePx.x - placement.x0, sitePx.y - placement.y0);
      const b = params.budget;
      const budgetAt = (i: number, loss: number) => {
        const col = i % w;
        const row = (i - col) / w;
        const cell = raster!.pixelToLonLat(placement.x0 + col + 0.5, placement.y0 + row + 0.5);
        const bearings = bearingsBetween(cell.lat, cell.lon, g.lat, g.lon);
        const clutterM = terrain.clutterHeightM ? terrain.clutterHeightM[i] : 0;
        const budget = budgetAtPlace(
          {
            method: b.method,
            basicLossDb: loss,
            freeSpaceLossDb: freeSpaceLossDb(Math.max(bearings.distanceM, 1) / 1000, params.frequencyMhz),
            distanceM: bearings.distanceM,
            nodeGroundM: terrain.elevationM[i],
            gatewayGroundM: gatewayGroundM === gatewayGroundM ? gatewayGroundM : terrain.elevationM[i],
            nodeAntennaHeightAglM: b.nodeAntennaHeightAglM,
            gatewayAntennaHeightAglM: g.heightAglM,
            nodeAzimuthDeg: bearings.forwardAzimuthDeg,
            gatewayAzimuthDeg: bearings.backAzimuthDeg,
            deltaN: b.deltaN,
            nodeClutterHeightM: clutterM === clutterM ? clutterM : 0,
          },
          b.nodeKit,
          g.kit,
          b.node,
          g.radio,
          radio,
        );
        return { rssiDbm: budget.rssiDbm, marginDb: budget.marginDb, bestSf: budget.bestSf, deliveryProbability: budget.deliveryProbability };
      };
      const products = cellProducts(lossDb, budgetAt);
      parts.push({ gatewayIndex: index, x0: placement.x0 - union.x0, y0: placement.y0 - union.y0, widthPx: placement.widthPx, heightPx: placement.heightPx, products, lossDb });
      let withTerrainKm2 = 0;
      for (let row = 0; row < placement.heightPx; row++) {
        for (let col = 0; col < placement.widthPx; col++) {
          if (lossDb[row * placement.widthPx + col] === lossDb[row * placement.widthPx + col]) {
            inside[(row + placement.y0 - union.y0) * union.widthPx + col + placement.x0 - union.x0] = 1;
            withTerrainKm2 += cellArea(row + placement.y0 - union.y0);
          }
        }
      }
      discShares.push(Math.min(1, withTerrainKm2 / ((Math.PI * radiusM * radiusM) / 1e6)));
      await reporting;
      if (controller.signal.aborted) throw new RunCancelledError();
    }
    const composite = buildComposite(union.widthPx, union.heightPx, parts, params.targetMarginDb);
    const nodes = params.nodes.map((node) => {
      const p = raster!.lonLatToPixel(node.lon, node.lat);
      const col = p.x - union.x0;
      const row = p.y - union.y0;
      const ok = col >= 0 && row >= 0 && col < union.widthPx && row < union.heightPx;
      return { id: node.id, col: ok ? col : null, row: ok ? row : null };
    });
    const outsideNodes = params.nodes.filter((node, k) => {
      const p = nodes[k];
      return p.col === null || p.row === null || !inside[Math.floor(p.row) * union.widthPx + Math.floor(p.col)];
    });
    const summary = summarise(composite, inside, gatewayCount, params.targetMarginDb, cellArea, nodes);
    const summaryJson = {
      ...summary,
      gateways: summary.gateways.map((entry) => ({ ...entry, gatewayId: params.gateways[entry.index].id, name: params.gateways[entry.index].name })),
      mode: params.mode,
      radiusKm: params.radiusKm,
      sf: params.sf,
      terrain: {
        // Share of each gateway's disc that had terrain (the rest is NoData), and the nodes outside it.
        discShare: Math.min(...discShares),
        perGateway: params.gateways.map((gw, k) => ({ gatewayId: gw.id, discShare: discShares[k] })),
        nodesOutside: outsideNodes.map((node) => ({ id: node.id, name: node.name ?? null })),
        note:
          Math.min(...discShares) < 0.999
            ? `the ${params.radiusKm} km radius reaches past the terrain: ${(Math.min(...discShares) * 100).toFixed(0)} % of the disc had terrain, the rest is NoData; ${outsideNodes.length} node(s) lay outside it`
            : `the whole ${params.radiusKm} km disc had terrain`,
      },
      budget: {
        note: 'each cell: the margin a node with this kit would have there (the link budget of node links: kit, feedline, connectors, mismatch, antenna patterns toward the gateway, SF rule of the band plan, planning spread σ)',
        allowedSfs: params.budget.radio.allowedSfs,
        kFactor: params.kFactor,
      },
      targetMarginDb: params.targetMarginDb,
      clutter: clutter
        ? {
            layerId: clutter.layerId,
            name: clutter.name,
            heightsM: Object.fromEntries(CLUTTER_CLASSES.map((name, i) => [name, clutter.heightByClassM[i]])),
            note: `clutter layer "${clutter.name}" used: representative clutter heights added to the terrain between gateway and cell`,
          }
        : { layerId: null, name: null, heightsM: null, note: 'no clutter layer: terrain only (no clutter heights added)' },
      grid: { widthPx: union.widthPx, heightPx: union.heightPx, geoTransform, epsg: raster.crs.epsg },
    };
    // Result files: temporary folder first, renamed into place in one step.
    mkdirSync(temp, { recursive: true });
    const base = { widthPx: union.widthPx, heightPx: union.heightPx, geoTransform, epsg: raster.crs.epsg, crsKind: raster.crs.kind, compression: 'deflate' as const, tiled: { tileSizePx: 256 } };
    const clean = (values: Float32Array) => {
      const out = new Float32Array(values.length);
      for (let i = 0; i < values.length; i++) out[i] = values[i] === values[i] ? values[i] : LOSS_NODATA;
      return out;
    };
    writeFileSync(join(temp, RESULT_FILES.margin), writeGeoTiff({ ...base, data: clean(composite.marginDb), noData: LOSS_NODATA }));
    writeFileSync(join(temp, RESULT_FILES.loss), writeGeoTiff({ ...base, data: clean(composite.lossDb), noData: LOSS_NODATA }));
    const redundancy = new Uint8Array(composite.redundancy.length);
    for (let i = 0; i < redundancy.length; i++) redundancy[i] = inside[i] ? composite.redundancy[i] : BYTE_NODATA;
    writeFileSync(join(temp, RESULT_FILES.redundancy), writeGeoTiff({ ...base, data: redundancy, noData: BYTE_NODATA }));
    writeFileSync(join(temp, RESULT_FILES.bestSf), writeGeoTiff({ ...base, data: composite.bestSf, noData: BYTE_NODATA }));
    writeFileSync(join(temp, RESULT_FILES.meta), JSON.stringify({ runId, union, geoTransform, epsg: raster.crs.epsg }));
    await reporting;
    if (controller.signal.aborted) throw new RunCancelledError();
    // A folder left by an earlier attempt that died after its rename is replaced.
    rmSync(dir, { recursive: true, force: true });
    mkdirSync(join(config.filesDir, 'coverage'), { recursive: true });
    renameSync(temp, dir);
    const done = await completeCoverageRun(db, runId, { resultPath: join('coverage', runId), summary: summaryJson });
    if (!done) {
      rmSync(dir, { recursive: true, force: true });
      return 'cancelled';
    }
    return 'done';
  } catch (error) {
    rmSync(temp, { recursive: true, force: true });
    if (error instanceof RunCancelledError || controller.signal.aborted) return 'cancelled';
    const message = error instanceof Error ? error.message : String(error);
    await failCoverageRun(db, runId, message);
    return 'failed';
  } finally {
    await reporting;
    await raster?.close();
    await clutterRaster?.close();
  }
}
