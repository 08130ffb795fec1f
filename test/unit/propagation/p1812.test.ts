// ITU-R P.1812-8 pieces that the SG3 examples do not exercise, checked against
// tables, hand computation or physical behaviour named beside each check.
import { describe, expect, it } from 'vitest';
import { P1812Predictor, predictP1812, type P1812Input } from '../../../server/propagation/p1812/index.ts';
import { fieldStrength1kwDbuvm, fieldStrengthDbuvm, locationCorrectionDb } from '../../../server/propagation/p1812/location-variability.ts';
import { medianEffectiveRadiusKm, zoneStatistics } from '../../../server/propagation/p1812/radio-climate.ts';
import { sphericalEarthLossDb } from '../../../server/propagation/p1812/spherical-earth.ts';
import { inverseComplementaryNormal } from '../../../server/propagation/p1812/statistics.ts';

function flatPath(lengthKm: number, stepKm: number, zone: number, heightM = 0): Pick<P1812Input, 'distanceKm' | 'heightM' | 'clutterHeightM' | 'zone'> {
  const n = Math.round(lengthKm / stepKm) + 1;
  const distanceKm = new Float64Array(n);
  for (let i = 0; i < n; i++) distanceKm[i] = i * stepKm;
  return { distanceKm, heightM: new Float64Array(n).fill(heightM), clutterHeightM: new Float64Array(n), zone: new Uint8Array(n).fill(zone) };
}

function baseInput(overrides: Partial<P1812Input> = {}): P1812Input {
  return {
    frequencyMhz: 868,
    timePercent: 50,
    locationPercent: 50,
    locationSigmaDb: 0,
    polarisation: 'horizontal',
    deltaN: 45,
    n0: 325,
    txCoastDistanceKm: 500,
    rxCoastDistanceKm: 500,
    txHeightAglM: 20,
    rxHeightAglM: 2,
    pathCentreLatDeg: 45,
    ...flatPath(40, 0.1, 4, 200),
    ...overrides,
  };
}

describe('I(x), inverse complementary normal of P.1812-8 (checked against standard normal tables)', () => {
  it('I(0.5) ≈ 0, I(0.1587) ≈ 1, I(0.01) ≈ 2.326, I(0.99) ≈ −2.326', () => {
    expect(Math.abs(inverseComplementaryNormal(0.5))).toBeLessThan(1e-3);
    expect(inverseComplementaryNormal(0.158655)).toBeCloseTo(1, 2);
    expect(inverseComplementaryNormal(0.01)).toBeCloseTo(2.326, 2);
    expect(inverseComplementaryNormal(0.99)).toBeCloseTo(-2.326, 2);
  });
});

describe('location variability and field strength, P.1812-8 §4.8–4.9', () => {
  it('loss not exceeded at 90 % of locations with σL 5.5 dB is 1.2816·5.5 = 7.05 dB above the median (normal tables)', () => {
    expect(locationCorrectionDb(90, 5.5)).toBeCloseTo(7.05, 1);
    expect(locationCorrectionDb(10, 5.5)).toBeCloseTo(-7.05, 1);
    expect(locationCorrectionDb(50, 5.5)).toBe(0);
  });
  it('Eq. (70): Ep = 199.36 + 20·log10(f GHz) − Lb for 1 kW e.r.p.: 100 MHz, Lb 100 dB → 79.36 dBµV/m; 25 mW (14 dBm) is 46 dB less', () => {
    expect(fieldStrength1kwDbuvm(0.1, 100)).toBeCloseTo(79.36, 6);
    expect(fieldStrengthDbuvm(0.1, 100, 14)).toBeCloseTo(33.36, 6);
  });
  it('Lb never falls below Lb0p (Eq. (69)), even with a large negative location correction', () => {
    const r = predictP1812(baseInput({ locationPercent: 1, locationSigmaDb: 30, txHeightAglM: 300, rxHeightAglM: 300, ...flatPath(5, 0.05, 4, 0) }));
    expect(r.lbDb).toBeGreaterThanOrEqual(r.lb0pDb);
    expect(r.lbDb).toBe(r.lb0pDb);
  });
});

describe('radio climate, P.1812-8 §3', () => {
  it('ae = 6371·157/(157 − ΔN): ΔN 45 → 8930.8 km (hand-computed, matches the SG3 logs)', () => {
    expect(medianEffectiveRadiusKm(45)).toBeCloseTo(8930.78, 1);
  });
  it('zone lengths: each point stands for half a step either side', () => {
    const d = Float64Array.from([0, 1, 2, 3, 4, 5]);
    const z = Uint8Array.from([4, 4, 1, 1, 3, 4]);
    const s = zoneStatistics(d, z, 6);
    expect(s.omega).toBeCloseTo(2 / 5, 12);
    expect(s.dlmKm).toBeCloseTo(1.5, 12);
    expect(s.dtmKm).toBeCloseTo(1.5, 12);
  });
});

describe('spherical-earth diffraction, both polarisations (P.1812-8 §4.3)', () => {
  it('over sea at 100 MHz vertical polarisation diffracts with less loss than horizontal (surface-wave physics, from memory)', () => {
    const h = sphericalEarthLossDb(80, 10, 10, 8930.78, 0.1, 1, 'horizontal');
    const v = sphericalEarthLossDb(80, 10, 10, 8930.78, 0.1, 1, 'vertical');
    expect(h).toBeGreaterThan(0);
    expect(v).toBeLessThan(h);
  });
  it('over land at 3 GHz the polarisations nearly agree (|K| ≪ 1, β → 1)', () => {
    const h = sphericalEarthLossDb(80, 10, 10, 8930.78, 3, 0, 'horizontal');
    const v = sphericalEarthLossDb(80, 10, 10, 8930.78, 3, 0, 'vertical');
    expect(Math.abs(h - v)).toBeLessThan(0.5);
  });
  it('no loss with ample clearance over the smooth earth', () => {
    expect(sphericalEarthLossDb(5, 200, 200, 8930.78, 0.868, 0, 'horizontal')).toBe(0);
  });
});

describe('whole method behaviour', () => {
  it('on a transhorizon path the loss falls as the time percentage falls (anomalous propagation, P.1812-8 §4.5–4.6)', () => {
    const lb = [50, 10, 1].map((p) => predictP1812(baseInput({ timePercent: p, ...flatPath(150, 0.5, 4, 100) })).lbDb);
    expect(lb[0]).toBeGreaterThan(lb[1]);
    expect(lb[1]).toBeGreaterThan(lb[2]);
  });
  it('clutter between the terminals adds diffraction loss; clutter at the terminal points themselves is not an obstacle', () => {
    const bare = predictP1812(baseInput({ ...flatPath(3, 0.03, 4, 100) }));
    const cluttered = baseInput({ ...flatPath(3, 0.03, 4, 100) });
    cluttered.clutterHeightM.fill(15);
    const withClutter = predictP1812(cluttered);
    expect(withClutter.lbDb).toBeGreaterThan(bare.lbDb + 3);
    const endsOnly = baseInput({ ...flatPath(3, 0.03, 4, 100) });
    endsOnly.clutterHeightM[0] = 30;
    endsOnly.clutterHeightM[endsOnly.clutterHeightM.length - 1] = 30;
    expect(predictP1812(endsOnly).lbDb).toBeCloseTo(bare.lbDb, 9);
  });
  it('a reused predictor gives the same answers as fresh ones, for profiles of different lengths in any order', () => {
    const predictor = new P1812Predictor();
    const long = baseInput({ ...flatPath(60, 0.1, 4, 50) });
    const short = baseInput();
    short.heightM[100] = 260;
    const a = predictor.predict(long).lbDb;
    const b = predictor.predict(short).lbDb;
    expect(predictor.predict(long).lbDb).toBe(a);
    expect(b).toBe(predictP1812(short).lbDb);
  });
  it('a profile whose first distance is not 0 is measured from its first point', () => {
    const input = baseInput();
    const shifted = { ...input, distanceKm: input.distanceKm.map((d) => d + 7) };
    expect(predictP1812(shifted).lbDb).toBeCloseTo(predictP1812(input).lbDb, 9);
  });
});

describe('P1812Predictor checks its input at the door', () => {
  it('refuses short profiles, mismatched arrays, out-of-range frequency/time and non-increasing distances', () => {
    const ok = baseInput();
    expect(() => predictP1812({ ...ok, ...flatPath(0.1, 0.1, 4) })).toThrow(/at least 3 points/);
    expect(() => predictP1812({ ...ok, zone: new Uint8Array(3) })).toThrow(/^zone:/);
    expect(() => predictP1812({ ...ok, frequencyMhz: 7000 })).toThrow(/^frequencyMhz:/);
    expect(() => predictP1812({ ...ok, timePercent: 0.1 })).toThrow(/^timePercent:/);
    const d = ok.distanceKm.slice();
    d[5] = d[4];
    expect(() => predictP1812({ ...ok, distanceKm: d })).toThrow(/^distanceKm\[5\]/);
  });
});
