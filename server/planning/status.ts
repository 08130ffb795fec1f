// The served / marginal / unserved rule the fleet table and reports use.

export type LinkStatus = 'served' | 'marginal' | 'unserved';

export interface ServiceTarget {
  /** Margin over sensitivity the plan asks for, dB. */
  targetMarginDb: number;
  /** Probability of delivery the plan asks for (0–1). */
  targetDelivery: number;
}

/**
 * served: the best link meets the target margin at some allowed SF and the
 *   combined probability of delivery meets the target;
 * unserved: no gateway is heard even at the median (best margin below 0 dB at
 *   the most robust allowed SF) — messages get through less than half the time;
 * marginal: everything in between.
 */
export function linkStatus(bestMarginDb: number | null, combinedDelivery: number, target: ServiceTarget): LinkStatus {
  if (bestMarginDb === null || !(bestMarginDb >= 0)) return 'unserved';
  if (bestMarginDb >= target.targetMarginDb && combinedDelivery >= target.targetDelivery) return 'served';
  return 'marginal';
}

/**
 * The words for each status, defined once (the rule above) and served to the front end
 * (GET /api/v1/status-words) so map, panels, legend, sheets and reports say the same thing.
 */
export const STATUS_WORDS: Record<LinkStatus, { label: string; meaning: string }> = {
  served: { label: 'Served', meaning: 'meets the target margin and delivery' },
  marginal: { label: 'Marginal', meaning: 'heard, but short of the target margin or delivery' },
  unserved: { label: 'Unserved', meaning: 'every link below sensitivity at the median (margin under 0 dB)' },
};

/** "Marginal (heard, but short of the target margin or delivery) · delivery 68.0 %". */
export function statusPhrase(status: LinkStatus, combinedDelivery: number): string {
  const words = STATUS_WORDS[status];
  return `${words.label} (${words.meaning}) · delivery ${(combinedDelivery * 100).toFixed(1)} %`;
}
