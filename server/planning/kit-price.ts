// The one price of a node's kit: antenna, feedline, connectors of the feedline run, and the
// mast or mount. Every view (recommendation, kit chooser, installer view, visit sheet) shows
// this figure with these names. The antenna + mast + feedline part is kitCostUsd (the figure
// the recommendation ranks by); connectors are added on top, as the link budget counts them.
import { kitCostUsd } from './recommend.ts';

export interface PriceInput {
  antenna: { name: string; costUsd: number };
  mast: { name: string; costUsd: number } | null;
  feedline: { name: string; costUsdPerM: number } | null;
  feedlineLengthM: number;
  connectors: ReadonlyArray<{ name: string; costUsd: number | undefined; count: number }>;
}

export interface PriceLine {
  part: 'antenna' | 'feedline' | 'connectors' | 'mast';
  name: string;
  quantity: number;
  unit: 'each' | 'm';
  costUsd: number;
}

export interface KitPrice {
  lines: PriceLine[];
  totalUsd: number;
  /** Items without a catalog price (counted as 0). */
  unpriced: string[];
}

const round2 = (v: number): number => Math.round(v * 100) / 100;

/** Below this antenna height a node needs no mast (it sits on the device, a pit lid or a wall box). */
export const NO_MAST_BELOW_M = 0.5;

/** The mast the kit needs: the named one, else the cheapest catalog mast reaching the height (as the recommendation picks). */
export function mastForHeight<M extends { id: string; heightM: number; costUsd: number }>(masts: readonly M[], heightM: number, mastOptionId?: string | null): M | null {
  if (mastOptionId) return masts.find((m) => m.id === mastOptionId) ?? null;
  if (heightM < NO_MAST_BELOW_M) return null;
  return [...masts].filter((m) => m.heightM >= heightM - 1e-9).sort((a, b) => a.costUsd - b.costUsd || a.heightM - b.heightM)[0] ?? null;
}

export function kitPrice(input: PriceInput): KitPrice {
  const lengthM = input.feedline ? input.feedlineLengthM : 0;
  const lines: PriceLine[] = [{ part: 'antenna', name: input.antenna.name, quantity: 1, unit: 'each', costUsd: round2(input.antenna.costUsd) }];
  if (input.feedline && lengthM > 0) lines.push({ part: 'feedline', name: input.feedline.name, quantity: lengthM, unit: 'm', costUsd: round2(input.feedline.costUsdPerM * lengthM) });
  const unpriced: string[] = [];
  let connectorsUsd = 0;
  for (const c of input.connectors) {
    if (c.costUsd === undefined) unpriced.push(c.name);
    const cost = (c.costUsd ?? 0) * c.count;
    connectorsUsd += cost;
    lines.push({ part: 'connectors', name: c.name, quantity: c.count, unit: 'each', costUsd: round2(cost) });
  }
  if (input.mast) lines.push({ part: 'mast', name: input.mast.name, quantity: 1, unit: 'each', costUsd: round2(input.mast.costUsd) });
  const core = kitCostUsd(input.antenna.costUsd, input.mast?.costUsd ?? 0, input.feedline?.costUsdPerM ?? 0, lengthM);
  return { lines, totalUsd: round2(core + connectorsUsd), unpriced };
}

/** "Antenna 60.00 + feedline 12.00 + mast 25.00 = 97.00 USD" style one-liner. */
export function priceSummary(price: KitPrice): string {
  return `${price.lines.map((l) => `${l.name} ${l.costUsd.toFixed(2)}`).join(' + ')} = ${price.totalUsd.toFixed(2)} USD`;
}
