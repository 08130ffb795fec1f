import { describe, expect, it } from 'vitest';
import { predictPath, DEFAULT_PATH_SETTINGS, type PathProfile, type PathSettings } from '../../../server/planning/path.ts';
import { linkBudget, linkResult, summariseNodeLinks, type EndKit, type LinkRadioSettings, type NodeRadio } from '../../../server/planning/link.ts';
import { DEFAULT_ENVIRONMENT_SETTINGS } from '../../../server/planning/environment.ts';
import { builtInFeedlines } from '../../../server/radio/feedlines.ts';
import { findBandPlan } from '../../../server/radio/band-plans.ts';

const flat = { kind: 'omni' as const, elevation: { angleDeg: [-90, 90], relativeDb: [0, 0] } };
const isotropic = { id: 'iso', gainDbi: 0, pattern: flat, typicalVswr: 1 };
const threeDbi = { id: 'iso3', gainDbi: 3, pattern: flat, typicalVswr: 1 };
function kit(antenna: EndKit['antenna'], connectorLossDb = 0, feedlineLengthM = 0, feedlineId = 'rg-58'): EndKit {
  const feedline = feedlineLengthM > 0 ? builtInFeedlines.find((f) => f.id === feedlineId) ?? null : null;
  const connectors = connectorLossDb > 0 ? [{ connector: { id: 'test', name: `test ${connectorLossDb} dB`, lossDb: connectorLossDb, source: 'test', notes: [] }, count: 1 }] : [];
  return { antenna, boresightAzimuthDeg: null, feedline, feedlineLengthM, connectors };
}
const node: NodeRadio = { txPowerDbm: 14, phyPayloadBytes: 12, sfPolicy: 'adaptive', fixedSf: null, environment: 'outdoor' };
const radio: LinkRadioSettings = {
  frequencyMhz: 915,
  bandwidthKhz: 125,
  codingRate: '4/5',
  preambleSymbols: 8,
  allowedSfs: [7, 8, 9, 10, 11, 12],
  bandPlan: findBandPlan('us-902-928'),
  targetMarginDb: 5,
  spread: { locationWidthM: 100, planLocationSigmaDb: 0, planModelSigmaDb: 6, calibration: null },
  environment: DEFAULT_ENVIRONMENT_SETTINGS,
};
const settings = (method: PathSettings['method']): PathSettings => ({ ...DEFAULT_PATH_SETTINGS, frequencyMhz: 915, method });
function profileOf(points: Array<[number, number]>): PathProfile {
  return { distanceM: Float64Array.from(points.map((p) => p[0])), groundM: Float64Array.from(points.map((p) => p[1])), clutterHeightM: null };
}
const nodeEnd = { lat: 40, lon: -105, antennaHeightAglM: 10 };
const gatewayEnd = { lat: 40, lon: -104.9, antennaHeightAglM: 30 };

describe('hand-computed budgets (ITU-R P.525, P.526)', () => {
  it('free-space path of 2 km at 915 MHz: Lbf = 32.448 + 20·log10(915) + 20·log10(2) = 97.697 dB (P.525-4 Eq. (9), exact constant); RSSI = 14 + 0 − 97.697 + 3 − 0.5 = −81.197 dBm', () => {
    const path = predictPath(profileOf([[0, 0], [1000, 0], [2000, 0]]), settings('free-space'), nodeEnd, gatewayEnd);
    expect(path.basicLossDb).toBeCloseTo(97.697, 2);
    const budget = linkBudget(path, kit(isotropic), kit(threeDbi, 0.5), node, { noiseFigureDb: 6 }, radio);
    expect(budget.rssiDbm).toBeCloseTo(-81.197, 2);
    // Noise floor −174 + 10·log10(125 000) + 6 = −117.031 dBm → SNR 35.834 dB; SF7 margin = 35.834 + 7.5 = 43.334 dB.
    expect(budget.snrDb).toBeCloseTo(35.834, 2);
    expect(budget.bestSf).toBe(7);
    expect(budget.marginDb).toBeCloseTo(43.334, 2);
  });

  it('single knife edge (h = 60 m at 5 km of 10 km, terminals 10 m and 30 m): P.526-16 §4.5.1 Bullington by hand → Lb = 140.688 dB, SF9 first to meet 5 dB', () => {
    // By hand: a_e = 6371·157/112 = 8930.777 km; bulge 500·C_e·5·5 = 1.39965 m;
    // S_tim = (60 + 1.39965 − 10)/5 = 10.27993; S_tr = 2 → obstructed; d_bp = 5 km;
    // v_b = (10 + 10.27993·5 − (10·5 + 30·5)/10)·√(0.002·10/(0.327642·5·5)) = 2.04570;
    // J(v_b) = 6.9 + 20·log10(√((v−0.1)² + 1) + v − 0.1) = 19.2260 dB (P.526 Eq. (31));
    // Eq. (21)-type correction (1 − e^(−J/6))·(10 + 0.02·10) = 9.7860 dB → Lbull = 29.0120 dB;
    // Lbf = 111.6762 dB (P.525) → Lb = 140.6882 dB.
    const path = predictPath(profileOf([[0, 0], [5000, 60], [10000, 0]]), settings('bullington'), nodeEnd, gatewayEnd);
    expect(path.lineOfSight).toBe(false);
    expect(path.freeSpaceLossDb).toBeCloseTo(111.6762, 2);
    expect(path.terms.diffractionDb).toBeCloseTo(29.012, 2);
    expect(path.basicLossDb).toBeCloseTo(140.688, 2);
    const budget = linkBudget(path, kit(isotropic), kit(threeDbi, 0.5), node, { noiseFigureDb: 6 }, radio);
    // RSSI = 14 − 140.688 + 3 − 0.5 = −124.188 dBm; SNR = −7.157 dB; margins SF7 0.343 … SF10 7.843 dB.
    expect(budget.rssiDbm).toBeCloseTo(-124.188, 2);
    expect(budget.perSf.map((s) => Number(s.marginDb.toFixed(2)))).toEqual([0.34, 2.84, 5.34, 7.84, 10.34, 12.84]);
    expect(budget.bestSf).toBe(9);
    expect(budget.marginDb).toBeCloseTo(5.343, 2);
    // Time on air at SF9/125 kHz, CR 4/5, 12 bytes, 8-symbol preamble, explicit header, CRC (SX1276 §4.1.1.6), by hand:
    // Ts = 512/125 = 4.096 ms; preamble 12.25·Ts = 50.176 ms; ceil((96 − 36 + 28 + 16)/36) = 3 → 8 + 3·5 = 23 symbols = 94.208 ms.
    expect(budget.timeOnAirMs).toBeCloseTo(144.384, 3);
  });
});

describe('monotonic sanity a planner relies on', () => {
  // An obstructed profile: two ridges and a rise toward the gateway.
  const ridge = profileOf([[0, 100], [1500, 130], [3000, 190], [4500, 150], [6000, 170], [7500, 230], [9000, 160], [10500, 140], [12000, 120]]);
  it('raising the node antenna never increases the basic loss (Bullington, the fast method)', () => {
    let previous = Infinity;
    for (let h = 1; h <= 60; h += 0.5) {
      const path = predictPath(ridge, settings('bullington'), { ...nodeEnd, antennaHeightAglM: h }, gatewayEnd);
      expect(path.basicLossDb).toBeLessThanOrEqual(previous + 1e-9);
      previous = path.basicLossDb;
    }
  });
  it('a higher-gain antenna toward the gateway never lowers the margin; a longer feedline never raises it', () => {
    const path = predictPath(ridge, settings('bullington'), nodeEnd, gatewayEnd);
    let previousMargin = -Infinity;
    for (let gain = -5; gain <= 12; gain += 0.5) {
      const budget = linkBudget(path, kit({ ...isotropic, gainDbi: gain }), kit(threeDbi), node, { noiseFigureDb: 6 }, radio);
      const at12 = budget.perSf[budget.perSf.length - 1].marginDb;
      expect(at12).toBeGreaterThanOrEqual(previousMargin);
      previousMargin = at12;
    }
    previousMargin = Infinity;
    for (let length = 0; length <= 50; length += 2) {
      const budget = linkBudget(path, kit(isotropic, 0, length), kit(threeDbi), node, { noiseFigureDb: 6 }, radio);
      const at12 = budget.perSf[budget.perSf.length - 1].marginDb;
      expect(at12).toBeLessThanOrEqual(previousMargin);
      previousMargin = at12;
    }
  });
});

describe('node summary over gateways', () => {
  it('independent gateways combine; the status follows the rule', () => {
    const near = predictPath(profileOf([[0, 0], [1000, 0], [2000, 0]]), settings('free-space'), nodeEnd, gatewayEnd);
    const far = predictPath(profileOf([[0, 0], [5000, 60], [10000, 0]]), settings('bullington'), nodeEnd, gatewayEnd);
    const a = linkResult('far', far, linkBudget(far, kit(isotropic), kit(threeDbi, 0.5), node, { noiseFigureDb: 6 }, radio));
    const b = linkResult('near', near, linkBudget(near, kit(isotropic), kit(threeDbi, 0.5), node, { noiseFigureDb: 6 }, radio));
    const summary = summariseNodeLinks([a, b], { targetMarginDb: 5, targetDelivery: 0.9 });
    expect(summary.links[0].gatewayId).toBe('near');
    expect(summary.combinedDeliveryProbability).toBeCloseTo(1 - (1 - a.deliveryProbability) * (1 - b.deliveryProbability), 12);
    expect(summary.status).toBe('served');
  });
});

describe('P.1812 through the link path (wired to the propagation room)', () => {
  it('a clear flat 2 km path is within 1 dB of free space; the knife-edge path loses at least 15 dB more than free space', () => {
    const steps = Array.from({ length: 41 }, (_, i) => [i * 50, 0] as [number, number]);
    const clear = predictPath(profileOf(steps), settings('p1812'), nodeEnd, gatewayEnd);
    expect(clear.lineOfSight).toBe(true);
    expect(Math.abs(clear.basicLossDb - clear.freeSpaceLossDb)).toBeLessThan(1);
    const edge = Array.from({ length: 101 }, (_, i) => [i * 100, i === 50 ? 60 : 0] as [number, number]);
    const blocked = predictPath(profileOf(edge), settings('p1812'), nodeEnd, gatewayEnd);
    expect(blocked.lineOfSight).toBe(false);
    expect(blocked.basicLossDb - blocked.freeSpaceLossDb).toBeGreaterThan(15);
  });
});
