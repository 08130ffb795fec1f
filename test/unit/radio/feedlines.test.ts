import { describe, expect, it } from 'vitest';
import {
  builtInConnectors,
  builtInFeedlines,
  connectorLossDb,
  feedlineAttenuationDbPer100m,
  feedlineLossDb,
  findConnector,
  findFeedline,
  fitAttenuation,
} from '../../../server/radio/feedlines.ts';

describe('feedlines: attenuation tables (published cable tables, from memory) and the a·√f + b·f model', () => {
  it('ships the generic designations the issue names', () => {
    expect(builtInFeedlines.map((f) => f.id)).toEqual(['rg-174', 'rg-58', 'rg-8x', 'rg-213', 'low-loss-10mm', 'low-loss-half-inch']);
    for (const f of builtInFeedlines) {
      expect(f.source).toMatch(/from memory/);
      expect(f.priceNote).toMatch(/illustrative list price, not a quote/);
    }
  });

  it('the least-squares fit recovers known coefficients from exact points (a = 2, b = 0.01)', () => {
    const points = [100, 400, 900, 1600].map((f) => ({ frequencyMhz: f, lossDbPer100m: 2 * Math.sqrt(f) + 0.01 * f }));
    const fit = fitAttenuation(points);
    expect(fit.a).toBeCloseTo(2, 9);
    expect(fit.b).toBeCloseTo(0.01, 9);
  });

  it('the fit keeps both coefficients ≥ 0 (falls back to one term when the table bends the other way)', () => {
    const fit = fitAttenuation([
      { frequencyMhz: 100, lossDbPer100m: 10 },
      { frequencyMhz: 900, lossDbPer100m: 20 },
    ]);
    expect(fit.a).toBeGreaterThanOrEqual(0);
    expect(fit.b).toBeGreaterThanOrEqual(0);
  });

  it('each fitted curve passes within 4 % of every table point it was fitted to', () => {
    for (const f of builtInFeedlines) {
      for (const p of f.table) {
        expect(Math.abs(feedlineAttenuationDbPer100m(f, p.frequencyMhz) / p.lossDbPer100m - 1)).toBeLessThan(0.04);
      }
    }
  });

  it('generic 10 mm low-loss foam: 20 m at 900 MHz ≈ 2.56 dB (12.8 dB/100 m table point)', () => {
    expect(feedlineLossDb(findFeedline('low-loss-10mm'), 900, 20)).toBeCloseTo(2.56, 1);
  });

  it('RG-8X class at 900 MHz ≈ 10.5 dB per 100 ft (34.5 dB/100 m; the commonly quoted figure, from memory), not 12.3', () => {
    const perHundredFeet = feedlineAttenuationDbPer100m(findFeedline('rg-8x'), 900) * 0.3048;
    expect(perHundredFeet).toBeGreaterThan(10.2);
    expect(perHundredFeet).toBeLessThan(10.8);
    expect(findFeedline('rg-8x').source).toMatch(/from memory/);
  });

  it('ordering at 868 MHz matches the cable classes: RG-174 > RG-58 > RG-8X > RG-213 > 10 mm foam > 1/2-inch foam', () => {
    const losses = builtInFeedlines.map((f) => feedlineAttenuationDbPer100m(f, 868));
    for (let i = 1; i < losses.length; i++) expect(losses[i]).toBeLessThan(losses[i - 1]);
  });

  it('loss grows with frequency and is proportional to length; 0 m loses nothing', () => {
    const rg58 = findFeedline('rg-58');
    expect(feedlineLossDb(rg58, 915, 10)).toBeGreaterThan(feedlineLossDb(rg58, 433, 10));
    expect(feedlineLossDb(rg58, 915, 30)).toBeCloseTo(3 * feedlineLossDb(rg58, 915, 10), 9);
    expect(feedlineLossDb(rg58, 915, 0)).toBe(0);
    expect(() => feedlineLossDb(rg58, 915, -1)).toThrow(/length/);
    expect(() => feedlineLossDb(rg58, 0, 1)).toThrow(/frequency/);
  });

  it('connector losses add per mated pair (common practice ≈ 0.1 dB for N/SMA)', () => {
    expect(builtInConnectors.length).toBeGreaterThanOrEqual(4);
    expect(connectorLossDb([{ connector: findConnector('n-type'), count: 2 }, { connector: findConnector('surge-arrestor'), count: 1 }])).toBeCloseTo(0.4, 9);
    expect(() => findConnector('bnc-x')).toThrow(/unknown connector/);
    expect(() => findFeedline('rg-6')).toThrow(/unknown feedline/);
  });
});
