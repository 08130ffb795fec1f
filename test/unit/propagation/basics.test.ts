import { describe, expect, it } from 'vitest';
import { freeSpaceLossDb } from '../../../server/propagation/free-space.ts';
import { fresnelParameter, knifeEdgeLossDb } from '../../../server/propagation/knife-edge.ts';

describe('free space, ITU-R P.525-4 Eq. (9)', () => {
  it('1 km at 1000 MHz is 92.45 dB (32.45 + 60)', () => {
    expect(freeSpaceLossDb(1, 1000)).toBeCloseTo(92.45, 2);
  });
  it('doubling the distance adds 6.02 dB (20·log10 2)', () => {
    expect(freeSpaceLossDb(20, 915) - freeSpaceLossDb(10, 915)).toBeCloseTo(6.0206, 4);
  });
});

describe('knife edge, ITU-R P.526-16 Eq. (31)', () => {
  it('J(0) ≈ 6.0 dB (P.526 §4.1)', () => {
    expect(knifeEdgeLossDb(0)).toBeCloseTo(6.03, 2);
  });
  it('J(−0.78) ≈ 0 (lower limit of Eq. (31))', () => {
    expect(Math.abs(knifeEdgeLossDb(-0.78))).toBeLessThan(0.05);
    expect(knifeEdgeLossDb(-2)).toBe(0);
  });
  it('v from Eq. (26): h = 10 m, d1 = d2 = 1 km, λ = 0.3277 m (915 MHz) → v = 1.105 (hand-computed)', () => {
    const v = fresnelParameter(10, 1000, 1000, 299_792_458 / 915e6);
    expect(v).toBeCloseTo(1.105, 3);
  });
});
