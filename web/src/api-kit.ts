// The one kit price (server/app/kit-price.ts) for a kit not saved yet, and the status words.
import { request } from './api.ts';

export interface KitPriceLine {
  /** antenna | feedline | connectors | mast */
  part: string;
  name: string;
  quantity: number;
  unit: 'each' | 'm';
  costUsd: number;
}
export interface KitPrice {
  lines: KitPriceLine[];
  totalUsd: number;
  unpriced: string[];
  mastName?: string | null;
  mastOptionId?: string | null;
}
export interface KitDraft {
  antennaDesignId: string;
  antennaHeightAglM: number;
  feedlineId: string | null;
  feedlineLengthM: number;
  mastOptionId?: string | null;
}
export const getKitPrice = (planId: string, draft: KitDraft, signal?: AbortSignal): Promise<KitPrice> =>
  request('POST', `/plans/${encodeURIComponent(planId)}/kit-price`, draft, undefined, signal);

/** "Whip 12.00 + LMR-400 5 m 11.00 + N connectors 8.00 + Field stake 25.00" */
export const priceParts = (price: KitPrice): string => price.lines.map((l) => `${l.name}${l.unit === 'm' ? ` ${l.quantity} m` : l.quantity > 1 ? ` × ${l.quantity}` : ''} ${l.costUsd.toFixed(2)}`).join(' + ');
