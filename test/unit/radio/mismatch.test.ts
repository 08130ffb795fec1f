import { describe, expect, it } from 'vitest';
import { mismatchFromReflection, mismatchFromVswr, reflectionFromReturnLossDb, vswrOfResistiveLoad } from '../../../server/radio/mismatch.ts';

describe('mismatch from VSWR (standard RF relations: Γ = (S−1)/(S+1), RL = −20·log10|Γ|, ML = −10·log10(1−|Γ|²))', () => {
  it('VSWR 2.0 → Γ 0.333, return loss 9.54 dB, mismatch loss 0.51 dB', () => {
    const m = mismatchFromVswr(2);
    expect(m.reflectionCoefficient).toBeCloseTo(0.3333, 4);
    expect(m.returnLossDb).toBeCloseTo(9.54, 2);
    expect(m.mismatchLossDb).toBeCloseTo(0.51, 2);
    expect(m.reflectedPowerPercent).toBeCloseTo(11.11, 2);
  });
  it('VSWR 1.5 → Γ 0.2, RL 13.98 dB, ML 0.177 dB; VSWR 3 → Γ 0.5, RL 6.02 dB, ML 1.249 dB (hand-computed)', () => {
    const a = mismatchFromVswr(1.5);
    expect(a.reflectionCoefficient).toBeCloseTo(0.2, 9);
    expect(a.returnLossDb).toBeCloseTo(13.979, 3);
    expect(a.mismatchLossDb).toBeCloseTo(0.177, 3);
    const b = mismatchFromVswr(3);
    expect(b.returnLossDb).toBeCloseTo(6.021, 3);
    expect(b.mismatchLossDb).toBeCloseTo(1.249, 3);
  });
  it('VSWR 1 is a perfect match: no mismatch loss, infinite return loss reported as null', () => {
    const m = mismatchFromVswr(1);
    expect(m.mismatchLossDb).toBe(0);
    expect(m.returnLossDb).toBeNull();
  });
  it('VSWR below 1 or not a number is rejected', () => {
    expect(() => mismatchFromVswr(0.9)).toThrow(/at least 1/);
    expect(() => mismatchFromVswr(Number.NaN)).toThrow(/VSWR/);
  });
  it('a 37 Ω quarter-wave ground plane on 50 Ω coax has VSWR 1.35 (50/37)', () => {
    expect(vswrOfResistiveLoad(37)).toBeCloseTo(1.351, 3);
    expect(vswrOfResistiveLoad(73)).toBeCloseTo(1.46, 2);
  });
});

describe('mismatch from a measured reflection coefficient (standard RF relations: VSWR = (1+|Γ|)/(1−|Γ|), |Γ| = 10^(−RL/20))', () => {
  it('|Γ| 1/3 → VSWR 2, RL 9.54 dB; |Γ| 0.5 → VSWR 3 (hand-computed)', () => {
    expect(mismatchFromReflection(1 / 3).vswr).toBeCloseTo(2, 12);
    expect(mismatchFromReflection(1 / 3).returnLossDb).toBeCloseTo(9.542, 3);
    expect(mismatchFromReflection(0.5).vswr).toBeCloseTo(3, 12);
    expect(mismatchFromReflection(0).returnLossDb).toBeNull();
  });
  it('round trip with mismatchFromVswr and with return loss', () => {
    for (const vswr of [1.05, 1.5, 2.7, 10]) {
      const m = mismatchFromVswr(vswr);
      expect(mismatchFromReflection(m.reflectionCoefficient).vswr).toBeCloseTo(vswr, 9);
      expect(reflectionFromReturnLossDb(m.returnLossDb ?? 0)).toBeCloseTo(m.reflectionCoefficient, 12);
    }
  });
  it('|Γ| of 1 or more, negative, or a non-positive return loss is rejected', () => {
    expect(() => mismatchFromReflection(1)).toThrow(/below 1/);
    expect(() => mismatchFromReflection(-0.1)).toThrow(/\|Γ\|/);
    expect(() => reflectionFromReturnLossDb(0)).toThrow(/positive/);
  });
});
