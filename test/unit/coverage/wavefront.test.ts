import { describe, expect, it } from 'vitest';
import { EARTH_RADIUS_M, makeGridFrame, sampleBilinear } from '../../../server/coverage/geometry.ts';
import { BYTE_NODATA } from '../../../server/coverage/rasterise.ts';
import type { TerrainWindow } from '../../../server/coverage/sweep.ts';
import { viewshedWavefront } from '../../../server/coverage/wavefront.ts';
import { makeSyntheticDem } from './synthetic-dem.ts';

function windowOf(widthPx: number, heightPx: number, cellM: number, elevationM: Float32Array, siteCol: number, siteRow: number): TerrainWindow {
  const frame = makeGridFrame({
    kind: 'projected',
    widthPx,
    heightPx,
    geoTransform: [500_000, cellM, 0, 4_000_000, 0, -cellM],
    siteX: 500_000 + (siteCol + 0.5) * cellM,
    siteY: 4_000_000 - (siteRow + 0.5) * cellM,
  });
  return { frame, elevationM };
}

const site = { heightAglM: 10, targetHeightAglM: 1.5, kFactor: 4 / 3 };
const drop = (dM: number) => (dM * dM) / (2 * site.kFactor * EARTH_RADIUS_M);

describe('los wavefront over square rings (one visit per cell)', () => {
  it('flat ground: visible up to the radio horizon √(2kR·h1) + √(2kR·h2), hidden beyond (spherical earth, effective radius kR, from memory)', () => {
    const cellM = 200;
    const size = 401;
    const terrain = windowOf(size, size, cellM, new Float32Array(size * size), 200, 200);
    const result = viewshedWavefront(terrain, { ...site, heightAglM: 30 }, 39_000)!;
    const kr = (4 / 3) * EARTH_RADIUS_M;
    const horizonM = Math.sqrt(2 * kr * 30) + Math.sqrt(2 * kr * 1.5); // ≈ 27.6 km
    for (const [dc, dr] of [[1, 0], [0, 1], [-1, 0], [0, -1], [1, 1], [-1, 1]]) {
      for (let s = 1; s < 200; s++) {
        const d = Math.hypot(dc * s, dr * s) * cellM;
        if (d > 39_000) break;
        const v = result.visible[(200 + dr * s) * size + 200 + dc * s];
        if (d < horizonM - 300) expect(v, `direction ${dc},${dr} at ${d} m`).toBe(1);
        if (d > horizonM + 300) expect(v, `direction ${dc},${dr} at ${d} m`).toBe(0);
      }
    }
  });

  it('agrees with a brute-force sight line (0.25-cell sampling) on ≥ 98 % of cells, observer near a window edge', () => {
    const dem = makeSyntheticDem(201, 181, 30, 5, 2);
    const oc = 40;
    const or = 120;
    const terrain = windowOf(dem.widthPx, dem.heightPx, dem.cellM, dem.elevationM, oc, or);
    const radiusM = 4_000;
    const result = viewshedWavefront(terrain, site, radiusM)!;
    const w = dem.widthPx;
    const eye = dem.elevationM[or * w + oc] + site.heightAglM;
    let agree = 0;
    let total = 0;
    let outside = 0;
    for (let row = 0; row < dem.heightPx; row++) {
      for (let col = 0; col < w; col++) {
        const d = Math.hypot(col - oc, row - or) * 30;
        if (d > radiusM) {
          if (result.visible[row * w + col] === BYTE_NODATA) outside++;
          else expect.fail(`cell ${col},${row} beyond the radius is not NoData`);
          continue;
        }
        if (d < 1 || (row + col) % 2) continue;
        const target = (dem.elevationM[row * w + col] + site.targetHeightAglM - drop(d) - eye) / d;
        const steps = Math.ceil(d / 7.5);
        let horizon = -Infinity;
        for (let s = 1; s < steps - 1; s++) {
          const t = s / steps;
          const h = sampleBilinear(dem.elevationM, w, dem.heightPx, oc + 0.5 + t * (col - oc), or + 0.5 + t * (row - or));
          horizon = Math.max(horizon, (h - drop(t * d) - eye) / (t * d));
        }
        total++;
        if (result.visible[row * w + col] === (target >= horizon ? 1 : 0)) agree++;
      }
    }
    expect(outside).toBeGreaterThan(0);
    expect(total).toBeGreaterThan(8000);
    expect(agree / total).toBeGreaterThanOrEqual(0.98);
    let visible = 0;
    for (const v of result.visible) if (v === 1) visible++;
    expect(result.visibleCells).toBe(visible);
  });

  it('NoData cells are 255 and do not stop the horizon behind them; geographic windows are left to the ray sweep (null)', () => {
    const size = 61;
    const elevation = new Float32Array(size * size);
    elevation[30 * size + 40] = 500; // a tower 10 cells east of the site
    elevation[30 * size + 35] = Number.NaN;
    const result = viewshedWavefront(windowOf(size, size, 30, elevation, 30, 30), site, 900)!;
    expect(result.visible[30 * size + 35]).toBe(BYTE_NODATA);
    expect(result.visible[30 * size + 38]).toBe(1);
    expect(result.visible[30 * size + 45]).toBe(0); // behind the tower
    expect(result.visible[30 * size + 20]).toBe(1); // open side
    const geographic = makeGridFrame({ kind: 'geographic', widthPx: size, heightPx: size, geoTransform: [10, 0.001, 0, 50, 0, -0.001], siteX: 10.03, siteY: 49.97 });
    expect(viewshedWavefront({ frame: geographic, elevationM: elevation }, site, 900)).toBeNull();
  });
});

describe('los wavefront: the cells skipped beyond the radius change nothing', () => {
  // A cell's horizon and visibility do not depend on the radius (the radius only decides which cells are
  // written), so a run with a small radius must give, cell for cell, what a run with a radius covering the
  // whole window gives inside the small radius. The small run skips the window's corners (cells no inside
  // cell depends on); a skip bound that is too tight shows here as differences near the circle.
  const cases: { name: string; cellXM: number; cellYM: number; siteCol: number; siteRow: number; radiusM: number }[] = [
    { name: 'square 30 m cells, observer off-centre', cellXM: 30, cellYM: 30, siteCol: 83, siteRow: 131, radiusM: 3_000 },
    { name: 'square cells, site off the cell centre', cellXM: 25, cellYM: 25, siteCol: 120.83, siteRow: 99.21, radiusM: 2_200 },
    { name: 'non-square cells 30 × 18 m', cellXM: 30, cellYM: 18, siteCol: 140, siteRow: 110, radiusM: 1_600 },
    { name: 'non-square cells 12 × 40 m', cellXM: 12, cellYM: 40, siteCol: 100.4, siteRow: 90.7, radiusM: 2_000 },
  ];
  for (const c of cases) {
    it(c.name, () => {
      const widthPx = 241;
      const heightPx = 221;
      const dem = makeSyntheticDem(widthPx, heightPx, Math.min(c.cellXM, c.cellYM), 11, 2.5);
      const frame = makeGridFrame({
        kind: 'projected',
        widthPx,
        heightPx,
        geoTransform: [500_000, c.cellXM, 0, 4_000_000, 0, -c.cellYM],
        siteX: 500_000 + c.siteCol * c.cellXM,
        siteY: 4_000_000 - c.siteRow * c.cellYM,
      });
      const terrain = { frame, elevationM: dem.elevationM };
      const small = viewshedWavefront(terrain, site, c.radiusM)!;
      const whole = viewshedWavefront(terrain, site, 1e7)!;
      let inside = 0;
      let visible = 0;
      for (let i = 0; i < small.visible.length; i++) {
        const col = i % widthPx;
        const row = Math.floor(i / widthPx);
        const dM = Math.hypot(500_000 + (col + 0.5) * c.cellXM - frame.siteX, 4_000_000 - (row + 0.5) * c.cellYM - frame.siteY);
        // Inside the radius (a hair of rounding either side of it left out), every cell must have been computed.
        if (dM < c.radiusM - 1e-6 && whole.visible[i] !== BYTE_NODATA) expect(small.visible[i], `cell ${col},${row} inside the radius`).not.toBe(BYTE_NODATA);
        if (dM > c.radiusM + 1e-6) expect(small.visible[i], `cell ${col},${row} beyond the radius`).toBe(BYTE_NODATA);
        if (small.visible[i] === BYTE_NODATA) continue;
        inside++;
        if (small.visible[i] === 1) visible++;
        if (small.visible[i] !== whole.visible[i]) expect.fail(`cell ${i % widthPx},${Math.floor(i / widthPx)}: ${small.visible[i]} with the small radius, ${whole.visible[i]} with the whole window`);
      }
      expect(inside).toBe(small.insideCells);
      expect(visible).toBe(small.visibleCells);
      // The circle is well inside the window: the run did skip corner cells, and kept a real mix of visible and hidden.
      expect(inside).toBeLessThan(0.6 * widthPx * heightPx);
      expect(visible).toBeGreaterThan(0.05 * inside);
      expect(visible).toBeLessThan(0.95 * inside);
    });
  }
});
