// The link engine the routes and the CLI share: loads a plan's nodes,
// gateways, kit and terrain through the server/db repositories (never Prisma
// directly), asks the pure rooms (terrain → planning → propagation/radio) for
// predictions, spreads cold fleet paths over the link worker pool
// (./link-pool.ts), and keeps the Link cache.
// Same numbers everywhere: the API routes (server/api/routes/links.ts) and
// `earshot link` (server/cli/links.ts) both call this class.
import type { Config } from '../config.ts';
import { AppError } from '../app/errors.ts';
import { resolveStoredFile } from '../db/files.ts';
import { changeStamp, GenerationMemo } from '../db/change-feed.ts';
import type { Database } from '../db/client.ts';
import { NotFoundError } from '../db/errors.ts';
import type { GatewayRow } from '../db/repositories/gateways.ts';
import { findNode, type NodeRow } from '../db/repositories/nodes.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { findAntennaDesignForTeam, findFeedlineForTeam } from '../db/repositories/kit.ts';
import { nodeLinkFingerprint, listGatewaysForLinks, listNodeLinkRows, listLinkRowsForNodes, listNodesForLinks, listLinkPathHashesForNodes, listTerrainForLinks, saveLinkRows, type LinkRow } from '../db/repositories/links.ts';
import type { AntennaDesign } from '../radio/antennas.ts';
import { connectorLossDb, findConnector, type ConnectorUse, type FeedlineType } from '../radio/feedlines.ts';
import type { BuildingType } from '../radio/building-entry-loss.ts';
import { openTerrainStore, type TerrainStore } from '../terrain/store.ts';
import { computeLinkPath, linkProfile, type LinkProfile } from '../planning/link-path.ts';
import { LinkPathPool, type LinkPathPair, type LinkTerrainSpec } from './link-pool.ts';
import type { EndKit, GatewayRadio, LinkRadioSettings, LinkResult, NodeRadio } from '../planning/link.ts';
import { hashOf, hashOfShared, LINK_ENGINE_VERSION, nodeAimAzimuthDeg, nodeLinkResults, summariseNodeLinks, type NodeLinkSummary } from '../planning/node-links.ts';
import { newPathScratch, type PathPrediction } from '../planning/path.ts';
import { packPath, unpackPath } from '../planning/path-pack.ts';
import { resolveLinkSettings, sfsCarrying, type ResolvedLinkSettings } from '../planning/settings.ts';
import type { AppliedCalibration } from '../planning/spread.ts';
import { findAppliedCalibration } from '../db/repositories/calibrations.ts';
import { bearingsBetween, isWithinDistanceM } from '../planning/geometry.ts';

/** A node → gateway pair as the fleet's first pass measured it: distance, and the path hash when within range. */
export interface PairKey {
  distanceM: number;
  pathHash: string | null;
}

/** Connectors assumed in a node's feedline run: two mated N/SMA pairs (common practice, 0.1 dB each). */
const NODE_CONNECTORS = [{ id: 'n-type', count: 2 }];
/** At a gateway: two mated N pairs and an inline surge arrestor (common practice). */
const GATEWAY_CONNECTORS = [
  { id: 'n-type', count: 2 },
  { id: 'surge-arrestor', count: 1 },
];

function connectorUses(list: ReadonlyArray<{ id: string; count: number }>): ConnectorUse[] {
  return list.map((entry) => ({ connector: findConnector(entry.id), count: entry.count }));
}

/** Raised for input the caller must fix (unknown kit id, bad override); the API maps its kind to a status. */
export class LinkInputError extends AppError {}

/** Kit overrides a preview may pass instead of the node's saved kit. */
export interface KitOverrides {
  antennaDesignId?: string;
  antennaHeightAglM?: number;
  feedlineId?: string | null;
  feedlineLengthM?: number;
}

interface GatewayContext {
  row: GatewayRow;
  kit: EndKit;
  radio: GatewayRadio;
  kitHash: string;
  antenna: AntennaDesign;
  feedline: FeedlineType;
}

/** Everything about a plan a link needs, loaded once per request / CLI run. */
export interface PlanContext {
  plan: PlanRow;
  teamId: string;
  settings: ResolvedLinkSettings;
  gateways: GatewayContext[];
  terrain: TerrainStore | null;
  /** What a worker thread needs to open the same terrain (null without terrain). */
  terrainSpec: LinkTerrainSpec | null;
  terrainSignature: string;
  /** Hash of everything path-related that is plan-wide (method, refractivity, terrain...). */
  pathSettingsHash: string;
  /** Hash of everything budget-related that is plan-wide. */
  radioSettingsHash: string;
  antennaCache: Map<string, Promise<AntennaDesign>>;
  feedlineCache: Map<string, Promise<FeedlineType>>;
  /** Hashes of catalog objects, by reference. */
  objectHashes: WeakMap<object, string>;
  warnings: string[];
}

export interface ResolvedNode {
  row: NodeRow;
  antennaHeightAglM: number;
  kit: EndKit;
  radio: NodeRadio;
  radioSettings: LinkRadioSettings;
  antenna: AntennaDesign;
  feedline: FeedlineType | null;
  kitHash: string;
  warnings: string[];
}

export interface NodeLinksOutcome extends NodeLinkSummary {
  node: ResolvedNode;
  /** Paths by gateway id (for the check view and the recommendation). */
  paths: Map<string, PathPrediction>;
  computed: number;
  cached: number;
  outOfRange: Array<{ gatewayId: string; distanceM: number }>;
}

/**
 * What a Link row keeps: the path hash in its JSON result and the predicted path packed into
 * its bytes (server/planning/path-pack.ts; a path the layout cannot hold stays JSON in the
 * result). The fleet table rebuilds every budget from the path (microseconds), so nothing
 * else is stored. Rows written before the packed form ({pathHash, path, summary}) stay readable.
 */
interface StoredLinkJson {
  pathHash: string;
  path?: PathPrediction;
}

/** The stored path of a cached row when it was predicted for `pathHash`, else null. */
function storedPath(row: LinkRow | undefined, pathHash: string): PathPrediction | null {
  const result = row?.result as StoredLinkJson | null | undefined;
  if (!row || !result || typeof result !== 'object' || result.pathHash !== pathHash) return null;
  if (row.packed) return unpackPath(row.packed);
  return result.path && typeof result.path === 'object' ? result.path : null;
}

/** Whether a cached row holds a usable path at all. */
function hasStoredPath(row: LinkRow): boolean {
  const result = row.result as StoredLinkJson | null;
  return !!result && typeof result === 'object' && typeof result.pathHash === 'string' && (!!row.packed || (!!result.path && typeof result.path === 'object'));
}

/** The cache row of one pair: the packed path, or the path in the JSON when the layout cannot hold it. */
function linkRowOf(nodeId: string, gatewayId: string, inputHash: string, pathHash: string, path: PathPrediction): LinkRow {
  const packed = packPath(path);
  return packed ? { nodeId, gatewayId, inputHash, result: { pathHash } satisfies StoredLinkJson, packed } : { nodeId, gatewayId, inputHash, result: { pathHash, path } satisfies StoredLinkJson, packed: null };
}

function buildingTypeOf(value: string | null, fallback: BuildingType): BuildingType {
  return value === 'traditional' || value === 'thermally-efficient' ? value : fallback;
}

/** Node kit hashes by their per-node inputs, per resolved settings object (see resolveNode). */
const kitHashes = new WeakMap<ResolvedLinkSettings, Map<string, string>>();

function kitHashMemo(settings: ResolvedLinkSettings): Map<string, string> {
  let memo = kitHashes.get(settings);
  if (!memo) {
    memo = new Map();
    kitHashes.set(settings, memo);
  }
  return memo;
}

/** Cold paths below this count are predicted in-thread (starting workers would cost more). */
const MIN_POOL_PAIRS = 8;
/** Nodes per group of the fleet table's cold paths (see fleet()). */
const FLEET_GROUP_NODES = 100;

export interface LinkEngineOptions {
  /**
   * Worker threads for cold fleet paths (default config.workerCount, i.e.
   * EARSHOT_WORKERS or every core); 0 or 1 = predict every path in-thread.
   */
  workers?: number;
}

/** One catalog lookup per id and plan context; a failed lookup is forgotten so it can be retried. */
function cachedLookup<T>(cache: Map<string, Promise<T>>, id: string, load: () => Promise<T>): Promise<T> {
  let found = cache.get(id);
  if (!found) {
    found = load();
    found.catch(() => cache.delete(id));
    cache.set(id, found);
  }
  return found;
}

export class LinkEngine {
  private readonly stores = new Map<string, { signature: string; spec: LinkTerrainSpec; store: Promise<TerrainStore> }>();
  private readonly pool: LinkPathPool | null;
  /** P.1812 scratch for paths predicted in this thread (see PathScratch). */
  private readonly scratch = newPathScratch();
  /** Answers of recent node-links requests by plan:node, with the inputs' fingerprint (see frontKey). */
  private readonly front = new Map<string, { key: string; value: unknown }>();
  /** Fingerprints of frontKey, valid for one generation of the database's change feed. */
  private readonly frontKeys = new GenerationMemo<string>();

  constructor(
    private readonly db: Database,
    private readonly config: Config,
    options: LinkEngineOptions = {},
  ) {
    const workers = options.workers ?? config.workerCount;
    this.pool = workers >= 2 ? new LinkPathPool(workers) : null;
  }

  /** Worker threads the engine spreads cold fleet paths over (0 = in-thread). */
  get workerCount(): number {
    return this.pool?.size ?? 0;
  }

  /** Fingerprint of a node's inputs: the plan row's version/time plus one query over the rest. */
  async frontKey(plan: PlanRow, nodeId: string, given?: AppliedCalibration | null): Promise<string> {
    // The two queries below run once per generation of the change feed (any committed write
    // to a plan, node, gateway, kit, terrain or calibration table moves it, in any process).
    const stamp = changeStamp(this.db);
    const memoKey = `${plan.id}:${nodeId}:${plan.version}:${plan.updatedAt.getTime()}:${given === undefined ? 'applied' : given ? hashOf(given) : '-'}`;
    const memoised = this.frontKeys.get(memoKey, stamp);
    if (memoised !== undefined) return memoised;
    const calibration = given !== undefined ? given : await this.appliedCalibration(plan.id);
    const rest = await nodeLinkFingerprint(this.db, plan.id, nodeId, plan.teamId);
    const key = `${LINK_ENGINE_VERSION}|${plan.version}|${plan.updatedAt.toISOString()}|${calibration ? hashOf(calibration) : '-'}|${rest}`;
    this.frontKeys.set(memoKey, stamp, key);
    return key;
  }

  /** A remembered answer whose inputs are unchanged, or undefined. */
  frontGet<T>(planId: string, nodeId: string, key: string): T | undefined {
    const entry = this.front.get(`${planId}:${nodeId}`);
    return entry && entry.key === key ? (entry.value as T) : undefined;
  }

  frontSet(planId: string, nodeId: string, key: string, value: unknown): void {
    const id = `${planId}:${nodeId}`;
    this.front.delete(id);
    this.front.set(id, { key, value });
    if (this.front.size > 5000) this.front.delete(this.front.keys().next().value as string);
  }

  /** Resolves when the worker threads (if any) have loaded and answered once: start-up is over. */
  async workersReady(): Promise<void> {
    await this.pool?.ready();
  }

  /** Closes the terrain stores this engine opened. */
  async close(): Promise<void> {
    const stores = [...this.stores.values()];
    this.stores.clear();
    await this.pool?.close();
    await Promise.all(stores.map(async (entry) => (await entry.store.catch(() => null))?.close()));
  }

  private async terrainFor(plan: PlanRow, clutterHeightsM: Record<string, number> | undefined): Promise<{ store: TerrainStore | null; spec: LinkTerrainSpec | null; signature: string }> {
    const layers = await listTerrainForLinks(this.db, plan.id);
    const signature = hashOf({ layers: layers.map((l) => [l.id, l.sha256, l.priority, l.createdAt.toISOString(), l.kind]), clutterHeightsM: clutterHeightsM ?? null });
    if (layers.length === 0 || !layers.some((layer) => layer.kind === 'elevation')) return { store: null, spec: null, signature };
    const existing = this.stores.get(plan.id);
    if (existing && existing.signature === signature) return { store: await existing.store, spec: existing.spec, signature };
    if (existing) {
      this.stores.delete(plan.id);
      void existing.store.then((store) => store.close()).catch(() => undefined);
    }
    // Finest layers first: the store lets a finer layer win where layers overlap.
    const ordered = [...layers].sort((a, b) => (a.kind === b.kind ? a.resolutionM - b.resolutionM : a.kind === 'elevation' ? -1 : 1));
    const spec: LinkTerrainSpec = {
      signature,
      files: ordered.map((layer) => ({ path: resolveStoredFile(this.config, layer.filePath), kind: layer.kind, name: layer.name })),
      options: { cacheBytes: 64 * 1024 * 1024, clutterHeightsM },
    };
    const store = openTerrainStore(spec.files, spec.options);
    this.stores.set(plan.id, { signature, spec, store });
    if (this.stores.size > 8) {
      const [oldestId, oldest] = this.stores.entries().next().value as [string, { store: Promise<TerrainStore> }];
      this.stores.delete(oldestId);
      void oldest.store.then((s) => s.close()).catch(() => undefined);
    }
    try {
      return { store: await store, spec, signature };
    } catch (error) {
      this.stores.delete(plan.id);
      throw new LinkInputError('unprocessable', 'terrain_unreadable', `the plan's terrain could not be opened: ${(error as Error).message}`);
    }
  }

  private antenna(ctx: Pick<PlanContext, 'antennaCache' | 'teamId'>, id: string): Promise<AntennaDesign> {
    return cachedLookup(ctx.antennaCache, id, () => findAntennaDesignForTeam(this.db, ctx.teamId, id));
  }

  /** The calibration applied to a plan, as the spread resolver takes it (null = none). */
  private async appliedCalibration(planId: string): Promise<AppliedCalibration | null> {
    const row = await findAppliedCalibration(this.db, planId);
    return row ? { id: row.id, biasDb: row.biasDb, sigmaDb: row.sigmaDb } : null;
  }

  private feedline(ctx: Pick<PlanContext, 'feedlineCache' | 'teamId'>, id: string): Promise<FeedlineType> {
    return cachedLookup(ctx.feedlineCache, id, () => findFeedlineForTeam(this.db, ctx.teamId, id));
  }

  /**
   * Loads a plan's settings, gateways and terrain. `options.calibration`: the plan's applied
   * calibration (fitted spread and bias); it enters every link's budget and the cache hash.
   * Left out, the calibration applied to the plan (server/db/repositories/calibrations.ts) is
   * used, so every caller (links, coverage, siting, capacity, reports) gets the same figures;
   * null asks for the model as is (the calibration fit compares readings with that).
   */
  async planContext(plan: PlanRow, options: { calibration?: AppliedCalibration | null } = {}): Promise<PlanContext> {
    // Workers start with the first plan a process touches and stay (unref'd) for the next fleet.
    this.pool?.warm();
    const calibration = options.calibration !== undefined ? options.calibration : await this.appliedCalibration(plan.id);
    const settings = resolveLinkSettings(plan, { calibration });
    const raw = plan.settings && typeof plan.settings === 'object' && !Array.isArray(plan.settings) ? (plan.settings as Record<string, unknown>) : {};
    const clutterHeightsM = raw.clutterHeightsM && typeof raw.clutterHeightsM === 'object' ? (raw.clutterHeightsM as Record<string, number>) : undefined;
    const { store, spec, signature } = await this.terrainFor(plan, clutterHeightsM);
    const ctx: PlanContext = {
      plan,
      teamId: plan.teamId,
      settings,
      gateways: [],
      terrain: store,
      terrainSpec: spec,
      terrainSignature: signature,
      pathSettingsHash: hashOf({ v: LINK_ENGINE_VERSION, path: settings.path, terrain: signature, step: settings.profileStepM, interpolation: settings.profileInterpolation }),
      radioSettingsHash: '',
      antennaCache: new Map(),
      feedlineCache: new Map(),
      objectHashes: new WeakMap(),
      warnings: [...settings.warnings],
    };
    const { bandPlan: _bandPlan, warnings: _w, path: _p, ...radioPart } = settings;
    ctx.radioSettingsHash = hashOf({ v: LINK_ENGINE_VERSION, bandPlanId: settings.bandPlan.id, radio: radioPart });
    if (!store) ctx.warnings.push('no elevation layer in this plan: paths are predicted over a smooth earth at 0 m (upload terrain for real predictions)');
    const gatewayRows = await listGatewaysForLinks(this.db, plan.id);
    for (const row of gatewayRows) {
      let gateway: GatewayContext;
      try {
        gateway = await this.gatewayContext(ctx, row);
      } catch (error) {
        if (error instanceof NotFoundError) {
          ctx.warnings.push(`gateway ${row.name}: ${error.message}; left out of the predictions`);
          continue;
        }
        throw error;
      }
      ctx.gateways.push(gateway);
    }
    return ctx;
  }

  /**
   * A gateway row (saved, or one that exists only as a siting candidate) with
   * its kit resolved from the catalog; throws NotFoundError for an unknown kit id.
   */
  async gatewayContext(ctx: PlanContext, row: GatewayRow): Promise<GatewayContext> {
    const antenna = await this.antenna(ctx, row.antennaDesignId);
    const feedline = await this.feedline(ctx, row.feedlineId);
    // A directional gateway antenna points where the row says (degrees from true north);
    // null = omni, or aimed at each node (the link budget then takes the path's bearing).
    // The aim enters the kit hash only when set, so cached omni rows stay valid.
    const boresightAzimuthDeg = row.antennaAzimuthDeg ?? null;
    const kit: EndKit = { antenna, boresightAzimuthDeg, feedline, feedlineLengthM: row.feedlineLengthM, connectors: row.feedlineLengthM > 0 ? connectorUses(GATEWAY_CONNECTORS) : [] };
    const radio: GatewayRadio = { noiseFigureDb: row.noiseFigureDb };
    return { row, kit, radio, antenna, feedline, kitHash: hashOf({ a: hashOfShared(antenna, ctx.objectHashes), f: hashOfShared(feedline, ctx.objectHashes), length: row.feedlineLengthM, c: kit.connectors.map((u) => [u.connector.id, u.connector.lossDb, u.count]), radio, az: boresightAzimuthDeg ?? undefined }) };
  }

  /** The node with its kit (saved, or overridden for a preview) resolved from the catalog. */
  async resolveNode(ctx: PlanContext, row: NodeRow, overrides: KitOverrides = {}): Promise<ResolvedNode> {
    const warnings: string[] = [];
    const antennaId = overrides.antennaDesignId ?? row.antennaDesignId;
    const feedlineId = overrides.feedlineId !== undefined ? overrides.feedlineId : row.feedlineId;
    const feedlineLengthM = overrides.feedlineLengthM ?? row.feedlineLengthM;
    const antennaHeightAglM = overrides.antennaHeightAglM ?? row.antennaHeightAglM;
    let antenna: AntennaDesign;
    try {
      antenna = await this.antenna(ctx, antennaId);
    } catch (error) {
      if (error instanceof NotFoundError) throw new LinkInputError(overrides.antennaDesignId ? 'invalid_input' : 'unprocessable', 'invalid_input', `antennaDesignId: no antenna design "${antennaId}" in the catalog`);
      throw error;
    }
    let feedline: FeedlineType | null = null;
    if (feedlineId) {
      try {
        feedline = await this.feedline(ctx, feedlineId);
      } catch (error) {
        if (error instanceof NotFoundError) throw new LinkInputError(overrides.feedlineId ? 'invalid_input' : 'unprocessable', 'invalid_input', `feedlineId: no feedline "${feedlineId}" in the catalog`);
        throw error;
      }
    }
    const f = ctx.settings.frequencyMhz;
    if (f < antenna.bandMhz.fromMhz || f > antenna.bandMhz.toMhz) {
      warnings.push(`antenna ${antenna.name} is made for ${antenna.bandMhz.fromMhz}–${antenna.bandMhz.toMhz} MHz, the plan uses ${f} MHz: expect a poor match`);
    }
    const kit: EndKit = {
      antenna,
      boresightAzimuthDeg: null,
      feedline,
      feedlineLengthM: feedline ? feedlineLengthM : 0,
      connectors: feedline && feedlineLengthM > 0 ? connectorUses(NODE_CONNECTORS) : [],
    };
    const settings = ctx.settings;
    const payloadBytes = row.payloadBytes;
    let allowed = sfsCarrying(settings.uplinkSfs, payloadBytes);
    if (allowed.length === 0) {
      warnings.push(`a ${payloadBytes}-byte payload exceeds every data rate's limit in ${settings.bandPlan.name}; predicting at every SF anyway`);
      allowed = settings.uplinkSfs.map((entry) => entry.sf);
    } else if (allowed.length < settings.uplinkSfs.length) {
      const dropped = settings.uplinkSfs.filter((entry) => !allowed.includes(entry.sf)).map((entry) => `SF${entry.sf}`);
      warnings.push(`${dropped.join(', ')} cannot carry a ${payloadBytes}-byte payload under ${settings.bandPlan.name} (LoRaWAN maximum payload per data rate)`);
    }
    if (row.sfPolicy === 'fixed' && row.fixedSf !== null && !allowed.includes(row.fixedSf)) {
      warnings.push(`fixed SF${row.fixedSf} is not among the uplink SFs the band plan allows for this payload`);
    }
    const radio: NodeRadio = {
      txPowerDbm: row.txPowerDbm,
      phyPayloadBytes: payloadBytes + settings.framingOverheadBytes,
      sfPolicy: row.sfPolicy,
      fixedSf: row.fixedSf,
      environment: row.environment,
    };
    const radioSettings: LinkRadioSettings = {
      frequencyMhz: f,
      bandwidthKhz: settings.bandwidthKhz,
      codingRate: settings.codingRate,
      preambleSymbols: settings.preambleSymbols,
      allowedSfs: allowed,
      bandPlan: settings.bandPlan,
      targetMarginDb: settings.targetMarginDb,
      spread: settings.spread,
      environment: { indoorBuildingType: buildingTypeOf(row.buildingType, settings.environment.indoorBuildingType), pitExtraLossDb: settings.environment.pitExtraLossDb, pitSigmaDb: settings.environment.pitSigmaDb },
    };
    const a = hashOfShared(antenna, ctx.objectHashes);
    const fh = feedline ? hashOfShared(feedline, ctx.objectHashes) : null;
    const c = kit.connectors.map((u) => [u.connector.id, u.connector.lossDb, u.count]);
    const indoorBuildingType = radioSettings.environment.indoorBuildingType;
    // The hash below is a function of the plan-wide settings (one object per context) and these
    // per-node values alone, so nodes alike share one hash: 5,000 nodes no longer serialise the
    // settings' spread and environment 5,000 times (JSON.stringify keeps every value apart that
    // stableJson would: both write numbers the same way).
    const memoKey = JSON.stringify([a, fh, kit.feedlineLengthM, c, radio.txPowerDbm, radio.phyPayloadBytes, radio.sfPolicy, radio.fixedSf, radio.environment, allowed, indoorBuildingType]);
    const memo = kitHashMemo(settings);
    let kitHash = memo.get(memoKey);
    if (kitHash === undefined) {
      const { bandPlan: _plan, ...radioPart } = radioSettings;
      kitHash = hashOf({ a, f: fh, length: kit.feedlineLengthM, c, radio, radioPart });
      memo.set(memoKey, kitHash);
    }
    return { row, antennaHeightAglM, kit, radio, radioSettings, antenna, feedline, kitHash, warnings };
  }

  /** The terrain profile node → gateway (smooth earth at 0 m without terrain). */
  async profile(ctx: PlanContext, from: { lat: number; lon: number }, to: { lat: number; lon: number }): Promise<LinkProfile> {
    return linkProfile(ctx.terrain, ctx.settings, from, to);
  }

  /** Key of a node → gateway path in the cache and in `precomputed` maps. */
  pathHash(ctx: PlanContext, node: ResolvedNode, gateway: GatewayContext): string {
    return hashOf({
      s: ctx.pathSettingsHash,
      n: [node.row.lat, node.row.lon, node.antennaHeightAglM],
      g: [gateway.row.lat, gateway.row.lon, gateway.row.antennaHeightAglM],
    });
  }

  private computePath(ctx: PlanContext, node: ResolvedNode, gateway: GatewayContext): Promise<PathPrediction> {
    return computeLinkPath(ctx.terrain, ctx.settings, pathEnd(node.row, node.antennaHeightAglM), pathEnd(gateway.row, gateway.row.antennaHeightAglM), this.scratch);
  }

  /**
   * Paths of many pairs: on the worker threads when the engine has them and
   * there are enough, else in-thread; the same function either way.
   */
  async computePaths(ctx: PlanContext, pairs: readonly LinkPathPair[]): Promise<PathPrediction[]> {
    if (this.pool && pairs.length >= MIN_POOL_PAIRS) return this.pool.computePaths(ctx.terrainSpec, ctx.settings, pairs);
    const paths: PathPrediction[] = [];
    for (const pair of pairs) paths.push(await computeLinkPath(ctx.terrain, ctx.settings, pair.node, pair.gateway, this.scratch));
    return paths;
  }

  /**
   * A node's links to every gateway within range, from the cache where the
   * inputs are unchanged. `save` false (previews) leaves the cache untouched.
   */
  async nodeLinks(ctx: PlanContext, node: ResolvedNode, cachedRows: readonly LinkRow[] | null, save: boolean, precomputed?: ReadonlyMap<string, PathPrediction>, pairs?: ReadonlyMap<string, PairKey>): Promise<{ outcome: NodeLinksOutcome; toSave: LinkRow[] }> {
    const rows = cachedRows ?? (await listNodeLinkRows(this.db, ctx.plan.id, node.row.id));
    const byGateway = new Map(rows.map((row) => [row.gatewayId, row]));
    const inRange: Array<{ gateway: GatewayContext; path: PathPrediction; pathHash: string; row: LinkRow | undefined }> = [];
    const outOfRange: Array<{ gatewayId: string; distanceM: number }> = [];
    let computed = 0;
    let cached = 0;
    for (const gateway of ctx.gateways) {
      const known = pairs?.get(gateway.row.id);
      const distanceM = known ? known.distanceM : bearingsBetween(node.row.lat, node.row.lon, gateway.row.lat, gateway.row.lon).distanceM;
      if (distanceM > ctx.settings.maxLinkRangeM) {
        outOfRange.push({ gatewayId: gateway.row.id, distanceM });
        continue;
      }
      const pathHash = known?.pathHash ?? this.pathHash(ctx, node, gateway);
      const row = byGateway.get(gateway.row.id);
      const path = storedPath(row, pathHash) ?? precomputed?.get(pathHash) ?? (await this.computePath(ctx, node, gateway));
      inRange.push({ gateway, path, pathHash, row });
    }
    const { aim, links } = this.budgets(node, inRange);
    const toSave: LinkRow[] = [];
    for (let e = 0; e < inRange.length; e++) {
      const entry = inRange[e];
      // The input hash only matters for the cache: skipped for previews with no row to compare.
      if (!save && !entry.row) {
        computed++;
        continue;
      }
      const inputHash = hashOf({ p: entry.pathHash, n: node.kitHash, g: entry.gateway.kitHash, r: ctx.radioSettingsHash, aim });
      if (entry.row && entry.row.inputHash === inputHash && hasStoredPath(entry.row)) {
        cached++;
        continue;
      }
      computed++;
      if (save) toSave.push(linkRowOf(node.row.id, entry.gateway.row.id, inputHash, entry.pathHash, entry.path));
    }
    const summary = summariseNodeLinks(links, { targetMarginDb: ctx.settings.targetMarginDb, targetDelivery: ctx.settings.targetDelivery }, ctx.settings.gatewayCorrelation);
    const paths = new Map(inRange.map((entry) => [entry.gateway.row.id, entry.path]));
    // Fields written out, not spread (see linkBudget in server/planning/link.ts).
    const outcome: NodeLinksOutcome = { links: summary.links, combinedDeliveryProbability: summary.combinedDeliveryProbability, status: summary.status, bestGatewayId: summary.bestGatewayId, bestMarginDb: summary.bestMarginDb, node, paths, computed, cached, outOfRange };
    return { outcome, toSave };
  }

  /**
   * The budgets of one node over its paths, the aim of a directional node antenna fixed once at
   * its best path (the link table's rule): the one place nodeLinks and linksOverPaths share.
   */
  private budgets(node: ResolvedNode, inRange: ReadonlyArray<{ gateway: GatewayContext; path: PathPrediction }>): { aim: number | null; links: LinkResult[] } {
    const aim = nodeAimAzimuthDeg(node.kit, inRange);
    const kit = aim === null ? node.kit : { ...node.kit, boresightAzimuthDeg: aim };
    const links: LinkResult[] = [];
    for (const entry of inRange) {
      // The budget over a known path costs microseconds, so a Link row keeps the path (the
      // expensive part) and a summary; the full result is rebuilt from them, identically.
      const [link] = nodeLinkResults(kit, node.radio, [{ gatewayId: entry.gateway.row.id, path: entry.path, kit: entry.gateway.kit, radio: entry.gateway.radio }], node.radioSettings);
      links.push(link);
    }
    return { aim, links };
  }

  /**
   * A node's links over paths the caller already has (one per gateway, in range by the caller's
   * rule): the same budgets as nodeLinks, with no cache, no hashing and no range check. The
   * siting matrix calls it per node over its in-range candidates.
   */
  linksOverPaths(node: ResolvedNode, entries: ReadonlyArray<{ gateway: GatewayContext; path: PathPrediction }>): LinkResult[] {
    return this.budgets(node, entries).links;
  }

  /** One node's links (saved to the cache unless it is a preview with overrides). */
  async linksForNode(ctx: PlanContext, nodeId: string, overrides: KitOverrides = {}): Promise<NodeLinksOutcome> {
    const row = await findNode(this.db, ctx.plan.id, nodeId);
    if (!row) throw new LinkInputError('not_found', 'not_found', 'node not found');
    const preview = Object.values(overrides).some((value) => value !== undefined);
    const node = await this.resolveNode(ctx, row, overrides);
    const { outcome, toSave } = await this.nodeLinks(ctx, node, null, !preview);
    if (toSave.length > 0) await saveLinkRows(this.db, ctx.plan.id, toSave);
    return outcome;
  }

  /** Every node of the plan (the fleet table), computing what the cache lacks. */
  async fleet(ctx: PlanContext, onProgress?: (done: number, total: number) => void): Promise<NodeLinksOutcome[]> {
    const outcomes: NodeLinksOutcome[] = [];
    await this.fleetEach(ctx, (outcome) => void outcomes.push(outcome), onProgress);
    return outcomes;
  }

  /**
   * The fleet one node at a time, in the fleet table's order: `visit` sees each node's
   * outcome and the engine keeps none of them, so a caller that only needs figures
   * (the report, the exports) never holds 5,000 outcomes with their paths at once.
   * The cached rows are read a page of nodes at a time (only their path hashes up front);
   * the same results and cache writes as fleet(). Returns the number of nodes.
   */
  async fleetEach(ctx: PlanContext, visit: (outcome: NodeLinksOutcome) => void | Promise<void>, onProgress?: (done: number, total: number) => void): Promise<number> {
    const nodes = await listNodesForLinks(this.db, ctx.plan.id);
    // The stored path hashes are read a group of nodes at a time (not the plan's 15,000 rows at
    // once, which stayed alive through the whole of step 1 and were promoted with it).
    let storedHashes = new Map<string, Map<string, string | null>>();
    // 1. Resolve every node and collect the paths the cache lacks (one per path hash),
    //    in groups of nodes so budgets and cache writes of one group overlap the
    //    workers' paths of the next.
    // Each node's pairs as step 1 measured them (distance, path hash), so step 3 does not
    // measure and hash every pair a second time. The resolved node itself is not kept: step 3
    // resolves it again (the catalog lookups and kit hash are memoised per context), so 5,000
    // resolved kits are not held, and promoted, through the whole pass.
    const resolved: Array<{ row: NodeRow; pairs: Map<string, PairKey> } | { broken: NodeRow; message: string } | null> = [];
    const groups: Array<Map<string, LinkPathPair>> = [];
    const seen = new Set<string>();
    for (let r = 0; r < nodes.length; r++) {
      const row = nodes[r];
      if (r % FLEET_GROUP_NODES === 0) {
        storedHashes = new Map();
        for (const stored of await listLinkPathHashesForNodes(this.db, ctx.plan.id, nodes.slice(r, r + FLEET_GROUP_NODES).map((n) => n.id))) {
          const byGateway = storedHashes.get(stored.nodeId);
          if (byGateway) byGateway.set(stored.gatewayId, stored.pathHash);
          else storedHashes.set(stored.nodeId, new Map([[stored.gatewayId, stored.pathHash]]));
        }
      }
      let node: ResolvedNode;
      try {
        node = await this.resolveNode(ctx, row);
      } catch (error) {
        if (!(error instanceof LinkInputError)) throw error;
        resolved.push({ broken: row, message: error.message });
        continue;
      }
      const group = Math.floor(resolved.length / FLEET_GROUP_NODES);
      const pairs = new Map<string, PairKey>();
      resolved.push({ row, pairs });
      const stored = storedHashes.get(row.id);
      for (const gateway of ctx.gateways) {
        const distanceM = bearingsBetween(row.lat, row.lon, gateway.row.lat, gateway.row.lon).distanceM;
        if (distanceM > ctx.settings.maxLinkRangeM) {
          pairs.set(gateway.row.id, { distanceM, pathHash: null });
          continue;
        }
        const pathHash = this.pathHash(ctx, node, gateway);
        pairs.set(gateway.row.id, { distanceM, pathHash });
        if (stored?.get(gateway.row.id) === pathHash || seen.has(pathHash)) continue;
        seen.add(pathHash);
        (groups[group] ??= new Map()).set(pathHash, { node: pathEnd(row, node.antennaHeightAglM), gateway: pathEnd(gateway.row, gateway.row.antennaHeightAglM) });
      }
    }
    storedHashes.clear();
    // 2. The cold paths: every group queued on the worker threads at once (in-thread: one group at a time).
    const precomputed = new Map<string, PathPrediction>();
    const runGroup = async (g: number): Promise<void> => {
      const missing = groups[g];
      if (!missing) return;
      const paths = await this.computePaths(ctx, [...missing.values()]);
      let k = 0;
      for (const hash of missing.keys()) precomputed.set(hash, paths[k++]);
    };
    const groupCount = Math.ceil(resolved.length / FLEET_GROUP_NODES);
    const queued: Array<Promise<void>> = [];
    if (this.pool && seen.size >= MIN_POOL_PAIRS) {
      for (let g = 0; g < groupCount; g++) {
        const work = runGroup(g);
        work.catch(() => undefined); // awaited in order below; this only keeps a later failure from being reported as unhandled first
        queued.push(work);
      }
    }
    // 3. Budgets in-thread, a group at a time with that group's cached rows; cache rows written in batches.
    let pending: LinkRow[] = [];
    let byNode = new Map<string, LinkRow[]>();
    const total = resolved.length;
    for (let i = 0; i < total; i++) {
      if (i % FLEET_GROUP_NODES === 0) {
        const g = i / FLEET_GROUP_NODES;
        await (queued[g] ?? runGroup(g));
        const ids: string[] = [];
        for (let k = i; k < Math.min(total, i + FLEET_GROUP_NODES); k++) {
          const entry = resolved[k];
          if (entry && 'pairs' in entry) ids.push(entry.row.id);
        }
        byNode = new Map();
        for (const row of await listLinkRowsForNodes(this.db, ctx.plan.id, ids)) {
          const list = byNode.get(row.nodeId);
          if (list) list.push(row);
          else byNode.set(row.nodeId, [row]);
        }
      }
      const entry = resolved[i] as { row: NodeRow; pairs: Map<string, PairKey> } | { broken: NodeRow; message: string };
      resolved[i] = null; // visited nodes are the caller's to keep or drop
      if ('broken' in entry) {
        await visit(brokenNodeOutcome(entry.broken, entry.message));
        onProgress?.(i + 1, total);
        continue;
      }
      const node = await this.resolveNode(ctx, entry.row);
      const { outcome, toSave } = await this.nodeLinks(ctx, node, byNode.get(entry.row.id) ?? [], true, precomputed, entry.pairs);
      await visit(outcome);
      pending.push(...toSave);
      if (pending.length >= 500) {
        await saveLinkRows(this.db, ctx.plan.id, pending);
        pending = [];
      }
      onProgress?.(i + 1, total);
    }
    await saveLinkRows(this.db, ctx.plan.id, pending);
    return total;
  }

  /** Finds a node row of the plan or throws a 404 input error. */
  async nodeRow(ctx: PlanContext, nodeId: string): Promise<NodeRow> {
    const row = await findNode(this.db, ctx.plan.id, nodeId);
    if (!row) throw new LinkInputError('not_found', 'not_found', 'node not found');
    return row;
  }

  /** Path of a node at another antenna height to one gateway (for the recommendation's mast sweep). */
  async pathAtHeight(ctx: PlanContext, node: ResolvedNode, gateway: GatewayContext, antennaHeightAglM: number): Promise<PathPrediction> {
    return this.computePath(ctx, { ...node, antennaHeightAglM }, gateway);
  }

  /** Gateways of the context within range of a node. */
  gatewaysInRange(ctx: PlanContext, node: { lat: number; lon: number }): GatewayContext[] {
    return ctx.gateways.filter((gateway) => isWithinDistanceM(node.lat, node.lon, gateway.row.lat, gateway.row.lon, ctx.settings.maxLinkRangeM));
  }

  /** Resolves catalog entries for the recommendation. */
  async catalogAntenna(ctx: PlanContext, id: string): Promise<AntennaDesign> {
    try {
      return await this.antenna(ctx, id);
    } catch (error) {
      if (error instanceof NotFoundError) throw new LinkInputError('invalid_input', 'invalid_input', `antennaDesignIds: no antenna design "${id}" in the catalog`);
      throw error;
    }
  }

  async catalogFeedline(ctx: PlanContext, id: string): Promise<FeedlineType> {
    try {
      return await this.feedline(ctx, id);
    } catch (error) {
      if (error instanceof NotFoundError) throw new LinkInputError('invalid_input', 'invalid_input', `feedlineIds: no feedline "${id}" in the catalog`);
      throw error;
    }
  }

  get database(): Database {
    return this.db;
  }
}

export type { GatewayContext };

/** Node connectors for a feedline run (as resolveNode assumes). */
export function nodeConnectors(hasFeedline: boolean): ConnectorUse[] {
  return hasFeedline ? connectorUses(NODE_CONNECTORS) : [];
}

/** Gateway connectors for a feedline run (as planContext assumes). */
export function gatewayConnectors(hasFeedline: boolean): ConnectorUse[] {
  return hasFeedline ? connectorUses(GATEWAY_CONNECTORS) : [];
}

/** Loss of those connectors, dB. */
export function nodeConnectorLossDb(hasFeedline: boolean): number {
  return connectorLossDb(nodeConnectors(hasFeedline));
}

function brokenNodeOutcome(row: NodeRow, message: string): NodeLinksOutcome {
  return {
    links: [],
    combinedDeliveryProbability: 0,
    status: 'unserved',
    bestGatewayId: null,
    bestMarginDb: null,
    node: { row, antennaHeightAglM: row.antennaHeightAglM, warnings: [message] } as unknown as ResolvedNode,
    paths: new Map(),
    computed: 0,
    cached: 0,
    outOfRange: [],
  };
}

/** A path end of a node or gateway row at an antenna height. */
export function pathEnd(row: { lat: number; lon: number }, antennaHeightAglM: number) {
  return { lat: row.lat, lon: row.lon, antennaHeightAglM };
}
