import { describe, expect, it } from 'vitest';
import { buildingEntryLossDb, buildingEntryLossSummary, inverseStandardNormal } from '../../../server/radio/building-entry-loss.ts';

// Check values are derived by hand from ITU-R P.2109-1 Eqs. (1)–(7) with the
// Table 1 coefficients as we remember them (from memory); the arithmetic is
// written out beside each check so it can be re-done on paper.
describe('building entry loss, ITU-R P.2109-1 Eq. (1)–(7), Table 1 (from memory)', () => {
  it('traditional, 1 GHz, P = 0.5, θ = 0: A = r = 12.64, B = w = 9.1, C = −3 → 10·log10(10^1.264 + 10^0.91 + 10^−0.3) = 14.313 dB', () => {
    expect(buildingEntryLossDb({ frequencyMhz: 1000, buildingType: 'traditional', probability: 0.5 })).toBeCloseTo(14.313, 3);
  });
  it('thermally efficient, 1 GHz, P = 0.5: A = 28.19, B = 27.8 → 31.011 dB', () => {
    expect(buildingEntryLossDb({ frequencyMhz: 1000, buildingType: 'thermally-efficient', probability: 0.5 })).toBeCloseTo(31.011, 3);
  });
  it('traditional, 1 GHz, θ = 20°: L_e = 0.212·20 = 4.24 dB (Eq. 3) → A = 16.88 → 17.588 dB', () => {
    expect(buildingEntryLossDb({ frequencyMhz: 1000, buildingType: 'traditional', probability: 0.5, elevationDeg: 20 })).toBeCloseTo(17.588, 3);
  });
  it('traditional, 915 MHz, P = 0.5: log f = −0.038579, L_h = 12.4979, μ2 = 9.2157 → 14.253 dB', () => {
    expect(buildingEntryLossDb({ frequencyMhz: 915, buildingType: 'traditional', probability: 0.5 })).toBeCloseTo(14.253, 3);
  });
  it('traditional, 915 MHz, P = 0.9: F⁻¹ = 1.28155, σ1 = 9.5228, σ2 = 4.5772 → A = 24.702, B = 15.082 → 25.158 dB', () => {
    // The P.1057 approximation of F⁻¹ is good to 4.5·10⁻⁴, i.e. < 0.01 dB here.
    expect(buildingEntryLossDb({ frequencyMhz: 915, buildingType: 'traditional', probability: 0.9 })).toBeCloseTo(25.158, 1);
  });
  it('thermally efficient buildings lose more than traditional ones at 915 MHz (P.2109 §3)', () => {
    const traditional = buildingEntryLossSummary(915, 'traditional');
    const efficient = buildingEntryLossSummary(915, 'thermally-efficient');
    expect(efficient.medianDb - traditional.medianDb).toBeGreaterThan(15);
    expect(efficient.sigmaDb).toBeGreaterThan(traditional.sigmaDb);
  });
  it('loss rises with the probability of not being exceeded', () => {
    const at = (probability: number) => buildingEntryLossDb({ frequencyMhz: 868, buildingType: 'traditional', probability });
    expect(at(0.1)).toBeLessThan(at(0.5));
    expect(at(0.5)).toBeLessThan(at(0.9));
  });
  it('rejects a frequency outside 80 MHz – 100 GHz and a probability outside (0, 1)', () => {
    expect(() => buildingEntryLossDb({ frequencyMhz: 50, buildingType: 'traditional', probability: 0.5 })).toThrow(/frequencyMhz/);
    expect(() => buildingEntryLossDb({ frequencyMhz: 915, buildingType: 'traditional', probability: 1 })).toThrow(/probability/);
  });
});

describe('inverse standard normal, ITU-R P.1057 rational approximation', () => {
  it('F⁻¹(0.5) = 0, F⁻¹(0.9) = 1.28155, F⁻¹(0.1) = −1.28155, F⁻¹(0.99) = 2.32635 (normal tables) within 4.5·10⁻⁴', () => {
    expect(Math.abs(inverseStandardNormal(0.5))).toBeLessThan(4.5e-4);
    expect(inverseStandardNormal(0.9)).toBeCloseTo(1.28155, 3);
    expect(inverseStandardNormal(0.1)).toBeCloseTo(-1.28155, 3);
    expect(inverseStandardNormal(0.99)).toBeCloseTo(2.32635, 3);
  });
});
