// Fast path methods and installer geometry, each check beside its source.
import { describe, expect, it } from 'vitest';
import { bullingtonLossDb } from '../../../server/propagation/bullington.ts';
import { deygoutLossDb } from '../../../server/propagation/deygout.ts';
import { fresnelParameter, knifeEdgeLossDb } from '../../../server/propagation/knife-edge.ts';
import { analysePathGeometry, earthBulgeM, fresnelZoneRadiusM } from '../../../server/propagation/path-geometry.ts';

const NO_CURVATURE_KM = 1e12; // effective radius so large the earth is flat

describe('knife edge J(v), ITU-R P.526-16 Eq. (31)', () => {
  it('J(0) ≈ 6.0 dB (P.526 §4.1: the grazing edge halves the field)', () => {
    expect(knifeEdgeLossDb(0)).toBeGreaterThan(5.9);
    expect(knifeEdgeLossDb(0)).toBeLessThan(6.1);
  });
  it('J(−0.78) ≈ 0 dB (P.526 Eq. (31) lower limit)', () => {
    expect(Math.abs(knifeEdgeLossDb(-0.78))).toBeLessThan(0.05);
  });
  it('J(2.4) ≈ 20.54 dB (Eq. (31) hand-computed: 6.9 + 20·log10(√(2.3²+1)+2.3))', () => {
    expect(knifeEdgeLossDb(2.4)).toBeCloseTo(20.54, 2);
  });
});

describe('Fresnel zone and earth bulge', () => {
  it('r1 = 17.32·√(d1·d2/(f·d)) m, d in km, f in GHz (ITU-R P.530 Eq. (2), constant from memory): 5 km + 5 km at 868 MHz → 29.39 m', () => {
    expect(fresnelZoneRadiusM(5, 5, 868)).toBeCloseTo(29.39, 1);
    // Off-centre point: 1 km and 9 km at 433 MHz → 17.32·√(9/(0.433·10)) = 24.97 m
    expect(fresnelZoneRadiusM(1, 9, 433)).toBeCloseTo(24.97, 1);
  });
  it('n-th zone scales with √n (definition of the Fresnel zones)', () => {
    expect(fresnelZoneRadiusM(2, 3, 915, 4) / fresnelZoneRadiusM(2, 3, 915, 1)).toBeCloseTo(2, 6);
  });
  it('earth bulge d1·d2/(2·k·a): 10 km + 10 km, k = 4/3, a = 6371 km → 5.886 m (hand-computed)', () => {
    expect(earthBulgeM(10, 10)).toBeCloseTo(5.886, 3);
    expect(earthBulgeM(10, 10, 1)).toBeCloseTo(7.848, 3);
  });
});

describe('Bullington, ITU-R P.526-16 §4.5.1', () => {
  // One 50 m edge at mid-path of 10 km, both antennas 10 m above a flat earth, λ = 0.3 m.
  const d = Float64Array.from([0, 5, 10]);
  const h = Float64Array.from([0, 50, 0]);
  it('single edge, hand-computed: ν = 2.0656, J = 19.30 dB, Lb = J + (1 − e^(−J/6))·(10 + 0.02·d) = 29.10 dB', () => {
    expect(bullingtonLossDb(d, h, 3, 10, 10, NO_CURVATURE_KM, 0.3)).toBeCloseTo(29.1, 1);
  });
  it('its uncorrected part equals the knife-edge J(ν) of P.526 Eq. (26) for the same edge', () => {
    const v = fresnelParameter(40, 5000, 5000, 0.3);
    const j = knifeEdgeLossDb(v);
    const lb = bullingtonLossDb(d, h, 3, 10, 10, NO_CURVATURE_KM, 0.3);
    expect(lb - (1 - Math.exp(-j / 6)) * 10.2).toBeCloseTo(j, 6);
  });
  it('earth curvature adds loss: the same edge on a 4/3-earth loses more than on a flat earth', () => {
    const curved = bullingtonLossDb(d, h, 3, 10, 10, (4 / 3) * 6371, 0.3);
    expect(curved).toBeGreaterThan(bullingtonLossDb(d, h, 3, 10, 10, NO_CURVATURE_KM, 0.3));
  });
  it('a clear line of sight far above the terrain has no diffraction loss (J = 0 for ν ≤ −0.78)', () => {
    expect(bullingtonLossDb(d, Float64Array.from([0, 0, 0]), 3, 500, 500, NO_CURVATURE_KM, 0.3)).toBe(0);
  });
});

describe('Deygout (up to three edges, J(ν) of P.526 Eq. (31) per edge)', () => {
  it('one edge: the loss is J(ν) of that edge (4/3 earth bulge included)', () => {
    const bulge = earthBulgeM(5, 5);
    const lambda = 299_792_458 / 1e9;
    const v = fresnelParameter(40 + bulge, 5000, 5000, lambda);
    const r = deygoutLossDb([0, 5, 10], [0, 50, 0], 10, 10, 1000);
    expect(r.edgeIndices).toEqual([1]);
    expect(r.lossDb).toBeCloseTo(knifeEdgeLossDb(v), 6);
  });
  it('two equal edges cost more than one, and knife-edge mode keeps only the main edge', () => {
    const d = [0, 3, 7, 10];
    const g = [0, 60, 60, 0];
    const three = deygoutLossDb(d, g, 10, 10, 900);
    const one = deygoutLossDb(d, g, 10, 10, 900, 4 / 3, 1);
    expect(three.edgeIndices.length).toBe(2);
    expect(one.edgeIndices.length).toBe(1);
    expect(three.lossDb).toBeGreaterThan(one.lossDb + 5);
  });
});

describe('path geometry for installers', () => {
  it('finds the worst Fresnel clearance and where it is; LoS flag follows the ray', () => {
    // 10 km at 868 MHz, antennas 30 m up; a 20 m hill at 4 km. Clearance there: ray 30 m − (20 m + bulge).
    const g = analysePathGeometry({
      distanceKm: [0, 2, 4, 6, 8, 10],
      groundM: [0, 0, 20, 0, 0, 0],
      txHeightAglM: 30,
      rxHeightAglM: 30,
      frequencyMhz: 868,
    });
    const bulge = earthBulgeM(4, 6);
    const r1 = fresnelZoneRadiusM(4, 6, 868);
    expect(g.lineOfSight).toBe(true);
    expect(g.worstDistanceKm).toBe(4);
    expect(g.worstClearanceRatio).toBeCloseTo((30 - 20 - bulge) / r1, 9);
    expect(g.fresnelUpperM[2] - g.rayM[2]).toBeCloseTo(r1, 9);
    expect(g.obstructions[0].distanceKm).toBe(4);
    const blocked = analysePathGeometry({ distanceKm: [0, 5, 10], groundM: [0, 40, 0], txHeightAglM: 30, rxHeightAglM: 30, frequencyMhz: 868 });
    expect(blocked.lineOfSight).toBe(false);
    expect(blocked.worstClearanceRatio).toBeLessThan(0);
  });
  it('clutter on the path counts as an obstacle', () => {
    const bare = analysePathGeometry({ distanceKm: [0, 5, 10], groundM: [0, 0, 0], txHeightAglM: 15, rxHeightAglM: 15, frequencyMhz: 868 });
    const wooded = analysePathGeometry({ distanceKm: [0, 5, 10], groundM: [0, 0, 0], clutterM: [0, 15, 0], txHeightAglM: 15, rxHeightAglM: 15, frequencyMhz: 868 });
    expect(bare.lineOfSight).toBe(true);
    expect(wooded.lineOfSight).toBe(false);
  });
});
