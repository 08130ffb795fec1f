// A node kit's one price from catalog objects (see server/planning/kit-price.ts), used by the
// recommendation, the kit chooser, the installer view and the visit sheet alike.
import { gatewayConnectors, nodeConnectors } from '../jobs/link-engine.ts';
import { kitPrice, mastForHeight, type KitPrice } from '../planning/kit-price.ts';
import type { AntennaDesign } from '../radio/antennas.ts';
import type { FeedlineType } from '../radio/feedlines.ts';
import type { MastOption } from '../radio/masts.ts';

export interface NodeKitParts {
  antenna: Pick<AntennaDesign, 'name' | 'costUsd'>;
  feedline: Pick<FeedlineType, 'name' | 'costUsdPerM'> | null;
  feedlineLengthM: number;
  antennaHeightAglM: number;
  mastOptionId?: string | null;
}

/** A node kit's price with the mast it names (the recommendation, kit chooser and visit sheet show this). */
export type NodeKitPrice = KitPrice & { mastName: string | null; mastOptionId: string | null };

export function nodeKitPrice(parts: NodeKitParts, masts: readonly MastOption[]): NodeKitPrice {
  const hasFeedline = parts.feedline !== null && parts.feedlineLengthM > 0;
  const mast = mastForHeight(masts, parts.antennaHeightAglM, parts.mastOptionId);
  const price = kitPrice({
    antenna: { name: parts.antenna.name, costUsd: parts.antenna.costUsd ?? 0 },
    mast: mast ? { name: mast.name, costUsd: mast.costUsd } : null,
    feedline: hasFeedline && parts.feedline ? { name: parts.feedline.name, costUsdPerM: parts.feedline.costUsdPerM ?? 0 } : null,
    feedlineLengthM: parts.feedlineLengthM,
    connectors: nodeConnectors(hasFeedline).map((u) => ({ name: u.connector.name, costUsd: u.connector.costUsd, count: u.count })),
  });
  return { ...price, mastName: mast?.name ?? null, mastOptionId: mast?.id ?? null };
}

export interface GatewayKitParts {
  antenna: Pick<AntennaDesign, 'name' | 'costUsd'>;
  feedline: Pick<FeedlineType, 'name' | 'costUsdPerM'> | null;
  feedlineLengthM: number;
  mastOptionId?: string | null;
}

/**
 * A gateway's kit at the same price rule: antenna, feedline, the connectors and surge
 * arrestor of its run (gatewayConnectors, as its link budget counts them) and the mast only
 * when one is chosen (a gateway usually stands on its site's own structure, so none is
 * picked by height). The gateway radio is priced apart (bill of materials).
 */
export function gatewayKitPrice(parts: GatewayKitParts, masts: readonly MastOption[]): KitPrice & { mastName: string | null } {
  const hasFeedline = parts.feedline !== null && parts.feedlineLengthM > 0;
  const mast = parts.mastOptionId ? (masts.find((m) => m.id === parts.mastOptionId) ?? null) : null;
  const price = kitPrice({
    antenna: { name: parts.antenna.name, costUsd: parts.antenna.costUsd ?? 0 },
    mast: mast ? { name: mast.name, costUsd: mast.costUsd } : null,
    feedline: hasFeedline && parts.feedline ? { name: parts.feedline.name, costUsdPerM: parts.feedline.costUsdPerM ?? 0 } : null,
    feedlineLengthM: parts.feedlineLengthM,
    connectors: gatewayConnectors(hasFeedline).map((u) => ({ name: u.connector.name, costUsd: u.connector.costUsd, count: u.count })),
  });
  return { ...price, mastName: mast?.name ?? null };
}
