// Use case: turning a coverage request into the parameters of a run. The node kit is
// resolved exactly as a node with that kit would be (the link engine's resolveNode:
// catalog, feedline, connectors, SFs the band plan allows for the payload, spread), the
// gateways as the link engine builds them, the earth factor from the plan's ΔN: so the
// margin of a cell is the margin a node link would have there.
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import type { NodeRow } from '../db/repositories/nodes.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { listNodes } from '../db/repositories/nodes.ts';
import { allTerrainLayers } from '../db/repositories/terrain-layers.ts';
import { CoverageInputError, windowFor } from '../coverage/terrain-window.ts';
import { medianEarthFactor } from '../planning/geometry.ts';
import { MIN_PATH_ANTENNA_HEIGHT_M } from '../planning/path.ts';
import type { AppliedCalibration } from '../planning/spread.ts';
import { CLUTTER_CLASSES, clutterHeightsByIndex, type ClutterClass } from '../terrain/clutter.ts';
import { openGeoRaster, type GeoRaster } from '../terrain/raster.ts';
import type { CoverageJobParams } from '../jobs/coverage-params.ts';
import { resolveStoredFile } from '../db/files.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import { AppError } from './errors.ts';
import { planContextFor } from './links.ts';

/** The kit a coverage map is drawn for: the same fields (and defaults) as a node's. */
export interface CoverageNodeKit {
  antennaDesignId: string;
  antennaHeightAglM: number;
  txPowerDbm: number;
  feedlineId?: string | null;
  feedlineLengthM?: number;
  environment?: 'outdoor' | 'indoor' | 'pit';
  payloadBytes?: number;
}

export interface CoverageRequest {
  gatewayIds?: string[];
  mode?: 'fast' | 'full';
  radiusKm: number;
  nodeKit?: Partial<CoverageNodeKit>;
  /** A fixed SF for every cell; default: the node SF rule. */
  sf?: number;
  targetMarginDb?: number;
  useClutter?: boolean;
}

/** A node's defaults (server/api/routes/nodes.ts and the Node columns). */
export const DEFAULT_COVERAGE_NODE_KIT: CoverageNodeKit = { antennaDesignId: 'helical-stub', antennaHeightAglM: 1.5, txPowerDbm: 14, feedlineId: null, feedlineLengthM: 0, environment: 'outdoor', payloadBytes: 12 };

/** Ceiling on the cells of one run's grid (EARSHOT_MAX_COVERAGE_CELLS, default 25 million). */
export function maxCoverageCells(env: NodeJS.ProcessEnv = process.env): number {
  const value = Number(env.EARSHOT_MAX_COVERAGE_CELLS ?? 25_000_000);
  return Number.isFinite(value) && value > 0 ? value : 25_000_000;
}

/** A terrain layer's raster, or null when its file cannot be read (the layer is passed over). */
async function openReadableRaster(path: string): Promise<GeoRaster | null> {
  try {
    return await openGeoRaster(path);
  } catch {
    return null;
  }
}

/** The parameters of a coverage run for `request` on `plan` (errors carry kinds; nothing is written). */
export async function resolveCoverageRequest(
  engine: LinkEngine,
  config: Config,
  plan: PlanRow,
  request: CoverageRequest,
  calibration?: AppliedCalibration | null,
): Promise<CoverageJobParams> {
  const db: Database = engine.database;
  const ctx = await planContextFor(engine, plan, calibration);
  const settings = ctx.settings;
  let gateways = ctx.gateways;
  if (request.gatewayIds) {
    const byId = new Map(ctx.gateways.map((g) => [g.row.id, g]));
    const missing = request.gatewayIds.filter((gid) => !byId.has(gid));
    if (missing.length > 0) throw new AppError('invalid_input', 'invalid_input', `gatewayIds: no gateway "${missing[0]}" in this plan`);
    gateways = request.gatewayIds.map((gid) => byId.get(gid)!);
  }
  if (gateways.length === 0) throw new AppError('unprocessable', 'no_gateways', 'the plan has no gateways to compute coverage for');
  const allLayers = await allTerrainLayers(db, plan.id);
  const layers = allLayers.filter((layer) => layer.kind === 'elevation');
  if (layers.length === 0) throw new AppError('unprocessable', 'no_terrain', 'the plan has no elevation terrain layer; upload a DEM first');
  const radiusM = request.radiusKm * 1000;
  const maxCells = maxCoverageCells();
  // The finest elevation layer under every gateway; a radius past its edge is clipped (NoData beyond).
  let chosen: { layer: (typeof layers)[number]; windowCells: number[] } | null = null;
  let firstProblem: CoverageInputError | null = null;
  for (const layer of layers) {
    const path = resolveStoredFile(config, layer.filePath);
    const raster = await openReadableRaster(path);
    if (!raster) continue;
    try {
      const windowCells = gateways.map((g) => {
        const w = windowFor(raster, { lat: g.row.lat, lon: g.row.lon, radiusM, maxCells, allowClip: true });
        return w.widthPx * w.heightPx;
      });
      const cells = windowCells.reduce((sum, n) => sum + n, 0);
      if (cells > maxCells * 4) throw new CoverageInputError('too_many_cells', `the run would compute ${cells} cells, above the ceiling of ${maxCells * 4}; use fewer gateways or a smaller radius`);
      chosen = { layer, windowCells };
      break;
    } catch (error) {
      if (!(error instanceof CoverageInputError)) throw error;
      if (!firstProblem || error.code === 'site_outside_terrain') firstProblem = error;
    } finally {
      await raster.close();
    }
  }
  if (!chosen) {
    const problem = firstProblem ?? new CoverageInputError('site_outside_terrain', 'no elevation layer of the plan can be read');
    throw new AppError(problem.code === 'too_many_cells' ? 'too_large' : 'unprocessable', problem.code, problem.message);
  }
  // The finest clutter layer under every gateway (earshot's class codes, like link checks); heights: P.1812-8 Table 2 + plan overrides.
  let clutter: CoverageJobParams['clutter'] = null;
  if (request.useClutter !== false) {
    const raw = plan.settings && typeof plan.settings === 'object' && !Array.isArray(plan.settings) ? (plan.settings as Record<string, unknown>) : {};
    const overrides: Partial<Record<ClutterClass, number>> = {};
    if (raw.clutterHeightsM && typeof raw.clutterHeightsM === 'object') {
      for (const [name, value] of Object.entries(raw.clutterHeightsM as Record<string, unknown>)) {
        if ((CLUTTER_CLASSES as readonly string[]).includes(name) && typeof value === 'number') overrides[name as ClutterClass] = value;
      }
    }
    let heightByClassM: number[];
    try {
      heightByClassM = Array.from(clutterHeightsByIndex(overrides));
    } catch (error) {
      throw new AppError('unprocessable', 'invalid_clutter_heights', `plan settings clutterHeightsM: ${(error as Error).message}`);
    }
    for (const layer of allLayers.filter((l) => l.kind === 'clutter')) {
      const path = resolveStoredFile(config, layer.filePath);
      const raster = await openReadableRaster(path);
      if (!raster) continue;
      try {
        const covers = gateways.every((g) => {
          const p = raster.lonLatToPixel(g.row.lon, g.row.lat);
          return p.x >= 0 && p.y >= 0 && p.x < raster.widthPx && p.y < raster.heightPx;
        });
        if (covers) {
          // The stored path (relative to the files folder): every worker resolves it in its own (shared) files folder.
          clutter = { layerId: layer.id, name: layer.name, path: layer.filePath, codes: 'earshot', heightByClassM };
          break;
        }
      } finally {
        await raster.close();
      }
    }
  }
  // The node kit, resolved as a node row with that kit would be (same catalog, SF and spread rules).
  const kit: CoverageNodeKit = { ...DEFAULT_COVERAGE_NODE_KIT, ...stripUndefined(request.nodeKit ?? {}) };
  const centre = gateways[0].row;
  const row = {
    id: 'coverage-node-kit',
    planId: plan.id,
    name: 'coverage node kit',
    lat: centre.lat,
    lon: centre.lon,
    deviceType: 'coverage',
    antennaDesignId: kit.antennaDesignId,
    antennaHeightAglM: kit.antennaHeightAglM,
    feedlineId: kit.feedlineId ?? null,
    feedlineLengthM: kit.feedlineLengthM ?? 0,
    mastOptionId: null,
    txPowerDbm: kit.txPowerDbm,
    sfPolicy: request.sf !== undefined ? 'fixed' : 'adaptive',
    fixedSf: request.sf ?? null,
    payloadBytes: kit.payloadBytes ?? 12,
    messagesPerHour: 1,
    environment: kit.environment ?? 'outdoor',
    buildingType: null,
    devEui: null,
    originId: null,
    installStatus: 'planned',
    notes: '',
    version: 1,
    createdAt: new Date(0),
    updatedAt: new Date(0),
  } satisfies NodeRow;
  const node = await engine.resolveNode(ctx, row).catch((error: unknown) => {
    // A bad kit id in the request is the caller's input.
    if (error instanceof AppError) throw new AppError('invalid_input', 'invalid_input', `nodeKit.${error.message}`);
    throw error;
  });
  const targetMarginDb = request.targetMarginDb ?? settings.targetMarginDb;
  const { bandPlan, ...radio } = node.radioSettings;
  const nodes = await allNodes(db, plan.id);
  return {
    mode: request.mode ?? 'fast',
    radiusKm: request.radiusKm,
    targetHeightM: Math.max(kit.antennaHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M),
    sf: request.sf ?? null,
    targetMarginDb,
    frequencyMhz: settings.frequencyMhz,
    kFactor: medianEarthFactor(settings.path.deltaN),
    p1812: { deltaN: settings.path.deltaN, n0: settings.path.n0, timePercent: settings.path.timePercent, polarisation: settings.path.polarization },
    budget: {
      nodeKit: node.kit,
      node: node.radio,
      radio: { ...radio, targetMarginDb, bandPlanId: bandPlan.id },
      nodeAntennaHeightAglM: kit.antennaHeightAglM,
      method: settings.path.method,
      deltaN: settings.path.deltaN,
    },
    // As stored (relative to the files folder): a worker on another machine resolves it in its own mount of the shared folder.
    terrainPath: chosen.layer.filePath,
    terrainLayerId: chosen.layer.id,
    clutter,
    gateways: gateways.map((g) => ({ id: g.row.id, name: g.row.name, lat: g.row.lat, lon: g.row.lon, heightAglM: g.row.antennaHeightAglM, kit: g.kit, radio: g.radio })),
    windowCells: chosen.windowCells,
    nodes: nodes.map((n) => ({ id: n.id, name: n.name, lat: n.lat, lon: n.lon })),
  };
}

function stripUndefined<T extends object>(value: T): Partial<T> {
  return Object.fromEntries(Object.entries(value).filter(([, v]) => v !== undefined)) as Partial<T>;
}

async function allNodes(db: Database, planId: string): Promise<NodeRow[]> {
  const out: NodeRow[] = [];
  let cursor: string | undefined;
  for (;;) {
    const page = await listNodes(db, planId, { limit: 1000, cursor });
    out.push(...page.items);
    if (!page.next) return out;
    cursor = page.next;
  }
}
