import { describe, expect, it } from 'vitest';
import { isExcluded, localHighPoints, parseExclusionAreas, pickSpaced, type ElevationGrid } from '../../../server/siting/candidates.ts';
import { geodesicInverse } from '../../../server/terrain/geodesic.ts';

/** A 40 × 40 grid of 0.001° cells west of Greenwich with two hills and a NoData hole. */
function grid(): ElevationGrid {
  const w = 40;
  const h = 40;
  const z = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const hill = (cx: number, cy: number, top: number) => top * Math.exp(-((x - cx) ** 2 + (y - cy) ** 2) / 30);
      z[y * w + x] = 100 + hill(10, 10, 300) + hill(30, 28, 200);
    }
  }
  // NoData over where a third, higher hill would be.
  for (let y = 18; y < 22; y++) for (let x = 2; x < 6; x++) z[y * w + x] = Number.NaN;
  return { widthPx: w, heightPx: h, elevationM: z, pixelToLonLat: (x, y) => ({ lon: -1 + x * 0.001, lat: 1 - y * 0.001 }) };
}
const everywhere = { west: -2, south: -2, east: 2, north: 2 };

describe('terrain high points', () => {
  it('finds the two summits, highest first, and skips NoData', () => {
    const points = localHighPoints(grid(), everywhere);
    expect(points.length).toBeGreaterThanOrEqual(2);
    expect(points[0].groundM).toBeCloseTo(400, 0);
    expect(points[0].lon).toBeCloseTo(-1 + 10.5 * 0.001, 6);
    expect(points[1].groundM).toBeCloseTo(300, 0);
    for (const p of points) expect(Number.isFinite(p.groundM)).toBe(true);
  });

  it('keeps only points inside the area', () => {
    const points = localHighPoints(grid(), { west: -0.985, south: -2, east: 2, north: 2 });
    expect(points[0].groundM).toBeCloseTo(300, 0);
  });

  it('thins by spacing, by a predicate, and away from existing sites', () => {
    const points = localHighPoints(grid(), everywhere);
    const spaced = pickSpaced(points, 5, 1000);
    for (let a = 0; a < spaced.length; a++) for (let b = a + 1; b < spaced.length; b++) expect(geodesicInverse(spaced[a], spaced[b]).distanceM).toBeGreaterThanOrEqual(1000);
    const noFirst = pickSpaced(points, 1, 100, (p) => p.groundM < 350);
    expect(noFirst[0].groundM).toBeCloseTo(300, 0);
    const away = pickSpaced(points, 1, 500, () => true, [points[0]]);
    expect(away[0].groundM).toBeLessThan(390);
  });
});

describe('exclusion areas', () => {
  const square = { type: 'Polygon', coordinates: [[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]] };
  it('accepts Polygon, MultiPolygon and Features of them; tests membership', () => {
    const areas = parseExclusionAreas([square, { type: 'Feature', properties: {}, geometry: { type: 'MultiPolygon', coordinates: [square.coordinates] } }]);
    expect(areas).toHaveLength(2);
    expect(isExcluded(areas, 0.5, 0.5)).toBe(true);
    expect(isExcluded(areas, 1.5, 0.5)).toBe(false);
  });
  it('refuses what is not a polygon, naming the item and the rule', () => {
    expect(() => parseExclusionAreas([square, { type: 'LineString', coordinates: [[0, 0], [1, 1]] }])).toThrow(/excludeAreas\[1\]: must be a GeoJSON Polygon or MultiPolygon \(got LineString\)/);
    expect(() => parseExclusionAreas([{ type: 'Polygon', coordinates: [[[0, 0], [1, 0], [1, 1], [0, 1]]] }])).toThrow(/closed/);
    expect(() => parseExclusionAreas([{ type: 'Polygon', coordinates: [[[0, 0], [1, 0], [0, 0]]] }])).toThrow(/at least 4/);
    expect(() => parseExclusionAreas([{ type: 'Polygon', coordinates: [[[0, 0], [500, 0], [1, 1], [0, 0]]] }])).toThrow(/lon in/);
    expect(() => parseExclusionAreas(['nope'])).toThrow(/excludeAreas\[0\]/);
  });
});
