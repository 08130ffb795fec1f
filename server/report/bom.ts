// Bill of materials of a plan: antennas, feedline metres, connectors, masts
// for every node and gateway, the gateway radios and the gateway sites' own
// costs, priced from the team's visible catalog. The kit part (antenna + mast +
// feedline) is the one kit price of the recommendation (kitCostUsd in
// server/planning/recommend.ts); connectors are those the link budget assumes
// for a feedline run (nodeConnectors / gatewayConnectors in server/jobs/link-engine.ts).
import { kitCostUsd } from '../planning/recommend.ts';

/**
 * Gateway radio (outdoor, 8-channel LoRa concentrator class) when the plan does not
 * set `gatewayUnitCostUsd`: an illustrative list price, not a quote (from memory).
 */
export const DEFAULT_GATEWAY_UNIT_COST_USD = 600;

export interface PricedEnd {
  kind: 'node' | 'gateway';
  id: string;
  name: string;
  antennaDesignId: string;
  feedlineId: string | null;
  feedlineLengthM: number;
  mastOptionId: string | null;
  /** Connectors of its feedline run (empty without one). */
  connectors: ReadonlyArray<{ id: string; count: number }>;
  /** Site the gateway stands on (gateways only). */
  siteId?: string | null;
}

export interface PriceCatalog {
  antennas: ReadonlyMap<string, { name: string; costUsd: number }>;
  feedlines: ReadonlyMap<string, { name: string; costUsdPerM: number }>;
  masts: ReadonlyMap<string, { name: string; costUsd: number }>;
  connectors: ReadonlyMap<string, { name: string; costUsd: number }>;
}

export type BomCategory = 'antenna' | 'feedline' | 'connector' | 'mast' | 'gateway' | 'site';

export interface BomLine {
  category: BomCategory;
  itemId: string;
  name: string;
  quantity: number;
  unit: 'each' | 'm';
  unitCostUsd: number | null;
  /** null when the item has no price in the catalog. */
  costUsd: number | null;
}

export interface BillOfMaterials {
  lines: BomLine[];
  /** USD per category (unpriced lines count 0). */
  totalsUsd: Record<BomCategory, number>;
  /** Antennas + feedlines + masts of every node and gateway: the summary view's "kit cost". */
  kitCostUsd: number;
  /** Everything: kit + connectors + gateway radios + sites. */
  totalUsd: number;
  /** Items the catalog has no price for ("antenna x", ...). */
  unpriced: string[];
  notes: string[];
}

const round2 = (v: number) => Math.round(v * 100) / 100;

/** Kit price of one node or gateway (antenna + mast + feedline), USD; unknown catalog items count 0. */
export function endKitCostUsd(end: PricedEnd, catalog: PriceCatalog): number {
  const antenna = catalog.antennas.get(end.antennaDesignId)?.costUsd ?? 0;
  const mast = end.mastOptionId ? (catalog.masts.get(end.mastOptionId)?.costUsd ?? 0) : 0;
  const perM = end.feedlineId ? (catalog.feedlines.get(end.feedlineId)?.costUsdPerM ?? 0) : 0;
  return kitCostUsd(antenna, mast, perM, end.feedlineId ? end.feedlineLengthM : 0);
}

export interface BomOptions {
  gatewayUnitCostUsd: number;
  sites: ReadonlyArray<{ id: string; name: string; costUsd: number | null }>;
}

export function billOfMaterials(ends: readonly PricedEnd[], catalog: PriceCatalog, options: BomOptions): BillOfMaterials {
  const lines = new Map<string, BomLine>();
  const unpriced = new Set<string>();
  const add = (category: BomCategory, itemId: string, name: string, quantity: number, unit: 'each' | 'm', unitCostUsd: number | null) => {
    const key = `${category}:${itemId}`;
    const line = lines.get(key) ?? { category, itemId, name, quantity: 0, unit, unitCostUsd, costUsd: null };
    line.quantity += quantity;
    lines.set(key, line);
    if (unitCostUsd === null) unpriced.add(`${category} ${itemId}`);
  };
  let gateways = 0;
  const siteIds = new Set<string>();
  for (const end of ends) {
    const antenna = catalog.antennas.get(end.antennaDesignId);
    add('antenna', end.antennaDesignId, antenna?.name ?? end.antennaDesignId, 1, 'each', antenna ? antenna.costUsd : null);
    if (end.feedlineId && end.feedlineLengthM > 0) {
      const feedline = catalog.feedlines.get(end.feedlineId);
      add('feedline', end.feedlineId, feedline?.name ?? end.feedlineId, end.feedlineLengthM, 'm', feedline ? feedline.costUsdPerM : null);
    }
    for (const use of end.connectors) {
      const connector = catalog.connectors.get(use.id);
      add('connector', use.id, connector?.name ?? use.id, use.count, 'each', connector ? connector.costUsd : null);
    }
    if (end.mastOptionId) {
      const mast = catalog.masts.get(end.mastOptionId);
      add('mast', end.mastOptionId, mast?.name ?? end.mastOptionId, 1, 'each', mast ? mast.costUsd : null);
    }
    if (end.kind === 'gateway') {
      gateways++;
      if (end.siteId) siteIds.add(end.siteId);
    }
  }
  if (gateways > 0) add('gateway', 'gateway-radio', 'Gateway radio (outdoor, 8-channel)', gateways, 'each', options.gatewayUnitCostUsd);
  for (const site of options.sites) {
    if (!siteIds.has(site.id) || site.costUsd === null) continue;
    add('site', site.id, `Site works: ${site.name}`, 1, 'each', site.costUsd);
  }
  const totalsUsd: Record<BomCategory, number> = { antenna: 0, feedline: 0, connector: 0, mast: 0, gateway: 0, site: 0 };
  const order: BomCategory[] = ['antenna', 'feedline', 'connector', 'mast', 'gateway', 'site'];
  const sorted = [...lines.values()].sort((a, b) => order.indexOf(a.category) - order.indexOf(b.category) || a.name.localeCompare(b.name));
  for (const line of sorted) {
    line.quantity = round2(line.quantity);
    line.costUsd = line.unitCostUsd === null ? null : round2(line.unitCostUsd * line.quantity);
    totalsUsd[line.category] = round2(totalsUsd[line.category] + (line.costUsd ?? 0));
  }
  // The kit total is the sum of each end's kit price, so it equals what the recommendation and summary show.
  const kit = round2(ends.reduce((sum, end) => sum + endKitCostUsd(end, catalog), 0));
  const total = round2(kit + totalsUsd.connector + totalsUsd.gateway + totalsUsd.site);
  return {
    lines: sorted,
    totalsUsd,
    kitCostUsd: kit,
    totalUsd: total,
    unpriced: [...unpriced],
    notes: [
      'Catalog prices are illustrative list prices (or the team’s own entries), not quotes.',
      `Gateway radios at ${options.gatewayUnitCostUsd.toFixed(2)} USD each (plan setting gatewayUnitCostUsd, else an illustrative price).`,
      'Connectors: the mated pairs (and the gateway’s surge arrestor) the link budget assumes for each feedline run.',
      'Site works: the cost entered on each site that holds a gateway. Labour, power, backhaul and permits are not included.',
    ],
  };
}
