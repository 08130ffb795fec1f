import { describe, expect, it } from 'vitest';
import { cellProducts } from '../../../server/coverage/outputs.ts';
import { buildComposite, summarise } from '../../../server/coverage/composite.ts';
import { makeGridFrame } from '../../../server/coverage/geometry.ts';
import { predictArea } from '../../../server/coverage/area.ts';
import { freeSpaceLossDb } from '../../../server/propagation/free-space.ts';
import { sensitivityDbm } from '../../../server/radio/lora-phy.ts';

const sens = [7, 8, 9, 10, 11, 12].map((sf) => sensitivityDbm(sf, 125, 6));
const budget = { fixedDbm: 14 + 2.15 + 6 - 1, sensitivityDbmBySf: sens, spreadingFactor: 10, requiredMarginDb: 10, locationSigmaDb: 6 };

describe('cell products (link budget per cell)', () => {
  it('power = fixed − loss; margin at the chosen SF; best SF is the lowest meeting the required margin; P = Φ(margin/σ)', () => {
    const loss = new Float32Array([100, 140, 160, Number.NaN]);
    const p = cellProducts(loss, budget);
    expect(p.powerDbm[0]).toBeCloseTo(budget.fixedDbm - 100, 4);
    expect(p.marginDb[1]).toBeCloseTo(budget.fixedDbm - 140 - sens[3], 4);
    // 100 dB: SF7 already has ≥ 10 dB margin.
    expect(p.bestSf[0]).toBe(7);
    // The best SF's margin meets the target and the next lower SF's does not.
    const power1 = budget.fixedDbm - 140;
    const best = p.bestSf[1];
    expect(power1 - sens[best - 7]).toBeGreaterThanOrEqual(10);
    if (best > 7) expect(power1 - sens[best - 8]).toBeLessThan(10);
    expect(p.bestSf[2]).toBe(0); // 160 dB: no SF closes with 10 dB
    expect(p.bestSf[3]).toBe(255);
    // Φ(0) = 0.5: a margin of exactly 0 dB delivers half the packets (log-normal spread, common practice).
    const atZero = cellProducts(new Float32Array([budget.fixedDbm - sens[3]]), budget);
    expect(atZero.deliveryProbability[0]).toBeCloseTo(0.5, 6);
  });

  it('composite: best server by power, redundancy counts gateways with the required margin, P = 1 − Π(1 − p)', () => {
    const a = cellProducts(new Float32Array([120, 150]), budget);
    const b = cellProducts(new Float32Array([130, 125]), budget);
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
