// The one planning spread σ = √(σL² + σM² [+ σE²]) (server/planning/spread.ts).
import { describe, expect, it } from 'vitest';
import { DEFAULT_MODEL_SIGMA_DB, p1812LocationHeightFactor, p1812LocationSigmaDb, planningSpread, type SpreadSettings } from '../../../server/planning/spread.ts';
import { deliveryProbability } from '../../../server/planning/probability.ts';

const defaults: SpreadSettings = { locationWidthM: 100, planLocationSigmaDb: null, planModelSigmaDb: null, calibration: null };

describe('ITU-R P.1812-8 §4.8 location variability with its height factor', () => {
  it('σL = (0.024·f + 0.52)·w_a^0.28 (f GHz, w_a m): 868 MHz, 100 m → (0.020832 + 0.52)·3.63078 = 1.9636 dB', () => {
    expect(p1812LocationSigmaDb(868, 100)).toBeCloseTo((0.024 * 0.868 + 0.52) * 100 ** 0.28, 12);
    expect(p1812LocationSigmaDb(868, 100)).toBeCloseTo(1.9636, 4);
  });
  it('height factor: 1 for h < R; 1 − (h − R)/10 for R ≤ h < R + 10; 0 for h ≥ R + 10 (§4.8)', () => {
    expect(p1812LocationHeightFactor(5, 10)).toBe(1);
    expect(p1812LocationHeightFactor(10, 10)).toBe(1);
    expect(p1812LocationHeightFactor(12.5, 10)).toBeCloseTo(0.75, 12);
    expect(p1812LocationHeightFactor(19.999, 10)).toBeCloseTo(0.0001, 6);
    expect(p1812LocationHeightFactor(20, 10)).toBe(0);
    expect(p1812LocationHeightFactor(1.5, 0)).toBeCloseTo(0.85, 12);
    // σL falls toward 0 as the antenna rises to 10 m above the clutter.
    const sigmas = [0, 2, 4, 6, 8, 10].map((above) => p1812LocationSigmaDb(915, 100, 15 + above, 15));
    for (let i = 1; i < sigmas.length; i++) expect(sigmas[i]).toBeLessThan(sigmas[i - 1]);
    expect(sigmas.at(-1)).toBe(0);
  });
});

describe('planningSpread', () => {
  it('uncalibrated default: σ = √(σL² + σM²) with σM 6 dB (from memory), ≥ 5 dB, source "default"', () => {
    const s = planningSpread({ ...defaults, frequencyMhz: 868, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 10 });
    const sigmaL = p1812LocationSigmaDb(868, 100);
    expect(s.sigmaLocationDb).toBeCloseTo(sigmaL, 12);
    expect(s.sigmaModelDb).toBe(DEFAULT_MODEL_SIGMA_DB);
    expect(s.sigmaDb).toBeCloseTo(Math.sqrt(sigmaL ** 2 + 36), 12);
    expect(s.sigmaDb).toBeGreaterThanOrEqual(5);
    expect(s.sigmaSource).toBe('default');
    expect(s.biasDb).toBe(0);
  });
  it('a mast 10 m above the clutter: σL 0, σ = σM; indoor spread adds in quadrature', () => {
    const s = planningSpread({ ...defaults, frequencyMhz: 915, nodeAntennaHeightAglM: 12, nodeClutterHeightM: 0, environmentSigmaDb: 8 });
    expect(s.sigmaLocationDb).toBe(0);
    expect(s.sigmaDb).toBeCloseTo(10, 12);
  });
  it('plan settings win and say so: source "plan"', () => {
    const s = planningSpread({ ...defaults, planLocationSigmaDb: 3, planModelSigmaDb: 4, frequencyMhz: 915, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0 });
    expect(s).toMatchObject({ sigmaDb: 5, sigmaSource: 'plan', sigmaLocationDb: 3, sigmaModelDb: 4 });
    expect(planningSpread({ ...defaults, planModelSigmaDb: 8, frequencyMhz: 915, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0 }).sigmaSource).toBe('plan');
  });
  it('an applied calibration replaces σL and σM by its fitted spread and carries its bias: source "calibration"', () => {
    const s = planningSpread({ ...defaults, planModelSigmaDb: 9, calibration: { biasDb: -2.5, sigmaDb: 4.2 }, frequencyMhz: 915, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0 });
    expect(s).toEqual({ sigmaDb: 4.2, sigmaSource: 'calibration', sigmaLocationDb: 0, sigmaModelDb: 4.2, sigmaEnvironmentDb: 0, biasDb: -2.5 });
    // Indoors too: the fitted residuals already hold the environment's spread (not added twice).
    const indoor = planningSpread({ ...defaults, calibration: { biasDb: -2.5, sigmaDb: 4.2 }, frequencyMhz: 915, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 0, environmentSigmaDb: 8 });
    expect(indoor.sigmaDb).toBe(4.2);
  });
  it('at a 3 dB margin the uncalibrated answer is no longer the optimistic 93.6 % of σ = 1.97 dB', () => {
    const s = planningSpread({ ...defaults, frequencyMhz: 915, nodeAntennaHeightAglM: 1.5, nodeClutterHeightM: 10 });
    expect(deliveryProbability(3, 1.968)).toBeCloseTo(0.936, 3);
    expect(deliveryProbability(3, s.sigmaDb)).toBeLessThan(0.7);
  });
});
