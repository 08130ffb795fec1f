// The one kit price (server/app/kit-price.ts) for a kit not saved yet, and the status words.
import { request, type Answer, type BodyOf } from './api.ts';

/** The one kit price with part names; its shape comes from the OpenAPI document. */
export type KitPrice = Answer<'/api/v1/plans/{planId}/kit-price', 'post'>;
export type KitPriceLine = KitPrice['lines'][number];
export type KitDraft = BodyOf<'/api/v1/plans/{planId}/kit-price', 'post'>;
export const getKitPrice = (planId: string, draft: KitDraft, signal?: AbortSignal): Promise<KitPrice> =>
  request('POST', `/plans/${encodeURIComponent(planId)}/kit-price`, draft, undefined, signal);

/** "Whip 12.00 + LMR-400 5 m 11.00 + N connectors 8.00 + Field stake 25.00" */
export const priceParts = (price: KitPrice): string => price.lines.map((l) => `${l.name}${l.unit === 'm' ? ` ${l.quantity} m` : l.quantity > 1 ? ` × ${l.quantity}` : ''} ${l.costUsd.toFixed(2)}`).join(' + ');
