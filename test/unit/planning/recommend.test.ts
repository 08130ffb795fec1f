import { describe, expect, it } from 'vitest';
import {
  compareRankedOptions,
  enumerateKitCandidates,
  meetsKitTarget,
  recommendKit,
  type KitCandidate,
  type KitEvaluation,
  type RankedKitOption,
  type RecommendationInput,
} from '../../../server/planning/recommend.ts';

// A small catalog and a deterministic stand-in for the link prediction
// (gain + height-gain − feedline loss, with a diffraction "shelf" between
// 3 and 6 m), so the search can be compared with a plain exhaustive search.
const gains: Record<string, number> = { stub: -2, 'quarter-wave': 1.5, dipole: 2.15, collinear: 6, yagi: 9 };
const antennas = [
  { antennaDesignId: 'stub', costUsd: 2 },
  { antennaDesignId: 'quarter-wave', costUsd: 6 },
  { antennaDesignId: 'dipole', costUsd: 12 },
  { antennaDesignId: 'collinear', costUsd: 55 },
  { antennaDesignId: 'yagi', costUsd: 70 },
];
const masts = [
  { mastHeightM: 1.5, costUsd: 0 },
  { mastHeightM: 3, costUsd: 25 },
  { mastHeightM: 6, costUsd: 60 },
  { mastHeightM: 10, costUsd: 140 },
];
const feedlineLoss: Record<string, number> = { none: 0, 'rg-58': 0.45, lmr: 0.15 }; // dB per m
const feedlines = [
  { feedlineId: null, costUsdPerM: 0 },
  { feedlineId: 'rg-58', costUsdPerM: 1 },
  { feedlineId: 'lmr', costUsdPerM: 3.5 },
];
function evaluateWith(baseMarginDb: number) {
  return (candidate: KitCandidate): KitEvaluation => {
    const heightGainDb = candidate.mastHeightM >= 6 ? 9 : candidate.mastHeightM >= 3 ? 4 : 0;
    // Without a feedline the radio sits at the antenna: no cable loss, but a
    // radio on a 10 m mast is awkward, so only the 1.5 m case keeps its full benefit.
    const cableLossDb = feedlineLoss[candidate.feedlineId ?? 'none'] * candidate.feedlineLengthM;
    const marginDb = baseMarginDb + gains[candidate.antennaDesignId] + heightGainDb - cableLossDb;
    return { marginDb, deliveryProbability: 1 / (1 + Math.exp(-marginDb / 2)), bestGatewayId: 'gw-1' };
  };
}
function inputFor(baseMarginDb: number, targetMarginDb: number, extra: Partial<RecommendationInput> = {}): RecommendationInput {
  return {
    antennas,
    masts,
    feedlines,
    feedlineLengthForMastM: (height) => height + 1,
    evaluate: evaluateWith(baseMarginDb),
    target: { targetMarginDb, targetDelivery: 0.9 },
    ...extra,
  };
}
function exhaustive(input: RecommendationInput): RankedKitOption[] {
  const all: RankedKitOption[] = [];
  for (const candidate of enumerateKitCandidates(input)) {
    const evaluation = input.evaluate(candidate);
    all.push({ ...candidate, ...evaluation, meetsTarget: meetsKitTarget(evaluation, input.target), reason: '' });
  }
  return all.sort(compareRankedOptions);
}

describe('kit recommendation is optimal (compared with exhaustive search over a small catalog)', () => {
  for (const baseMarginDb of [-12, -6, -3, 0, 2, 5, 9, 15]) {
    for (const targetMarginDb of [0, 6, 10]) {
      it(`base margin ${baseMarginDb} dB, target ${targetMarginDb} dB: same first option and the same cheapest meeting cost`, () => {
        const input = inputFor(baseMarginDb, targetMarginDb);
        const got = recommendKit(input);
        const reference = exhaustive(input);
        const referenceMeeting = reference.filter((option) => option.meetsTarget);
        expect(got.anyMeetsTarget).toBe(referenceMeeting.length > 0);
        expect(got.best?.cost).toBe(reference[0].cost);
        expect(got.best?.marginDb).toBe(reference[0].marginDb);
        if (referenceMeeting.length > 0) {
          // Every returned meeting option is among the cheapest meeting ones, in order.
          const gotMeeting = got.options.filter((option) => option.meetsTarget);
          expect(gotMeeting.map((o) => o.cost)).toEqual(referenceMeeting.slice(0, gotMeeting.length).map((o) => o.cost));
          expect(got.evaluated).toBeLessThanOrEqual(got.combinations);
        } else {
          expect(got.advice.join(' ')).toMatch(/no option in the catalog meets the target/);
          expect(got.advice.join(' ')).toMatch(/another gateway site/);
          expect(got.best?.deliveryProbability).toBe(reference[0].deliveryProbability);
        }
      });
    }
  }

  it('stops early once the cheapest meeting options are known (fewer evaluations than combinations)', () => {
    const got = recommendKit(inputFor(15, 6));
    expect(got.anyMeetsTarget).toBe(true);
    expect(got.evaluated).toBeLessThan(got.combinations);
    expect(got.options[0]).toMatchObject({ antennaDesignId: 'stub', mastHeightM: 1.5, feedlineId: null, cost: 2, meetsTarget: true });
  });

  it('maxCost drops costlier kit; an impossible budget says so', () => {
    const got = recommendKit(inputFor(0, 6, { maxCost: 30 }));
    expect(got.options.every((option) => option.cost <= 30)).toBe(true);
    const none = recommendKit(inputFor(0, 6, { maxCost: 1 }));
    expect(none.options).toEqual([]);
    expect(none.advice[0]).toMatch(/costs 1 or less/);
  });

  it('reason names the shortfall of an option that misses the target', () => {
    const got = recommendKit(inputFor(-20, 10));
    expect(got.options[0].meetsTarget).toBe(false);
    expect(got.options[0].reason).toMatch(/dB short of 10 dB/);
  });
});
