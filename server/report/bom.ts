// Bill of materials of a plan: the one kit price (server/planning/kit-price.ts) of every
// node and gateway summed line by line (antennas, feedline metres, connectors, masts or
// mounts, by name), then the gateway radios and the gateway sites' own costs. Nothing is
// priced here: each end arrives with the KitPrice every other view shows for it (the
// recommendation, kit chooser, installer view and visit sheet), so the kit total is their sum.
import type { KitPrice, PriceLine } from '../planning/kit-price.ts';

/**
 * Gateway radio (outdoor, 8-channel LoRa concentrator class) when the plan does not
 * set `gatewayUnitCostUsd`: an illustrative list price, not a quote (from memory).
 */
export const DEFAULT_GATEWAY_UNIT_COST_USD = 600;

export interface PricedEnd {
  kind: 'node' | 'gateway';
  id: string;
  name: string;
  /** The end's one kit price (nodeKitPrice / gatewayKitPrice of server/app/kit-price.ts). */
  price: KitPrice;
  /** Site the gateway stands on (gateways only). */
  siteId?: string | null;
}

export type BomCategory = 'antenna' | 'feedline' | 'connector' | 'mast' | 'gateway' | 'site';

export interface BomLine {
  category: BomCategory;
  name: string;
  quantity: number;
  unit: 'each' | 'm';
  /** Cost ÷ quantity (one catalog entry has one price; shown to the cent). */
  unitCostUsd: number | null;
  costUsd: number;
}

export interface BillOfMaterials {
  lines: BomLine[];
  /** USD per category. */
  totalsUsd: Record<BomCategory, number>;
  /** Σ of the nodes' kit prices (antenna, feedline, connectors, mast or mount). */
  nodeKitCostUsd: number;
  /** Σ of the gateways' kit prices (antenna, feedline, connectors and arrestor, mast). */
  gatewayKitCostUsd: number;
  /** Nodes' and gateways' kit: the summary view's "kit cost". */
  kitCostUsd: number;
  /** Everything: kit + gateway radios + site works. */
  totalUsd: number;
  /** Items the catalog has no price for (counted as 0). */
  unpriced: string[];
  notes: string[];
}

const round2 = (v: number) => Math.round(v * 100) / 100;

const CATEGORY_OF: Record<PriceLine['part'], BomCategory> = { antenna: 'antenna', feedline: 'feedline', connectors: 'connector', mast: 'mast' };
const ORDER: BomCategory[] = ['antenna', 'feedline', 'connector', 'mast', 'gateway', 'site'];

export interface BomOptions {
  gatewayUnitCostUsd: number;
  sites: ReadonlyArray<{ id: string; name: string; costUsd: number | null }>;
}

/** Adds ends one at a time (the fleet streams by), then `finish()` gives the bill. */
export class BomBuilder {
  private readonly lines = new Map<string, BomLine>();
  private readonly unpriced = new Set<string>();
  private readonly siteIds = new Set<string>();
  private nodeKit = 0;
  private gatewayKit = 0;
  private gateways = 0;

  add(end: PricedEnd): void {
    for (const line of end.price.lines) {
      const category = CATEGORY_OF[line.part];
      const key = `${category}\u0000${line.name}\u0000${line.unit}`;
      const entry = this.lines.get(key) ?? { category, name: line.name, quantity: 0, unit: line.unit, unitCostUsd: null, costUsd: 0 };
      entry.quantity += line.quantity;
      entry.costUsd += line.costUsd;
      this.lines.set(key, entry);
    }
    for (const name of end.price.unpriced) this.unpriced.add(name);
    if (end.kind === 'node') this.nodeKit += end.price.totalUsd;
    else {
      this.gatewayKit += end.price.totalUsd;
      this.gateways++;
      if (end.siteId) this.siteIds.add(end.siteId);
    }
  }

  finish(options: BomOptions): BillOfMaterials {
    const extra: BomLine[] = [];
    if (this.gateways > 0) extra.push({ category: 'gateway', name: 'Gateway radio (outdoor, 8-channel)', quantity: this.gateways, unit: 'each', unitCostUsd: options.gatewayUnitCostUsd, costUsd: options.gatewayUnitCostUsd * this.gateways });
    for (const site of options.sites) {
      if (!this.siteIds.has(site.id) || site.costUsd === null) continue;
      extra.push({ category: 'site', name: `Site works: ${site.name}`, quantity: 1, unit: 'each', unitCostUsd: site.costUsd, costUsd: site.costUsd });
    }
    const lines = [...this.lines.values(), ...extra]
      .map((l) => ({ ...l, quantity: round2(l.quantity), costUsd: round2(l.costUsd), unitCostUsd: l.unitCostUsd ?? (l.quantity > 0 ? round2(l.costUsd / l.quantity) : null) }))
      .sort((a, b) => ORDER.indexOf(a.category) - ORDER.indexOf(b.category) || a.name.localeCompare(b.name));
    const totalsUsd: Record<BomCategory, number> = { antenna: 0, feedline: 0, connector: 0, mast: 0, gateway: 0, site: 0 };
    for (const line of lines) totalsUsd[line.category] = round2(totalsUsd[line.category] + line.costUsd);
    const nodeKitCostUsd = round2(this.nodeKit);
    const gatewayKitCostUsd = round2(this.gatewayKit);
    const kitCostUsd = round2(nodeKitCostUsd + gatewayKitCostUsd);
    return {
      lines,
      totalsUsd,
      nodeKitCostUsd,
      gatewayKitCostUsd,
      kitCostUsd,
      totalUsd: round2(kitCostUsd + totalsUsd.gateway + totalsUsd.site),
      unpriced: [...this.unpriced].sort(),
      notes: [
        'Each node’s and gateway’s kit is priced as the kit chooser, installer view and visit sheet price it: antenna, feedline, the connectors of the feedline run, and the mast or mount (a node without a chosen mast gets the cheapest catalog mast reaching its antenna height; below 0.5 m none).',
        'Catalog prices are illustrative list prices (or the team’s own entries), not quotes.',
        `Gateway radios at ${options.gatewayUnitCostUsd.toFixed(2)} USD each (plan setting gatewayUnitCostUsd, else an illustrative price).`,
        'Connectors: the mated pairs (and the gateway’s surge arrestor) the link budget assumes for each feedline run.',
        'Site works: the cost entered on each site that holds a gateway. Labour, power, backhaul and permits are not included.',
      ],
    };
  }
}

/** The bill of a list of priced ends (BomBuilder in one call). */
export function billOfMaterials(ends: readonly PricedEnd[], options: BomOptions): BillOfMaterials {
  const builder = new BomBuilder();
  for (const end of ends) builder.add(end);
  return builder.finish(options);
}
