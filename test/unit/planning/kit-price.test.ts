// The one kit price: antenna + feedline (per metre) + connectors + mast, the mast chosen as the
// recommendation chooses it; kitCostUsd stays the antenna + mast + feedline part.
import { describe, expect, it } from 'vitest';
import { kitPrice, mastForHeight, priceSummary } from '../../../server/planning/kit-price.ts';
import { kitCostUsd } from '../../../server/planning/recommend.ts';
import { builtInMastOptions } from '../../../server/radio/masts.ts';

describe('kitPrice', () => {
  it('adds every part once, with names, and agrees with kitCostUsd plus the connectors', () => {
    const price = kitPrice({
      antenna: { name: 'Yagi, 5 elements', costUsd: 60 },
      mast: { name: 'Field stake, 1.5 m', costUsd: 25 },
      feedline: { name: 'Low-loss ½″', costUsdPerM: 2.5 },
      feedlineLengthM: 4,
      connectors: [{ name: 'N connector pair', costUsd: 6, count: 2 }],
    });
    expect(price.lines.map((l) => [l.part, l.name, l.costUsd])).toEqual([
      ['antenna', 'Yagi, 5 elements', 60],
      ['feedline', 'Low-loss ½″', 10],
      ['connectors', 'N connector pair', 12],
      ['mast', 'Field stake, 1.5 m', 25],
    ]);
    expect(price.totalUsd).toBe(kitCostUsd(60, 25, 2.5, 4) + 12);
    expect(price.totalUsd).toBe(107);
    expect(priceSummary(price)).toBe('Yagi, 5 elements 60.00 + Low-loss ½″ 10.00 + N connector pair 12.00 + Field stake, 1.5 m 25.00 = 107.00 USD');
  });

  it('an unpriced connector is named and counted as 0', () => {
    const price = kitPrice({ antenna: { name: 'Whip', costUsd: 12 }, mast: null, feedline: null, feedlineLengthM: 3, connectors: [{ name: 'arrestor', costUsd: undefined, count: 1 }] });
    expect(price.totalUsd).toBe(12);
    expect(price.unpriced).toEqual(['arrestor']);
    expect(price.lines.some((l) => l.part === 'feedline')).toBe(false); // no feedline: its length is not priced
  });
});

describe('mastForHeight', () => {
  it('the named mast wins; else the cheapest catalog mast reaching the height; none below 0.5 m', () => {
    expect(mastForHeight(builtInMastOptions, 1.5)?.id).toBe('stake-1-5m');
    expect(mastForHeight(builtInMastOptions, 3)?.id).toBe('pole-3m');
    expect(mastForHeight(builtInMastOptions, 0.3)).toBeNull();
    expect(mastForHeight(builtInMastOptions, 1.5, 'roof-tripod-2m')?.id).toBe('roof-tripod-2m');
    expect(mastForHeight(builtInMastOptions, 40)).toBeNull();
  });
});
