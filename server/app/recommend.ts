// Kit recommendation for one node (POST .../nodes/:nodeId/recommend) and for
// the whole fleet as a job with progress (POST /plans/:planId/recommend).
// The search itself is pure (server/planning/recommend.ts); this file gathers
// the catalog, predicts the paths at each mast height once, and evaluates.
import type { Database } from '../db/client.ts';
import { listAntennaDesigns, listFeedlines, listMasts, toRadioAntennaDesign, toRadioFeedline, toRadioMastOption } from '../db/repositories/kit.ts';
import type { NodeRow } from '../db/repositories/nodes.ts';
import type { AntennaDesign } from '../radio/antennas.ts';
import type { FeedlineType } from '../radio/feedlines.ts';
import type { MastOption } from '../radio/masts.ts';
import { nodeKitPrice, type NodeKitPrice } from './kit-price.ts';
import { CAUTIONS_FOOTER, fittedCautions, type CautionGroup } from '../planning/cautions.ts';
import { nodeLinkResults, summariseNodeLinks } from '../planning/node-links.ts';
import { predictPath, type PathPrediction } from '../planning/path.ts';
import { recommendKit, type KitCandidate, type KitEvaluation, type RankedKitOption, type Recommendation } from '../planning/recommend.ts';
import { LinkInputError, nodeConnectors, type GatewayContext, type LinkEngine, type PlanContext } from '../jobs/link-engine.ts';

export interface RecommendRequest {
  targetMarginDb?: number;
  targetDelivery?: number;
  antennaDesignIds?: string[];
  mastHeightsM?: number[];
  feedlineIds?: string[];
  maxCost?: number;
}

export interface PricedKitOption extends RankedKitOption {
  antennaName: string;
  feedlineName: string | null;
  mastName: string | null;
  price: NodeKitPrice;
}

export interface NodeRecommendation extends Omit<Recommendation, 'options'> {
  options: PricedKitOption[];
  nodeId: string;
  target: { targetMarginDb: number; targetDelivery: number };
  currentKit: { antennaDesignId: string; antennaHeightAglM: number; feedlineId: string | null; feedlineLengthM: number };
  /** Catalog entries in the search, with names, so a reader can see what was compared. */
  catalog: { antennas: Array<{ id: string; name: string; costUsd: number }>; masts: Array<{ heightM: number; mastOptionId: string | null; costUsd: number }>; feedlines: Array<{ id: string | null; name: string; costUsdPerM: number }> };
  /** Cautions fitted to the first option (the kit recommended): height, gain, EIRP, pit or building. */
  fittedCautions: CautionGroup[];
  cautionsFooter: string;
  warnings: string[];
}

async function allPages<T>(page: (cursor: string | undefined) => Promise<{ items: T[]; next: string | null }>): Promise<T[]> {
  const out: T[] = [];
  let cursor: string | undefined;
  for (;;) {
    const result = await page(cursor);
    out.push(...result.items);
    if (!result.next) return out;
    cursor = result.next;
  }
}

/** The team's visible catalog in the radio room's shapes. */
export async function loadCatalog(db: Database, teamId: string): Promise<{ antennas: AntennaDesign[]; feedlines: FeedlineType[]; masts: MastOption[] }> {
  const [antennaRows, feedlineRows, mastRows] = await Promise.all([
    allPages((cursor) => listAntennaDesigns(db, teamId, { limit: 1000, cursor })),
    allPages((cursor) => listFeedlines(db, teamId, { limit: 1000, cursor })),
    allPages((cursor) => listMasts(db, teamId, { limit: 1000, cursor })),
  ]);
  return { antennas: antennaRows.map(toRadioAntennaDesign), feedlines: feedlineRows.map(toRadioFeedline), masts: mastRows.map(toRadioMastOption) };
}

/** Ranked kit options for one node. */
export async function recommendForNode(engine: LinkEngine, ctx: PlanContext, row: NodeRow, request: RecommendRequest, catalog?: Awaited<ReturnType<typeof loadCatalog>>): Promise<NodeRecommendation> {
  const kit = catalog ?? (await loadCatalog(engine.database, ctx.teamId));
  const warnings: string[] = [];
  const f = ctx.settings.frequencyMhz;
  let antennas: AntennaDesign[];
  if (request.antennaDesignIds) {
    antennas = [];
    for (const id of request.antennaDesignIds) {
      const found = kit.antennas.find((a) => a.id === id);
      if (!found) throw new LinkInputError('invalid_input', 'invalid_input', `antennaDesignIds: no antenna design "${id}" in the catalog`);
      antennas.push(found);
    }
  } else {
    antennas = kit.antennas.filter((a) => f >= a.bandMhz.fromMhz && f <= a.bandMhz.toMhz);
  }
  let feedlines: Array<FeedlineType | null>;
  if (request.feedlineIds) {
    feedlines = [];
    for (const id of request.feedlineIds) {
      const found = kit.feedlines.find((fl) => fl.id === id);
      if (!found) throw new LinkInputError('invalid_input', 'invalid_input', `feedlineIds: no feedline "${id}" in the catalog`);
      feedlines.push(found);
    }
  } else {
    feedlines = [null, ...kit.feedlines];
  }
  // Ground-mounted masts give a height above ground; roof and wall mounts depend on the building, so
  // they enter only when the caller names their heights.
  const groundMasts = kit.masts.filter((m) => m.mounting === 'ground').sort((a, b) => a.heightM - b.heightM || a.costUsd - b.costUsd);
  let masts: Array<{ mastHeightM: number; costUsd: number; mastOptionId: string | null }>;
  if (request.mastHeightsM) {
    masts = [];
    for (const height of request.mastHeightsM) {
      const fitting = kit.masts.filter((m) => m.heightM >= height - 1e-9).sort((a, b) => a.costUsd - b.costUsd)[0];
      if (!fitting) {
        warnings.push(`no mast in the catalog reaches ${height} m; that height was left out`);
        continue;
      }
      masts.push({ mastHeightM: height, costUsd: fitting.costUsd, mastOptionId: fitting.id });
    }
  } else {
    masts = groundMasts.map((m) => ({ mastHeightM: m.heightM, costUsd: m.costUsd, mastOptionId: m.id }));
  }
  const node = await engine.resolveNode(ctx, row);
  const target = { targetMarginDb: request.targetMarginDb ?? ctx.settings.targetMarginDb, targetDelivery: request.targetDelivery ?? ctx.settings.targetDelivery };
  const gateways = engine.gatewaysInRange(ctx, row);
  if (gateways.length === 0) warnings.push(`no gateway within ${(ctx.settings.maxLinkRangeM / 1000).toFixed(0)} km of this node`);

  // Paths at each mast height: one profile per gateway, one prediction per height.
  const pathsByHeight = new Map<number, Array<{ gateway: GatewayContext; path: PathPrediction }>>();
  const profiles = await Promise.all(gateways.map((gateway) => engine.profile(ctx, row, gateway.row)));
  for (const mast of masts) {
    if (pathsByHeight.has(mast.mastHeightM)) continue;
    pathsByHeight.set(
      mast.mastHeightM,
      gateways.map((gateway, i) => ({
        gateway,
        path: predictPath(profiles[i], ctx.settings.path, { lat: row.lat, lon: row.lon, antennaHeightAglM: mast.mastHeightM }, { lat: gateway.row.lat, lon: gateway.row.lon, antennaHeightAglM: gateway.row.antennaHeightAglM }),
      })),
    );
  }
  const antennaById = new Map(antennas.map((a) => [a.id, a]));
  const feedlineById = new Map(feedlines.filter((fl): fl is FeedlineType => fl !== null).map((fl) => [fl.id, fl]));
  /** The links a candidate kit would have (null: no gateway in range). */
  const linksOf = (candidate: Pick<KitCandidate, 'antennaDesignId' | 'mastHeightM' | 'feedlineId' | 'feedlineLengthM'>) => {
    const paths = pathsByHeight.get(candidate.mastHeightM) ?? [];
    if (paths.length === 0) return null;
    const feedline = candidate.feedlineId ? (feedlineById.get(candidate.feedlineId) ?? null) : null;
    return nodeLinkResults(
      { antenna: antennaById.get(candidate.antennaDesignId) as AntennaDesign, boresightAzimuthDeg: null, feedline, feedlineLengthM: candidate.feedlineLengthM, connectors: nodeConnectors(feedline !== null && candidate.feedlineLengthM > 0) },
      node.radio,
      paths.map(({ gateway, path }) => ({ gatewayId: gateway.row.id, path, kit: gateway.kit, radio: gateway.radio })),
      { ...node.radioSettings, targetMarginDb: target.targetMarginDb },
    );
  };
  const evaluate = (candidate: KitCandidate): KitEvaluation => {
    const links = linksOf(candidate);
    if (links === null) return { marginDb: null, deliveryProbability: 0, bestGatewayId: null };
    const summary = summariseNodeLinks(links, target, ctx.settings.gatewayCorrelation);
    return { marginDb: summary.bestMarginDb, deliveryProbability: summary.combinedDeliveryProbability, bestGatewayId: summary.bestGatewayId };
  };
  const result = recommendKit({
    antennas: antennas.map((a) => ({ antennaDesignId: a.id, costUsd: a.costUsd })),
    masts,
    feedlines: feedlines.map((fl) => ({ feedlineId: fl ? fl.id : null, costUsdPerM: fl ? fl.costUsdPerM : 0 })),
    feedlineLengthForMastM: (height) => height + ctx.settings.feedlineDropM,
    evaluate,
    target,
    maxCost: request.maxCost,
  });
  // Each option carries the one kit price with part names (server/app/kit-price.ts): the
  // figure the chooser, the installer view and the visit sheet show for the same kit.
  const pricedOptions = result.options.map((option) => {
    const antenna = antennaById.get(option.antennaDesignId) as AntennaDesign;
    const feedline = option.feedlineId ? (feedlineById.get(option.feedlineId) ?? null) : null;
    const price = nodeKitPrice({ antenna, feedline, feedlineLengthM: option.feedlineLengthM, antennaHeightAglM: option.mastHeightM, mastOptionId: option.mastOptionId }, kit.masts);
    return { ...option, antennaName: antenna.name, feedlineName: feedline?.name ?? null, mastName: price.mastName, price };
  });
  // Cautions for the kit the answer recommends (its mast height, gain and EIRP), from the
  // same links the ranking used; none when nothing was found.
  const top = pricedOptions[0];
  const topLegal = top ? ((linksOf(top) ?? []).find((l) => l.legal)?.legal ?? null) : null;
  const cautions = top
    ? fittedCautions({ role: 'node', antennaHeightAglM: top.mastHeightM, peakEirpDbm: topLegal?.peakEirpDbm ?? null, antennaGainDbi: antennaById.get(top.antennaDesignId)?.gainDbi ?? 0, legal: topLegal, enclosed: row.environment !== 'outdoor' })
    : [];
  return {
    nodeId: row.id,
    target,
    currentKit: { antennaDesignId: row.antennaDesignId, antennaHeightAglM: row.antennaHeightAglM, feedlineId: row.feedlineId, feedlineLengthM: row.feedlineLengthM },
    ...result,
    options: pricedOptions,
    catalog: {
      antennas: antennas.map((a) => ({ id: a.id, name: a.name, costUsd: a.costUsd })),
      masts: masts.map((m) => ({ heightM: m.mastHeightM, mastOptionId: m.mastOptionId, costUsd: m.costUsd })),
      feedlines: feedlines.map((fl) => ({ id: fl ? fl.id : null, name: fl ? fl.name : 'none (radio at the antenna)', costUsdPerM: fl ? fl.costUsdPerM : 0 })),
    },
    fittedCautions: cautions,
    cautionsFooter: CAUTIONS_FOOTER,
    warnings: [...warnings, ...node.warnings],
  };
}
