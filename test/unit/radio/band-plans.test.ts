import { describe, expect, it } from 'vitest';
import {
  bandPlans,
  eirpFromErpDbm,
  erpFromEirpDbm,
  findBandPlan,
  limitEirpDbm,
  limitForChannel,
  lorawanPhyPayloadBytes,
  maxAppPayloadBytes,
} from '../../../server/radio/band-plans.ts';
import { timeOnAirMs } from '../../../server/radio/lora-phy.ts';

const limit = (planId: string, limitId: string) => {
  const found = findBandPlan(planId).limits.find((l) => l.id === limitId);
  if (!found) throw new Error(`no limit ${limitId}`);
  return found;
};

describe('band plans: every limit names its source', () => {
  it('covers US, EU 868, EU 433, AU, AS, IN, KR', () => {
    expect(bandPlans.map((p) => p.id)).toEqual(['us-902-928', 'eu-863-870', 'eu-433', 'au-915-928', 'as-923', 'in-865-867', 'kr-920-923']);
  });
  it('every limit has a source, exactly one of EIRP/ERP, and limits lie within their band', () => {
    for (const plan of bandPlans) {
      expect(plan.cautions.join(' ')).toMatch(/not legal advice/);
      for (const l of plan.limits) {
        expect(l.source.length).toBeGreaterThan(20);
        expect((l.maxEirpDbm === undefined) !== (l.maxErpDbm === undefined)).toBe(true);
        expect(l.fromMhz).toBeGreaterThanOrEqual(plan.fromMhz);
        expect(l.toMhz).toBeLessThanOrEqual(plan.toMhz);
        // Only the US figures are checked against the regulation text here; the rest say where they come from.
        if (plan.id !== 'us-902-928') expect(l.source).toMatch(/from memory|not sourced/);
      }
    }
  });
});

describe('US 902–928 MHz, 47 CFR §15.247', () => {
  it('1 W conducted (§15.247(b)(2)/(b)(3)) with 6 dBi before reduction (§15.247(b)(4)) → 36 dBm EIRP', () => {
    for (const id of ['fhss', 'dts']) {
      const l = limit('us-902-928', id);
      expect(l.maxConductedDbm).toBe(30);
      expect(l.antennaGainAllowanceDbi).toBe(6);
      expect(l.maxEirpDbm).toBe(36);
    }
    const wide = limit('us-902-928', 'fhss-wide');
    expect((wide.maxEirpDbm ?? 0) - (wide.maxConductedDbm ?? 0)).toBe(6);
    expect(limit('us-902-928', 'dts').source).toMatch(/§15\.247\(b\)\(3\)/);
    expect(limit('us-902-928', 'fhss').source).toMatch(/§15\.247\(b\)\(4\)/);
  });
  it('hopping systems: 400 ms average occupancy per channel within 20 s (§15.247(a)(1)(i)); 500 kHz digital modulation has none', () => {
    const fhss = limit('us-902-928', 'fhss');
    expect(fhss.dwellTimeMs).toBe(400);
    expect(fhss.dwellWindowS).toBe(20);
    expect(fhss.source).toMatch(/§15\.247\(a\)\(1\)\(i\)/);
    expect(limit('us-902-928', 'dts').dwellTimeMs).toBeNull();
  });
  it('a 125 kHz channel falls under hopping, a 500 kHz channel under digital modulation', () => {
    const us = findBandPlan('us-902-928');
    expect(limitForChannel(us, 902.3, 125)?.id).toBe('fhss');
    expect(limitForChannel(us, 903.0, 500)?.id).toBe('dts');
    expect(limitForChannel(us, 901.9, 125)).toBeUndefined();
    // 250 kHz: hopping with 25–49 channels, 0.25 W (§15.247(b)(2)), 0.4 s in 10 s (§15.247(a)(1)(i)).
    const wide = limitForChannel(us, 915, 250);
    expect(wide?.id).toBe('fhss-wide');
    expect(wide?.maxConductedDbm).toBe(24);
    expect(wide?.dwellWindowS).toBe(10);
  });
  it('LoRaWAN US915 DR0 maximum MACPayload 19 B is exactly what fits the 400 ms dwell at SF10/125 (Regional Parameters vs §15.247(a)(1)(i))', () => {
    const dr0 = findBandPlan('us-902-928').lorawan?.dataRates.find((r) => r.dr === 0);
    expect(dr0?.spreadingFactor).toBe(10);
    const m = dr0?.maxMacPayloadBytes ?? 0;
    // PHYPayload = MHDR (1) + MACPayload + MIC (4).
    expect(timeOnAirMs({ spreadingFactor: 10, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: m + 5 }).timeOnAirMs).toBeLessThanOrEqual(400);
    expect(timeOnAirMs({ spreadingFactor: 10, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: m + 6 }).timeOnAirMs).toBeGreaterThan(400);
  });
});

describe('EU 863–870 MHz, ERC Recommendation 70-03 Annex 1 / ETSI EN 300 220 (from memory)', () => {
  it('h1.5 868.0–868.6 MHz: 25 mW ERP (≈ 14 dBm) at 1 %', () => {
    const l = limit('eu-863-870', 'h1.5');
    expect([l.fromMhz, l.toMhz]).toEqual([868, 868.6]);
    expect(l.maxErpDbm).toBeCloseTo(10 * Math.log10(25), 0);
    expect(l.dutyCyclePercent).toBe(1);
    expect(l.source).toMatch(/70-03/);
    expect(l.source).toMatch(/EN 300 220/);
  });
  it('h1.7 869.4–869.65 MHz: 500 mW ERP (≈ 27 dBm) at 10 %; h1.6 868.7–869.2 MHz at 0.1 %', () => {
    const l = limit('eu-863-870', 'h1.7');
    expect([l.fromMhz, l.toMhz]).toEqual([869.4, 869.65]);
    expect(l.maxErpDbm).toBeCloseTo(10 * Math.log10(500), 0);
    expect(l.dutyCyclePercent).toBe(10);
    expect(limit('eu-863-870', 'h1.6').dutyCyclePercent).toBe(0.1);
  });
  it('ERP ↔ EIRP differ by 2.15 dB (gain of a half-wave dipole over isotropic)', () => {
    expect(eirpFromErpDbm(14)).toBeCloseTo(16.15, 9);
    expect(erpFromEirpDbm(16.15)).toBeCloseTo(14, 9);
    expect(limitEirpDbm(limit('eu-863-870', 'h1.7'))).toBeCloseTo(29.15, 9);
  });
  it('channels must sit wholly inside a sub-band: 868.1 → h1.5, 869.525 → h1.7, 868.65 (gap) → none, 868.55 at 125 kHz spills over → none', () => {
    const eu = findBandPlan('eu-863-870');
    expect(limitForChannel(eu, 868.1, 125)?.id).toBe('h1.5');
    expect(limitForChannel(eu, 869.525, 125)?.id).toBe('h1.7');
    expect(limitForChannel(eu, 868.65, 125)).toBeUndefined();
    expect(limitForChannel(eu, 868.55, 125)).toBeUndefined();
  });
  it('EU 433.05–434.79 MHz: 10 mW ERP, 10 %', () => {
    const l = limit('eu-433', '433');
    expect(l.maxErpDbm).toBe(10);
    expect(l.dutyCyclePercent).toBe(10);
  });
});

describe('LoRaWAN Regional Parameters channel plans (open specification, from memory)', () => {
  it('EU868: DR0 = SF12/125 … DR5 = SF7/125, DR6 = SF7/250, DR7 = FSK; defaults 868.1/868.3/868.5 MHz; RX2 869.525 MHz DR0; 16 dBm EIRP', () => {
    const p = findBandPlan('eu-863-870').lorawan;
    expect(p?.dataRates.slice(0, 7).map((r) => `${r.spreadingFactor}/${r.bandwidthKhz}`)).toEqual(['12/125', '11/125', '10/125', '9/125', '8/125', '7/125', '7/250']);
    expect(p?.dataRates[7].modulation).toBe('fsk');
    expect(p?.defaultChannels.map((c) => c.frequencyMhz)).toEqual([868.1, 868.3, 868.5]);
    expect(p?.rx2).toEqual({ frequencyMhz: 869.525, dr: 0 });
    expect(p?.defaultMaxEirpDbm).toBe(16);
    // Repeater-compatible payload table of the LoRaWAN Regional Parameters (from memory): M and N = M − 8.
    expect(p?.dataRates.map((r) => r.maxMacPayloadBytes)).toEqual([59, 59, 59, 123, 230, 230, 230, 230]);
    expect(p?.dataRates.map((r) => r.maxAppPayloadBytes)).toEqual([51, 51, 51, 115, 222, 222, 222, 222]);
    const eu433 = findBandPlan('eu-433').lorawan;
    expect(eu433?.dataRates.slice(0, 6).map((r) => [r.maxMacPayloadBytes, r.maxAppPayloadBytes])).toEqual([[59, 51], [59, 51], [59, 51], [123, 115], [230, 222], [230, 222]]);
  });
  it('US915: DR0–DR3 = SF10…SF7/125, DR4 = SF8/500, DR8–DR13 = SF12…SF7/500', () => {
    const p = findBandPlan('us-902-928').lorawan;
    const sf = (dr: number) => p?.dataRates.find((r) => r.dr === dr);
    expect([0, 1, 2, 3].map((dr) => sf(dr)?.spreadingFactor)).toEqual([10, 9, 8, 7]);
    expect(sf(4)).toMatchObject({ spreadingFactor: 8, bandwidthKhz: 500 });
    expect([8, 9, 10, 11, 12, 13].map((dr) => sf(dr)?.spreadingFactor)).toEqual([12, 11, 10, 9, 8, 7]);
    expect(p?.uplinkDwellTimeMs).toBe(400);
  });
  it('every default channel and RX2 channel of every plan lies inside a sub-band of its band plan', () => {
    for (const plan of bandPlans) {
      if (!plan.lorawan) continue;
      for (const c of plan.lorawan.defaultChannels) expect(limitForChannel(plan, c.frequencyMhz, c.bandwidthKhz), `${plan.id} ${c.frequencyMhz}`).toBeDefined();
      const rx2 = plan.lorawan.dataRates.find((r) => r.dr === plan.lorawan?.rx2.dr);
      expect(limitForChannel(plan, plan.lorawan.rx2.frequencyMhz, rx2?.bandwidthKhz ?? 125), `${plan.id} RX2`).toBeDefined();
    }
  });
  it('no data rate allows more than a LoRa frame holds: MACPayload + 5 B (MHDR + MIC) ≤ 255 B', () => {
    for (const plan of bandPlans) for (const r of plan.lorawan?.dataRates ?? []) if (r.maxMacPayloadBytes !== null) expect(r.maxMacPayloadBytes + 5).toBeLessThanOrEqual(255);
  });
});

describe('LoRaWAN frame overhead and payload limits (Regional Parameters, from memory)', () => {
  it('PHYPayload = application payload + 13 bytes without FOpts (MHDR 1, FHDR 7, FPort 1, MIC 4)', () => {
    expect(lorawanPhyPayloadBytes(11)).toBe(24);
    expect(lorawanPhyPayloadBytes(11, 3)).toBe(27);
    expect(() => lorawanPhyPayloadBytes(-1)).toThrow(/whole number/);
  });
  it('AS923 DR0 is not allowed under the 400 ms dwell limit; DR2 then carries 11 bytes', () => {
    const as = findBandPlan('as-923');
    expect(maxAppPayloadBytes(as, 0)).toBe(51);
    expect(maxAppPayloadBytes(as, 0, true)).toBeNull();
    expect(maxAppPayloadBytes(as, 2, true)).toBe(11);
    expect(() => maxAppPayloadBytes(as, 14)).toThrow(/DR14/);
  });
  it('AS923 dwell-limited DR2 (SF10/125) payload 11 B + 13 B overhead fits 400 ms, one byte more does not', () => {
    expect(timeOnAirMs({ spreadingFactor: 10, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: 24 }).timeOnAirMs).toBeLessThanOrEqual(400);
    expect(timeOnAirMs({ spreadingFactor: 10, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: 25 }).timeOnAirMs).toBeGreaterThan(400);
  });
});
