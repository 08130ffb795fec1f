import { describe, expect, it } from 'vitest';
import { cellProducts } from '../../../server/coverage/outputs.ts';
import { buildComposite, summarise } from '../../../server/coverage/composite.ts';
import { makeGridFrame } from '../../../server/coverage/geometry.ts';
import { predictArea } from '../../../server/coverage/area.ts';
import { freeSpaceLossDb } from '../../../server/propagation/free-space.ts';
import { sensitivityDbm } from '../../../server/radio/lora-phy.ts';
import { findBandPlan } from '../../../server/radio/band-plans.ts';
import { budgetAtPlace, type EndKit, type LinkRadioSettings, type NodeRadio } from '../../../server/planning/link.ts';
import { DEFAULT_ENVIRONMENT_SETTINGS } from '../../../server/planning/environment.ts';
import { standardNormalCdf } from '../../../server/planning/probability.ts';

const sens = [7, 8, 9, 10, 11, 12].map((sf) => sensitivityDbm(sf, 125, 6));
const flat = { kind: 'omni' as const, elevation: { angleDeg: [-90, 90], relativeDb: [0, 0] } };
const iso: EndKit = { antenna: { id: 'iso', gainDbi: 0, pattern: flat, typicalVswr: 1 }, boresightAzimuthDeg: null, feedline: null, feedlineLengthM: 0, connectors: [] };
const node: NodeRadio = { txPowerDbm: 14, phyPayloadBytes: 12, sfPolicy: 'adaptive', fixedSf: null, environment: 'outdoor' };
const radio: LinkRadioSettings = {
  frequencyMhz: 915, bandwidthKhz: 125, codingRate: '4/5', preambleSymbols: 8, allowedSfs: [7, 8, 9, 10, 11, 12], bandPlan: findBandPlan('us-902-928'), targetMarginDb: 10,
  spread: { locationWidthM: 100, planLocationSigmaDb: 0, planModelSigmaDb: 6, calibration: null }, environment: DEFAULT_ENVIRONMENT_SETTINGS,
};
/** The one link budget at a 5 km place on flat ground (isotropic ends, 14 dBm, no feedline): RSSI = 14 − loss. */
const budgetAt = (_i: number, loss: number) => {
  const place = { method: 'p1812' as const, basicLossDb: loss, freeSpaceLossDb: 105.7, distanceM: 5000, nodeGroundM: 0, gatewayGroundM: 0, nodeAntennaHeightAglM: 2, gatewayAntennaHeightAglM: 30, nodeAzimuthDeg: 0, gatewayAzimuthDeg: 180, deltaN: 45, nodeClutterHeightM: 0 };
  const b = budgetAtPlace(place, iso, iso, node, { noiseFigureDb: 6 }, radio);
  return { rssiDbm: b.rssiDbm, marginDb: b.marginDb, bestSf: b.bestSf, deliveryProbability: b.deliveryProbability };
};

describe('cell products (the link budget per cell)', () => {
  it('power = 14 dBm − loss; margin = a node link\'s marginDb (fastest SF meeting 10 dB, else the most robust); P = Φ(margin/σ)', () => {
    const loss = new Float32Array([100, 130, 160, Number.NaN]);
    const p = cellProducts(loss, budgetAt);
    expect(p.powerDbm[0]).toBeCloseTo(14 - 100, 4);
    // 100 dB: SF7 already has ≥ 10 dB margin, and the margin is SF7's.
    expect(p.bestSf[0]).toBe(7);
    expect(p.marginDb[0]).toBeCloseTo(14 - 100 - sens[0], 3);
    // 130 dB: the best SF meets the target and the next faster SF does not; its margin is the cell's.
    const power1 = 14 - 130;
    const best = p.bestSf[1];
    expect(power1 - sens[best - 7]).toBeGreaterThanOrEqual(10);
    if (best > 7) expect(power1 - sens[best - 8]).toBeLessThan(10);
    expect(p.marginDb[1]).toBeCloseTo(power1 - sens[best - 7], 3);
    // 160 dB: no SF closes with 10 dB; the margin is the most robust SF within the US915 400 ms dwell (SF10), as for a node.
    expect(p.bestSf[2]).toBe(0);
    expect(p.marginDb[2]).toBeCloseTo(14 - 160 - sens[3], 3);
    expect(p.bestSf[3]).toBe(255);
    // Φ(margin/σ), σ = 6 dB here.
    expect(p.deliveryProbability[1]).toBeCloseTo(standardNormalCdf(p.marginDb[1] / 6), 4);
  });

  it('composite: best server by power, redundancy counts gateways with the required margin, P = 1 − Π(1 − p)', () => {
    const a = cellProducts(new Float32Array([120, 150]), budgetAt);
    const b = cellProducts(new Float32Array([130, 125]), budgetAt);
    const composite = buildComposite(2, 1, [
      { gatewayIndex: 0, x0: 0, y0: 0, widthPx: 2, heightPx: 1, products: a, lossDb: new Float32Array([120, 150]) },
      { gatewayIndex: 1, x0: 0, y0: 0, widthPx: 2, heightPx: 1, products: b, lossDb: new Float32Array([130, 125]) },
    ], 10);
    expect(Array.from(composite.bestServer)).toEqual([0, 1]);
    expect(composite.lossDb[1]).toBe(125);
    const served = (m: number) => (m >= 10 ? 1 : 0);
    expect(composite.redundancy[0]).toBe(served(a.marginDb[0]) + served(b.marginDb[0]));
    expect(composite.deliveryProbability[0]).toBeCloseTo(1 - (1 - a.deliveryProbability[0]) * (1 - b.deliveryProbability[0]), 6);
    const summary = summarise(composite, new Uint8Array([1, 1]), 2, 10, () => 0.0009, [{ id: 'n1', col: 1.2, row: 0.5 }, { id: 'n2', col: null, row: null }]);
    expect(summary.cells).toBe(2);
    expect(summary.areaKm2).toBeCloseTo(0.0018, 9);
    expect(summary.nodes.outside).toBe(1);
    expect(summary.gateways[1].bestServerCells).toBe(1);
  });
});

describe('full mode (ITU-R P.1812-8 per ray sample)', () => {
  it('flat ground, short line-of-sight paths: P.1812 basic loss stays within 0–15 dB above free space (P.525); fast mode likewise', () => {
    const size = 121;
    const frame = makeGridFrame({ kind: 'projected', widthPx: size, heightPx: size, geoTransform: [0, 30, 0, 0, 0, -30], siteX: 60.5 * 30, siteY: -60.5 * 30 });
    const terrain = { frame, elevationM: new Float32Array(size * size).fill(100) };
    const request = { radiusM: 1_700, heightAglM: 30, targetHeightAglM: 1.5, kFactor: 4 / 3, frequencyMhz: 915, p1812: { siteLatDeg: 45 } };
    const full = predictArea(terrain, { ...request, mode: 'full' }).lossDb!;
    const fast = predictArea(terrain, { ...request, mode: 'fast' }).lossDb!;
    for (const col of [70, 80, 100, 115]) {
      const dKm = ((col - 60) * 30) / 1000;
      const fsl = freeSpaceLossDb(dKm, 915);
      const i = 60 * size + col;
      expect(full[i] - fsl, `full at ${dKm} km`).toBeGreaterThanOrEqual(-0.5);
      expect(full[i] - fsl, `full at ${dKm} km`).toBeLessThan(15);
      expect(fast[i] - fsl, `fast at ${dKm} km`).toBeGreaterThanOrEqual(-1e-3);
      expect(fast[i] - fsl, `fast at ${dKm} km`).toBeLessThan(15);
    }
  });
});
