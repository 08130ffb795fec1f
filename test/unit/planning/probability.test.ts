import { describe, expect, it } from 'vitest';
import { combinedDeliveryProbability, combineSigmasDb, deliveryProbability, p1812LocationSigmaDb, standardNormalCdf } from '../../../server/planning/probability.ts';
import { environmentLoss } from '../../../server/planning/environment.ts';
import { linkStatus } from '../../../server/planning/status.ts';

describe('standard normal Φ (normal tables)', () => {
  it('Φ(0) = 0.5, Φ(1) = 0.841345, Φ(−2) = 0.022750, Φ(1.28155) = 0.9', () => {
    expect(standardNormalCdf(0)).toBeCloseTo(0.5, 6);
    expect(standardNormalCdf(1)).toBeCloseTo(0.841345, 6);
    expect(standardNormalCdf(-2)).toBeCloseTo(0.02275, 6);
    expect(standardNormalCdf(1.2815516)).toBeCloseTo(0.9, 6);
  });
});

describe('delivery probability (log-normal location variability)', () => {
  it('margin equal to one σ gives 84.1 %, zero margin 50 %, −2σ 2.3 %', () => {
    expect(deliveryProbability(6, 6)).toBeCloseTo(0.8413, 4);
    expect(deliveryProbability(0, 6)).toBeCloseTo(0.5, 6);
    expect(deliveryProbability(-12, 6)).toBeCloseTo(0.02275, 4);
  });
  it('σ = 0 is a step at 0 dB', () => {
    expect(deliveryProbability(0.1, 0)).toBe(1);
    expect(deliveryProbability(-0.1, 0)).toBe(0);
  });
  it('spreads add in quadrature: 3 and 4 dB → 5 dB', () => {
    expect(combineSigmasDb(3, 4)).toBeCloseTo(5, 9);
  });
  it('P.1812-8 §4.8 σL: (0.024·0.915 + 0.52)·100^0.28 = 0.54196·3.6308 = 1.968 dB in clutter; 0 at 10 m above the clutter', () => {
    expect(p1812LocationSigmaDb(915)).toBeCloseTo(1.968, 3);
    expect(p1812LocationSigmaDb(915, 100, 25, 15)).toBe(0);
  });
});

describe('combined probability over gateways', () => {
  it('independent gateways: 1 − (1 − 0.8)(1 − 0.5) = 0.9', () => {
    expect(combinedDeliveryProbability([0.8, 0.5])).toBeCloseTo(0.9, 12);
  });
  it('fully correlated (ρ = 1): only the best gateway counts; ρ = 0.5 is the midpoint of the blend', () => {
    expect(combinedDeliveryProbability([0.8, 0.5], 1)).toBeCloseTo(0.8, 12);
    expect(combinedDeliveryProbability([0.8, 0.5], 0.5)).toBeCloseTo(0.85, 12);
  });
  it('no gateway: 0; a correlation outside 0…1 is refused', () => {
    expect(combinedDeliveryProbability([])).toBe(0);
    expect(() => combinedDeliveryProbability([0.5], 1.5)).toThrow(/correlation/);
  });
});

describe('environment loss', () => {
  it('outdoor adds nothing; pit uses the plan setting; indoor uses P.2109 (traditional, 1 GHz median 14.313 dB, hand-computed)', () => {
    expect(environmentLoss('outdoor', 915, 0).lossDb).toBe(0);
    const pit = environmentLoss('pit', 915, 0, { indoorBuildingType: 'traditional', pitExtraLossDb: 12, pitSigmaDb: 3 });
    expect(pit).toMatchObject({ lossDb: 12, sigmaDb: 3 });
    expect(environmentLoss('indoor', 1000, 0).lossDb).toBeCloseTo(14.313, 3);
    expect(environmentLoss('indoor', 1000, 0).sigmaDb).toBeGreaterThan(3);
  });
});

describe('link status rule', () => {
  const target = { targetMarginDb: 10, targetDelivery: 0.9 };
  it('served when margin and delivery meet the target', () => {
    expect(linkStatus(12, 0.95, target)).toBe('served');
  });
  it('marginal when heard at the median but short of the target', () => {
    expect(linkStatus(5, 0.95, target)).toBe('marginal');
    expect(linkStatus(12, 0.85, target)).toBe('marginal');
  });
  it('unserved below 0 dB margin or with no gateway', () => {
    expect(linkStatus(-1, 0.4, target)).toBe('unserved');
    expect(linkStatus(null, 0, target)).toBe('unserved');
  });
});
