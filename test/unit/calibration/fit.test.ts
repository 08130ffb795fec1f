import { describe, expect, it } from 'vitest';
import { CalibrationInputError, crossValidate, distanceBand, fitCalibration, fitFigures, HUBER_K, huberLocation, type Residual } from '../../../server/calibration/fit.ts';
import { chiSquareQuantile, gaussianSource, MAD_TO_SIGMA, seededRandom, studentTQuantile } from '../../../server/calibration/stats.ts';

function residual(id: string, nodeId: string, residualDb: number, extra: Partial<Residual> = {}): Residual {
  return { readingId: id, nodeId, gatewayId: 'g1', measuredRssiDbm: -100 + residualDb, predictedRssiDbm: -100, distanceM: 1500, environment: 'outdoor', clutterClass: null, ...extra };
}

describe('calibration fit', () => {
  it('a symmetric set: bias = mean = median, σ = sample SD, t and chi-square intervals in closed form', () => {
    const values = [1, 2, 3, 4, 5, 6, 7]; // mean 4, Σ(x−4)² = 28, s = √(28/6)
    const { figures, outliers } = fitFigures(values.map((v, i) => residual(`r${i}`, `n${i}`, v)));
    expect(outliers).toEqual([]);
    expect(figures.biasDb).toBeCloseTo(4, 10);
    const s = Math.sqrt(28 / 6);
    expect(figures.sigmaDb).toBeCloseTo(s, 10);
    // t(0.975, 6) = 2.447 (NIST/SEMATECH t table); the interval is 4 ± 2.447·s/√7
    expect(studentTQuantile(0.975, 6)).toBeCloseTo(2.447, 3);
    expect(figures.biasCi95Db[0]).toBeCloseTo(4 - (2.447 * s) / Math.sqrt(7), 2);
    expect(figures.biasCi95Db[1]).toBeCloseTo(4 + (2.447 * s) / Math.sqrt(7), 2);
    // χ²(0.025, 6) = 1.237, χ²(0.975, 6) = 14.449 (NIST/SEMATECH chi-square table)
    expect(chiSquareQuantile(0.025, 6)).toBeCloseTo(1.237, 3);
    expect(figures.sigmaCi95Db[0]).toBeCloseTo(s * Math.sqrt(6 / 14.449), 3);
    expect(figures.sigmaCi95Db[1]).toBeCloseTo(s * Math.sqrt(6 / 1.237), 2);
  });

  it('an outlier is named, left out of σ and pulls the Huber bias only by k·s/n_in', () => {
    // {1,2,3,4,5,100}: median 3.5, MAD 1.5, s = 1.5/0.6745. With only 100 clipped,
    // Σψ = 0 gives (15 − 5μ)/s + k = 0 → μ = 3 + k·s/5 (solved by hand).
    const values = [1, 2, 3, 4, 5, 100];
    const rows = values.map((v, i) => residual(`r${i}`, `n${i}`, v));
    const { figures, outliers } = fitFigures(rows);
    const s = 1.5 * MAD_TO_SIGMA;
    expect(figures.biasDb).toBeCloseTo(3 + (HUBER_K * s) / 5, 8);
    expect(outliers).toHaveLength(1);
    expect(outliers[0]).toMatchObject({ readingId: 'r5', nodeId: 'n5', residualDb: 100 });
    expect(outliers[0].modifiedZ).toBeCloseTo((100 - 3.5) / s, 8);
    expect(figures.outlierCount).toBe(1);
    expect(figures.n).toBe(6); // counted, never dropped from n
    // σ over the five inliers about the bias
    const mu = figures.biasDb;
    const ss = [1, 2, 3, 4, 5].reduce((sum, v) => sum + (v - mu) ** 2, 0);
    expect(figures.sigmaDb).toBeCloseTo(Math.sqrt(ss / 4), 10);
  });

  it('Huber location of symmetric data is its centre; with no spread it is the median', () => {
    expect(huberLocation([-3, -1, 0, 1, 3], 1)).toBeCloseTo(0, 10);
    expect(huberLocation([2, 2, 2], 0)).toBe(2);
  });

  it('too few readings is an input error, not a figure', () => {
    expect(() => fitFigures([residual('a', 'n', 1), residual('b', 'n', 2)])).toThrow(CalibrationInputError);
  });

  it('distance bands', () => {
    expect(distanceBand(500)).toBe('0–1 km');
    expect(distanceBand(1000)).toBe('1–2 km');
    expect(distanceBand(7000)).toBe('5–10 km');
    expect(distanceBand(25000)).toBe('≥ 20 km');
  });

  it('groups: each environment gets its own bias; small groups say so', () => {
    const gauss = gaussianSource(seededRandom(3));
    const rows: Residual[] = [];
    for (let i = 0; i < 60; i++) rows.push(residual(`o${i}`, `no${i % 12}`, 2 + gauss(), { environment: 'outdoor' }));
    for (let i = 0; i < 60; i++) rows.push(residual(`i${i}`, `ni${i % 12}`, -6 + gauss(), { environment: 'indoor' }));
    for (let i = 0; i < 3; i++) rows.push(residual(`p${i}`, `np${i}`, 0, { environment: 'pit' }));
    const fit = fitCalibration(rows, { grouping: 'environment' });
    const byKey = new Map(fit.groups.map((g) => [g.key, g]));
    expect(byKey.get('outdoor')!.biasDb!).toBeCloseTo(2, 0);
    expect(byKey.get('indoor')!.biasDb!).toBeCloseTo(-6, 0);
    expect(byKey.get('pit')!.fitted).toBe(false);
    expect(fit.n).toBe(123);
    // grouping helps here: the group biases beat the single plan-wide one out of sample
    const plain = crossValidate(rows, 'none');
    const grouped = crossValidate(rows, 'environment');
    if ('note' in plain || 'note' in grouped) throw new Error('cross-validation should run');
    expect(grouped.rmseAfterDb).toBeLessThan(plain.rmseAfterDb - 1);
  });

  it('cross-validation keeps a node on one side: a node-specific offset is not learnt from itself', () => {
    // Each node carries its own offset (+10 or −10) repeated over 10 readings; the plan-wide
    // bias is 0. Leaking a node into its own training set would lower the after-RMSE; held
    // out, the training bias of the other nodes is ~0 and nothing improves.
    const rows: Residual[] = [];
    for (let n = 0; n < 10; n++) for (let i = 0; i < 10; i++) rows.push(residual(`r${n}-${i}`, `n${n}`, n % 2 === 0 ? 10 : -10));
    const cv = crossValidate(rows, 'none', 5, 1);
    if ('note' in cv) throw new Error(cv.note);
    expect(cv.folds).toBe(5);
    expect(cv.n).toBe(100);
    expect(cv.rmseBeforeDb).toBeCloseTo(10, 10);
    expect(cv.rmseAfterDb).toBeGreaterThanOrEqual(cv.rmseBeforeDb - 1e-9);
  });

  it('cross-validation: a pure bias is learnt, RMSE drops to the noise and the mean error to ~0', () => {
    const gauss = gaussianSource(seededRandom(11));
    const rows: Residual[] = [];
    for (let i = 0; i < 400; i++) rows.push(residual(`r${i}`, `n${i % 40}`, 4 + 5 * gauss()));
    const fit = fitCalibration(rows);
    expect(fit.biasDb).toBeGreaterThan(4 - 1);
    expect(fit.biasDb).toBeLessThan(4 + 1);
    expect(fit.sigmaDb).toBeGreaterThan(4.4);
    expect(fit.sigmaDb).toBeLessThan(5.6);
    expect(fit.biasCi95Db[0]).toBeLessThan(fit.biasDb);
    const cv = fit.crossValidation!;
    expect(cv.rmseBeforeDb).toBeGreaterThan(cv.rmseAfterDb + 1);
    expect(Math.abs(cv.meanErrorAfterDb)).toBeLessThan(0.6);
    expect(cv.meanErrorBeforeDb).toBeGreaterThan(3);
  });

  it('one node cannot be cross-validated: the fit says why', () => {
    const fit = fitCalibration([1, 2, 3, 4].map((v, i) => residual(`r${i}`, 'only', v)));
    expect(fit.crossValidation).toBeNull();
    expect(fit.crossValidationNote).toMatch(/at least 2 nodes/);
  });
});
