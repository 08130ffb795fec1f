import { describe, expect, it } from 'vitest';
import { chiSquareCdf, chiSquareQuantile, gaussianSource, incompleteBeta, lnGamma, median, medianAbsoluteDeviation, mean, sampleSd, seededRandom, studentTCdf, studentTQuantile } from '../../../server/calibration/stats.ts';

describe('calibration statistics', () => {
  it('lnGamma matches Γ(n) = (n−1)! and Γ(½) = √π', () => {
    expect(lnGamma(5)).toBeCloseTo(Math.log(24), 12);
    expect(lnGamma(11)).toBeCloseTo(Math.log(3628800), 10);
    expect(lnGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
    expect(lnGamma(0.25)).toBeCloseTo(Math.log(3.625609908221908), 12); // Γ(¼) = 3.625609908… (from memory)
  });

  it('incomplete beta meets its closed forms: I_x(1, b) = 1 − (1−x)^b, I_x(a, 1) = x^a, I_½(a, a) = ½', () => {
    expect(incompleteBeta(0.3, 1, 4)).toBeCloseTo(1 - 0.7 ** 4, 12);
    expect(incompleteBeta(0.8, 3, 1)).toBeCloseTo(0.8 ** 3, 12);
    expect(incompleteBeta(0.5, 7.5, 7.5)).toBeCloseTo(0.5, 12);
  });

  it('Student t CDF: ν = 1 is the Cauchy distribution, F(t) = ½ + atan(t)/π', () => {
    for (const t of [-3, -0.5, 0, 1, 4]) expect(studentTCdf(t, 1)).toBeCloseTo(0.5 + Math.atan(t) / Math.PI, 10);
    // ν = 2 closed form: F(t) = ½ + t / (2√(2 + t²))
    for (const t of [-2, 0.7, 3]) expect(studentTCdf(t, 2)).toBeCloseTo(0.5 + t / (2 * Math.sqrt(2 + t * t)), 10);
  });

  // NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7.2 "Critical Values of the
  // Student's t Distribution", column 0.975 (two-sided 95 %), values as printed (3 decimals).
  it('t quantiles agree with the NIST/SEMATECH t table (0.975 column)', () => {
    const table: Array<[number, number]> = [
      [1, 12.706],
      [2, 4.303],
      [5, 2.571],
      [10, 2.228],
      [20, 2.086],
      [30, 2.042],
      [100, 1.984],
    ];
    for (const [dof, value] of table) expect(studentTQuantile(0.975, dof)).toBeCloseTo(value, 3);
    expect(studentTQuantile(0.025, 10)).toBeCloseTo(-2.228, 3);
  });

  // NIST/SEMATECH e-Handbook §1.3.6.7.4 "Critical Values of the Chi-Square Distribution"
  // (lower-tail 0.025 and upper-tail 0.025 = CDF 0.975), values as printed (3 decimals).
  it('chi-square quantiles agree with the NIST/SEMATECH chi-square table', () => {
    const table: Array<[number, number, number]> = [
      [1, 0.001, 5.024],
      [5, 0.831, 12.833],
      [10, 3.247, 20.483],
      [20, 9.591, 34.17],
      [100, 74.222, 129.561],
    ];
    for (const [dof, low, high] of table) {
      expect(chiSquareQuantile(0.025, dof)).toBeCloseTo(low, 3);
      expect(chiSquareQuantile(0.975, dof)).toBeCloseTo(high, 3);
    }
    // k = 2 is the exponential distribution: F(x) = 1 − e^(−x/2)
    expect(chiSquareCdf(3, 2)).toBeCloseTo(1 - Math.exp(-1.5), 12);
  });

  it('mean, SD, median and MAD of a known set', () => {
    const set = [2, 4, 4, 4, 5, 5, 7, 9]; // mean 5, Σ(x−5)² = 32
    expect(mean(set)).toBe(5);
    expect(sampleSd(set)).toBeCloseTo(Math.sqrt(32 / 7), 12);
    expect(median(set)).toBe(4.5);
    expect(medianAbsoluteDeviation(set)).toBe(0.5); // |dev| = 2.5,0.5,0.5,0.5,0.5,0.5,2.5,4.5 → median 0.5
  });

  it('the seeded source repeats and the Gaussian draws have mean 0 and SD 1', () => {
    const a = seededRandom(42);
    const b = seededRandom(42);
    expect([a(), a(), a()]).toEqual([b(), b(), b()]);
    const gauss = gaussianSource(seededRandom(7));
    const draws = Array.from({ length: 20000 }, gauss);
    expect(Math.abs(mean(draws))).toBeLessThan(0.03); // 4.2 standard errors of 1/√20000
    expect(Math.abs(sampleSd(draws) - 1)).toBeLessThan(0.02);
  });
});
