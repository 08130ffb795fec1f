import { describe, expect, it } from 'vitest';
import { resolveLinkSettings, PlanSettingsError } from '../../../server/planning/settings.ts';
import { hashOf, stableJson } from '../../../server/planning/node-links.ts';

const plan = (settings: unknown, extra: Partial<{ bandPlanId: string; locationSigmaDb: number | null; propagationMethod: string }> = {}) => ({
  bandPlanId: 'us-902-928',
  targetMarginDb: 10,
  locationSigmaDb: null,
  propagationMethod: 'p1812',
  settings,
  ...extra,
});

describe('plan link settings', () => {
  it('US 902–928 defaults: mean of the LoRaWAN US915 sub-band 1 channels (902.3…903.7 MHz) = 903.0 MHz, 125 kHz uplink SF7–SF10 (DR3…DR0, LoRaWAN Regional Parameters from memory), 36 dBm EIRP (47 CFR §15.247)', () => {
    const s = resolveLinkSettings(plan({}));
    expect(s.frequencyMhz).toBeCloseTo(903.0, 6);
    expect(s.uplinkSfs.map((e) => e.sf)).toEqual([7, 8, 9, 10]);
    expect(s.uplinkSfs.find((e) => e.sf === 10)?.maxAppPayloadBytes).toBe(11);
    expect(s.maxEirpDbm).toBe(36);
    expect(s.path.method).toBe('p1812');
    expect(s.targetDelivery).toBe(0.9);
    expect(s.spread).toEqual({ locationWidthM: 100, planLocationSigmaDb: null, planModelSigmaDb: null, calibration: null });
    expect(s.warnings).toEqual([]);
  });
  it('EU 863–870: SF7–SF12 on the default channels; an ERP limit is turned into EIRP (+2.15 dB)', () => {
    const s = resolveLinkSettings(plan({}, { bandPlanId: 'eu-863-870' }));
    expect(s.uplinkSfs.map((e) => e.sf)).toEqual([7, 8, 9, 10, 11, 12]);
    expect(s.maxEirpDbm).toBeCloseTo(14 + 2.15, 9);
  });
  it('plan σ wins over the default; wrong types fall back with a warning naming the key; an unknown band plan is an error', () => {
    const s = resolveLinkSettings(plan({ targetDelivery: 'high', pitExtraLossDb: 20, zone: 'moon' }, { locationSigmaDb: 6 }));
    expect(s.spread.planLocationSigmaDb).toBe(6);
    expect(resolveLinkSettings(plan({}), { calibration: { biasDb: -2, sigmaDb: 7 } }).spread.calibration).toEqual({ biasDb: -2, sigmaDb: 7 });
    expect(s.environment.pitExtraLossDb).toBe(20);
    expect(s.warnings.join(' ')).toMatch(/targetDelivery/);
    expect(s.warnings.join(' ')).toMatch(/zone/);
    expect(() => resolveLinkSettings(plan({}, { bandPlanId: 'mars' }))).toThrow(PlanSettingsError);
  });
});

describe('input hashes', () => {
  it('key order does not matter; any value change does', () => {
    expect(stableJson({ b: 1, a: [1, 2] })).toBe(stableJson({ a: [1, 2], b: 1 }));
    expect(hashOf({ a: 1, b: 2 })).toBe(hashOf({ b: 2, a: 1 }));
    expect(hashOf({ a: 1, b: 2 })).not.toBe(hashOf({ a: 1, b: 2.0001 }));
  });
});
