// Kit recommendation: the cheapest antenna × mast height × feedline that makes
// a node meet the plan's target, ranked, with an honest answer when nothing does.
//
// The search visits combinations in order of rising cost and stops as soon as
// it has `keepMeeting` options that meet the target and every cheaper
// combination has been seen, so the first meeting option is the cheapest one
// (proved against a plain exhaustive search in test/unit/planning/recommend.test.ts).
// The evaluation (a link prediction) is the expensive part; the caller caches
// path losses per mast height so antenna and feedline changes cost a budget only.

export interface AntennaChoice {
  antennaDesignId: string;
  costUsd: number;
}

export interface MastChoice {
  mastHeightM: number;
  costUsd: number;
  /** Mast catalog row this height came from, if any. */
  mastOptionId?: string | null;
}

export interface FeedlineChoice {
  /** null = the radio sits at the antenna (no feedline). */
  feedlineId: string | null;
  costUsdPerM: number;
}

export interface KitCandidate {
  antennaDesignId: string;
  mastHeightM: number;
  mastOptionId: string | null;
  feedlineId: string | null;
  feedlineLengthM: number;
  cost: number;
}

export interface KitEvaluation {
  /** Best link margin at the chosen SF (null = no gateway in range). */
  marginDb: number | null;
  /** Combined probability of delivery over the gateways. */
  deliveryProbability: number;
  /** Gateway that gives the best margin. */
  bestGatewayId: string | null;
}

export interface KitTarget {
  targetMarginDb?: number;
  targetDelivery?: number;
}

export interface RankedKitOption extends KitCandidate, KitEvaluation {
  meetsTarget: boolean;
  reason: string;
}

export interface RecommendationInput {
  antennas: readonly AntennaChoice[];
  masts: readonly MastChoice[];
  feedlines: readonly FeedlineChoice[];
  /** Feedline length for a mast height (e.g. height + the drop to the radio box), m. */
  feedlineLengthForMastM: (mastHeightM: number) => number;
  evaluate: (candidate: KitCandidate) => KitEvaluation;
  target: KitTarget;
  maxCost?: number;
  /** How many meeting options to return at most (default 5). */
  keepMeeting?: number;
  /** How many options to return in all (default 10). */
  keepTotal?: number;
}

export interface Recommendation {
  options: RankedKitOption[];
  /** True when at least one option meets the target. */
  anyMeetsTarget: boolean;
  /** The best option found, meeting or not (null when the catalog is empty). */
  best: RankedKitOption | null;
  /** Plain advice when nothing meets the target. */
  advice: string[];
  /** Combinations evaluated / combinations in the catalog. */
  evaluated: number;
  combinations: number;
}

/** Whether an evaluation meets the target (a missing target part always passes). */
export function meetsKitTarget(evaluation: KitEvaluation, target: KitTarget): boolean {
  if (evaluation.marginDb === null) return false;
  if (target.targetMarginDb !== undefined && evaluation.marginDb < target.targetMarginDb) return false;
  if (target.targetDelivery !== undefined && evaluation.deliveryProbability < target.targetDelivery) return false;
  return true;
}

/**
 * Price of one kit: antenna + mast + feedline per metre × length, USD, to the cent.
 * The one kit price: the recommendation ranks by it and the bill of materials
 * (server/report/bom.ts) sums it, and siting prices its candidates' kit with it.
 */
export function kitCostUsd(antennaCostUsd: number, mastCostUsd: number, feedlineCostUsdPerM: number, feedlineLengthM: number): number {
  return round2(antennaCostUsd + mastCostUsd + feedlineCostUsdPerM * feedlineLengthM);
}

/** All candidates of the catalog, cheapest first (ties: lower mast, then input order). */
export function enumerateKitCandidates(input: Pick<RecommendationInput, 'antennas' | 'masts' | 'feedlines' | 'feedlineLengthForMastM' | 'maxCost'>): KitCandidate[] {
  const candidates: KitCandidate[] = [];
  for (const antenna of input.antennas) {
    for (const mast of input.masts) {
      for (const feedline of input.feedlines) {
        const feedlineLengthM = feedline.feedlineId === null ? 0 : input.feedlineLengthForMastM(mast.mastHeightM);
        const cost = kitCostUsd(antenna.costUsd, mast.costUsd, feedline.costUsdPerM, feedlineLengthM);
        if (input.maxCost !== undefined && cost > input.maxCost) continue;
        candidates.push({
          antennaDesignId: antenna.antennaDesignId,
          mastHeightM: mast.mastHeightM,
          mastOptionId: mast.mastOptionId ?? null,
          feedlineId: feedline.feedlineId,
          feedlineLengthM,
          cost,
        });
      }
    }
  }
  // Stable sort keeps catalog order for equal cost and height.
  return candidates.sort((a, b) => a.cost - b.cost || a.mastHeightM - b.mastHeightM);
}

/** Ranking: meeting options by cost (then margin), then the rest by delivery, then margin. */
export function compareRankedOptions(a: RankedKitOption, b: RankedKitOption): number {
  if (a.meetsTarget !== b.meetsTarget) return a.meetsTarget ? -1 : 1;
  if (a.meetsTarget) return a.cost - b.cost || (b.marginDb ?? -Infinity) - (a.marginDb ?? -Infinity);
  return b.deliveryProbability - a.deliveryProbability || (b.marginDb ?? -Infinity) - (a.marginDb ?? -Infinity) || a.cost - b.cost;
}

function describeOption(evaluation: KitEvaluation, meets: boolean, target: KitTarget): string {
  if (evaluation.marginDb === null) return 'no gateway in range';
  const parts: string[] = [];
  const margin = `margin ${evaluation.marginDb.toFixed(1)} dB`;
  const delivery = `delivery ${(evaluation.deliveryProbability * 100).toFixed(1)} %`;
  if (meets) return `meets the target: ${margin}, ${delivery}`;
  if (target.targetMarginDb !== undefined && evaluation.marginDb < target.targetMarginDb) {
    parts.push(`${margin} is ${(target.targetMarginDb - evaluation.marginDb).toFixed(1)} dB short of ${target.targetMarginDb} dB`);
  }
  if (target.targetDelivery !== undefined && evaluation.deliveryProbability < target.targetDelivery) {
    parts.push(`${delivery} below ${(target.targetDelivery * 100).toFixed(1)} %`);
  }
  return parts.join('; ');
}

/** Ranked kit options for one node. */
export function recommendKit(input: RecommendationInput): Recommendation {
  const keepMeeting = input.keepMeeting ?? 5;
  const keepTotal = input.keepTotal ?? 10;
  const candidates = enumerateKitCandidates(input);
  const combinations = input.antennas.length * input.masts.length * input.feedlines.length;
  const evaluatedOptions: RankedKitOption[] = [];
  let meetingCount = 0;
  let evaluated = 0;
  let lastMeetingCost = Infinity;
  for (const candidate of candidates) {
    // Once enough meeting options are found, a costlier candidate cannot rank
    // above them (same-cost ones still can, by margin, so those are visited).
    if (meetingCount >= keepMeeting && candidate.cost > lastMeetingCost) break;
    const evaluation = input.evaluate(candidate);
    evaluated++;
    const meetsTarget = meetsKitTarget(evaluation, input.target);
    if (meetsTarget) {
      meetingCount++;
      lastMeetingCost = candidate.cost;
    }
    evaluatedOptions.push({ ...candidate, ...evaluation, meetsTarget, reason: describeOption(evaluation, meetsTarget, input.target) });
  }
  evaluatedOptions.sort(compareRankedOptions);
  const options = evaluatedOptions.slice(0, keepTotal);
  const best = options[0] ?? null;
  const anyMeetsTarget = meetingCount > 0;
  const advice: string[] = [];
  if (!anyMeetsTarget) {
    if (candidates.length === 0) {
      advice.push(input.maxCost !== undefined ? `no kit in the catalog costs ${input.maxCost} or less` : 'the kit catalog is empty');
    } else {
      advice.push('no option in the catalog meets the target');
      if (best && best.marginDb !== null && input.target.targetMarginDb !== undefined && best.marginDb < input.target.targetMarginDb) {
        advice.push(`the best option is ${(input.target.targetMarginDb - best.marginDb).toFixed(1)} dB short of the target margin`);
      }
      if (best && best.marginDb === null) advice.push('no gateway is within range of this node');
      advice.push('consider another gateway site closer to the node or with a clearer path, a taller mast at the gateway, a higher-gain directional antenna aimed at the gateway, or moving the node out of the building or pit');
      if (input.maxCost !== undefined) advice.push(`raising the budget above ${input.maxCost} may allow a better kit`);
    }
  }
  return { options, anyMeetsTarget, best, advice, evaluated, combinations };
}

function round2(value: number): number {
  return Math.round(value * 100) / 100;
}
