import { describe, expect, it } from 'vitest';
import { mismatchFromVswr, vswrOfResistiveLoad } from '../../../server/radio/mismatch.ts';

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
