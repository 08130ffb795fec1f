import { describe, expect, it } from 'vitest';
import { estimateBattery, txCurrentMa } from '../../../server/radio/battery.ts';
import { builtInMastOptions, findMastOption } from '../../../server/radio/masts.ts';

describe('battery estimate (stated assumptions; TX currents SX1262-class typical values, from memory)', () => {
  it('2600 mAh, 24 messages/day of 100 ms at 45 mA, 5 µA sleep → 0.2312 mAh/day, about 24.6 years (hand-computed)', () => {
    // TX 24·45·100 ms = 0.03 mAh; RX 24·5·200 ms = 0.00667; sensor 24·10·50 ms = 0.00333;
    // sleep 0.005 mA·(24 h − 0.00233 h) = 0.11999; self-discharge 26 mAh/365.25 = 0.07118.
    const e = estimateBattery({ capacityMah: 2600, messagesPerDay: 24, timeOnAirMs: 100, txCurrentMa: 45 });
    expect(e.breakdownMahPerDay.transmit).toBeCloseTo(0.03, 9);
    expect(e.chargePerDayMah).toBeCloseTo(0.23117, 4);
    expect(e.lifeDays).toBeCloseTo(2080 / 0.231172, 0);
    expect(e.lifeYears).toBeCloseTo(24.63, 1);
    expect(e.assumptions.length).toBeGreaterThanOrEqual(6);
    expect(e.warnings.join(' ')).toMatch(/exceeds 10 years/);
    expect(e.warnings.join(' ')).toMatch(/sleep current dominates/);
  });
  it('more messages or longer airtime shorten the life', () => {
    const a = estimateBattery({ capacityMah: 2600, messagesPerDay: 24, timeOnAirMs: 100 });
    const b = estimateBattery({ capacityMah: 2600, messagesPerDay: 96, timeOnAirMs: 1300 });
    expect(b.lifeDays).toBeLessThan(a.lifeDays / 5);
  });
  it('TX current interpolates the table (14 dBm 45 mA, 17 dBm 58 mA → 15.5 dBm 51.5 mA) and clamps at its ends', () => {
    expect(txCurrentMa(15.5)).toBeCloseTo(51.5, 9);
    expect(txCurrentMa(30)).toBe(118);
  });
  it('bad inputs name the field', () => {
    expect(() => estimateBattery({ capacityMah: 0, messagesPerDay: 1, timeOnAirMs: 10 })).toThrow(/capacityMah/);
    expect(() => estimateBattery({ capacityMah: 100, messagesPerDay: -1, timeOnAirMs: 10 })).toThrow(/messagesPerDay/);
  });
});

describe('mast options', () => {
  it('unique ids, heights and illustrative prices, work-at-height and power-line cautions on every option', () => {
    const ids = builtInMastOptions.map((m) => m.id);
    expect(new Set(ids).size).toBe(ids.length);
    for (const m of builtInMastOptions) {
      expect(m.heightM).toBeGreaterThan(0);
      expect(m.costUsd).toBeGreaterThan(0);
      expect(m.priceNote).toBe('illustrative list price, not a quote');
      expect(m.cautions.join(' ')).toMatch(/fall protection/);
      expect(m.cautions.join(' ')).toMatch(/power lines/);
    }
    expect(findMastOption('telescopic-6m').heightM).toBe(6);
    expect(() => findMastOption('space-elevator')).toThrow(/unknown mast/);
  });
});
