// The pieces of a coverage run, shared by the run done whole in one job
// (coverage-job.ts) and the run split into a child per gateway (coverage-split.ts):
// open the plan's rasters, predict one gateway's part (window, per-cell products,
// loss), and compose the parts (buildComposite + summarise once) into the result
// files and the summary. Both ways call exactly these functions, so a split run's
// composite is the whole run's, byte for byte.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config.ts';
import { RESULT_FILES, resolveStoredFile } from '../db/files.ts';
import { openGeoRaster, type GeoRaster } from '../terrain/raster.ts';
import { writeGeoTiff } from '../terrain/geotiff-writer.ts';
import { CLUTTER_CLASSES, CLUTTER_CODE_PRESETS, clutterLookup } from '../terrain/clutter.ts';
import { loadClutterHeights, loadTerrainWindow, windowFor, windowGeoTransform, type WindowPlacement } from '../coverage/terrain-window.ts';
import { cellProducts, LOSS_NODATA, type CellProducts } from '../coverage/outputs.ts';
import { sampleBilinear } from '../coverage/geometry.ts';
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { budgetAtPlace, type LinkRadioSettings } from '../planning/link.ts';
import { bearingsBetween } from '../planning/geometry.ts';
import { resolveBandPlan } from '../planning/settings.ts';
import { buildComposite, summarise, type PlacedProducts } from '../coverage/composite.ts';
import { BYTE_NODATA } from '../coverage/rasterise.ts';
import { runArea, type AreaPool } from './area-runner.ts';
import type { CoverageJobParams } from './coverage-params.ts';

/** One gateway's prediction on the elevation raster's grid: its window (raster pixels), per-cell products and basic loss. */
export interface GatewayPart {
  gatewayIndex: number;
  placement: WindowPlacement;
  products: CellProducts;
  lossDb: Float32Array;
}

/** The plan's rasters a run reads, opened once per job. */
export interface CoverageRasters {
  raster: GeoRaster;
  clutterRaster: GeoRaster | null;
  classByCode: ReturnType<typeof clutterLookup> | null;
}

/**
 * A layer this worker cannot read (missing from its files folder, unreadable):
 * the message names the worker, so a misconfigured machine is found; the job may
 * succeed on another worker, so it is retried while attempts are left.
 */
export class WorkerCannotRead extends Error {
  readonly code = 'terrain_unreadable';
}

/** Opens the run's elevation layer (and clutter layer) from the files folder. */
export async function openCoverageRasters(config: Pick<Config, 'filesDir' | 'dataDir'>, params: CoverageJobParams, workerId: string): Promise<CoverageRasters> {
  const open = async (path: string, what: string) => {
    try {
      return await openGeoRaster(resolveStoredFile(config, path));
    } catch (error) {
      throw new WorkerCannotRead(`worker ${workerId} could not read the plan's ${what} layer: ${error instanceof Error ? error.message : String(error)}`);
    }
  };
  const raster = await open(params.terrainPath, 'terrain');
  const clutter = params.clutter ?? null;
  let clutterRaster: GeoRaster | null = null;
  try {
    if (clutter) clutterRaster = await open(clutter.path, 'clutter');
  } catch (error) {
    await raster.close();
    throw error;
  }
  return { raster, clutterRaster, classByCode: clutter ? clutterLookup(CLUTTER_CODE_PRESETS[clutter.codes]) : null };
}

export async function closeCoverageRasters(rasters: CoverageRasters | null): Promise<void> {
  await rasters?.raster.close();
  await rasters?.clutterRaster?.close();
}

/** A gateway's window on the raster; a radius past the terrain is clipped (cells without terrain are NoData). */
export function gatewayPlacement(raster: GeoRaster, params: CoverageJobParams, index: number): WindowPlacement {
  const g = params.gateways[index];
  return windowFor(raster, { lat: g.lat, lon: g.lon, radiusM: params.radiusKm * 1000, allowClip: true });
}

export interface PartOptions {
  pool?: AreaPool;
  workers?: number;
  signal?: AbortSignal;
  /** The part's own progress, 0..1. */
  onProgress?: (fraction: number) => void;
}

/** Gateway `index` of the run: its area prediction and, per cell, the one link budget (server/planning/link.ts). */
export async function predictGatewayPart(rasters: CoverageRasters, params: CoverageJobParams, index: number, options: PartOptions = {}): Promise<GatewayPart> {
  const { raster, clutterRaster, classByCode } = rasters;
  const g = params.gateways[index];
  const radiusM = params.radiusKm * 1000;
  const clutter = params.clutter ?? null;
  const radio: LinkRadioSettings = { ...params.budget.radio, bandPlan: resolveBandPlan(params.budget.radio.bandPlanId) };
  const { terrain, placement } = await loadTerrainWindow(raster, { lat: g.lat, lon: g.lon, radiusM }, gatewayPlacement(raster, params, index));
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
    { pool: options.pool, workers: options.workers, signal: options.signal, onProgress: options.onProgress },
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
    const cell = raster.pixelToLonLat(placement.x0 + col + 0.5, placement.y0 + row + 0.5);
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
  return { gatewayIndex: index, placement, products: cellProducts(lossDb, budgetAt), lossDb };
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
 * The composite of every gateway's part on the union of their windows, the summary,
 * and the result files written into `folder` (a temporary folder the caller renames).
 * Returns the summary to store with the run.
 */
export function composeCoverage(raster: GeoRaster, params: CoverageJobParams, parts: readonly GatewayPart[], runId: string, folder: string): Record<string, unknown> {
  const gatewayCount = params.gateways.length;
  const radiusM = params.radiusKm * 1000;
  const clutter = params.clutter ?? null;
  const ordered = [...parts].sort((a, b) => a.gatewayIndex - b.gatewayIndex);
  const union = unionOf(ordered.map((part) => part.placement));
  const geoTransform = windowGeoTransform(raster, union);
  const res = raster.resolutionM;
  const cellArea = (row: number): number => {
    if (raster.crs.kind === 'projected') return Math.abs(geoTransform[1] * geoTransform[5]) / 1e6;
    const lat = raster.pixelToLonLat(union.x0 + 0.5, union.y0 + row + 0.5).lat;
    return (res.x * res.y * Math.cos((lat * Math.PI) / 180)) / Math.cos((((raster.boundsLonLat.south + raster.boundsLonLat.north) / 2) * Math.PI) / 180) / 1e6;
  };
  const placed: PlacedProducts[] = [];
  const inside = new Uint8Array(union.widthPx * union.heightPx);
  const discShares: number[] = [];
  for (const part of ordered) {
    const { placement, lossDb } = part;
    placed.push({ gatewayIndex: part.gatewayIndex, x0: placement.x0 - union.x0, y0: placement.y0 - union.y0, widthPx: placement.widthPx, heightPx: placement.heightPx, products: part.products, lossDb });
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
  }
  const composite = buildComposite(union.widthPx, union.heightPx, placed, params.targetMarginDb);
  const nodes = params.nodes.map((node) => {
    const p = raster.lonLatToPixel(node.lon, node.lat);
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
  mkdirSync(folder, { recursive: true });
  const base = { widthPx: union.widthPx, heightPx: union.heightPx, geoTransform, epsg: raster.crs.epsg, crsKind: raster.crs.kind, compression: 'deflate' as const, tiled: { tileSizePx: 256 } };
  const clean = (values: Float32Array) => {
    const out = new Float32Array(values.length);
    for (let i = 0; i < values.length; i++) out[i] = values[i] === values[i] ? values[i] : LOSS_NODATA;
    return out;
  };
  writeFileSync(join(folder, RESULT_FILES.margin), writeGeoTiff({ ...base, data: clean(composite.marginDb), noData: LOSS_NODATA }));
  writeFileSync(join(folder, RESULT_FILES.loss), writeGeoTiff({ ...base, data: clean(composite.lossDb), noData: LOSS_NODATA }));
  const redundancy = new Uint8Array(composite.redundancy.length);
  for (let i = 0; i < redundancy.length; i++) redundancy[i] = inside[i] ? composite.redundancy[i] : BYTE_NODATA;
  writeFileSync(join(folder, RESULT_FILES.redundancy), writeGeoTiff({ ...base, data: redundancy, noData: BYTE_NODATA }));
  writeFileSync(join(folder, RESULT_FILES.bestSf), writeGeoTiff({ ...base, data: composite.bestSf, noData: BYTE_NODATA }));
  writeFileSync(join(folder, RESULT_FILES.meta), JSON.stringify({ runId, union, geoTransform, epsg: raster.crs.epsg }));
  return summaryJson;
}
