// pathClearance (what a path prediction reads of the geometry, with no per-point arrays) must give
// exactly the numbers of analysePathGeometry: the same line of sight, worst clearance and the worst
// 10 obstructions (a stable sort of all of them by clearance ratio, cut to 10), to the last bit.
import { describe, expect, it } from 'vitest';
import { analysePathGeometry, pathClearance, type PathGeometryInput } from '../../../server/propagation/path-geometry.ts';

function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function randomProfile(rand: () => number, n: number, flatRuns: boolean): PathGeometryInput {
  const distanceKm = new Float64Array(n);
  const groundM = new Float64Array(n);
  const clutterM = new Float64Array(n);
  const lengthKm = 0.2 + rand() * 20;
  for (let i = 0; i < n; i++) {
    distanceKm[i] = (lengthKm * i) / (n - 1);
    // Flat runs give many equal clearance ratios: the tie order must follow the path.
    groundM[i] = flatRuns && i > 2 && rand() < 0.6 ? groundM[i - 1] : 100 + rand() * 80;
    clutterM[i] = rand() < 0.3 ? rand() * 15 : 0;
  }
  return { distanceKm, groundM, clutterM: rand() < 0.5 ? clutterM : undefined, txHeightAglM: 1 + rand() * 30, rxHeightAglM: 1 + rand() * 30, frequencyMhz: 868, kFactor: 157 / (157 - 45) };
}

describe('pathClearance equals analysePathGeometry', () => {
  it('on 400 seeded random profiles (3 to 400 points, with and without clutter and flat runs)', () => {
    const rand = random(1812);
    let withObstructions = 0;
    for (let round = 0; round < 400; round++) {
      const input = randomProfile(rand, 3 + Math.floor(rand() * 398), round % 2 === 0);
      const full = analysePathGeometry(input);
      const lean = pathClearance(input);
      expect(lean.lineOfSight).toBe(full.lineOfSight);
      expect(Object.is(lean.worstClearanceRatio, full.worstClearanceRatio)).toBe(true);
      expect(Object.is(lean.worstDistanceKm, full.worstDistanceKm)).toBe(true);
      const top = full.obstructions.slice(0, 10).map((o) => ({ distanceKm: o.distanceKm, clearanceM: o.clearanceM, clearanceRatio: o.clearanceRatio }));
      expect(lean.obstructions).toEqual(top);
      if (full.obstructions.length > 10) withObstructions++;
    }
    // The cut to 10 was exercised, not only short lists.
    expect(withObstructions).toBeGreaterThan(50);
  });
});
