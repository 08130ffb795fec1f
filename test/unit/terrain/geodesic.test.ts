// Profile points along the WGS 84 geodesic: checked against geographiclib (Karney's algorithm, the
// reference) point by point, and against turf (spherical great circle) for a sanity cross-check.
import geographiclib from 'geographiclib-geodesic';
import * as turf from '@turf/turf';
import { describe, expect, it } from 'vitest';
import { geodesicInverse, geodesicPoints } from '../../../server/terrain/geodesic.ts';

const { Geodesic } = geographiclib;
const WGS84 = Geodesic.WGS84;

const paths = [
  { name: '50 km inland, NE', from: { lat: 49.5, lon: 5.8 }, to: { lat: 49.9, lon: 6.3 } },
  { name: '10 km due north', from: { lat: -33.9, lon: 18.4 }, to: { lat: -33.81, lon: 18.4 } },
  { name: '300 km across the antimeridian', from: { lat: -16.8, lon: 178.9 }, to: { lat: -17.9, lon: -178.8 } },
  { name: '120 km at 68° N, westward', from: { lat: 68.2, lon: 20.5 }, to: { lat: 68.6, lon: 17.8 } },
];

describe('geodesic points against geographiclib (Karney 2013), to 1 mm per km', () => {
  it('geographiclib itself: Wellington → Salamanca is 19 959 679.267 m (from memory of the GeographicLib documentation example)', () => {
    expect(geodesicInverse({ lat: -41.32, lon: 174.81 }, { lat: 40.96, lon: -5.5 }).distanceM).toBeCloseTo(19959679.267, 2);
  });

  for (const path of paths) {
    it(`${path.name}: every point lies on the geodesic at its stated distance (≤ 1 mm/km), interpolated points within 1 mm of exact ones`, () => {
      const length = WGS84.Inverse(path.from.lat, path.from.lon, path.to.lat, path.to.lon).s12 ?? 0;
      const count = Math.ceil(length / 30) + 1;
      const lat = new Float64Array(count);
      const lon = new Float64Array(count);
      expect(geodesicPoints(path.from, path.to, count, lat, lon)).toBeCloseTo(length, 6);
      const line = WGS84.InverseLine(path.from.lat, path.from.lon, path.to.lat, path.to.lon);
      const tolerance = Math.max(0.001, (0.001 * length) / 1000);
      let worstOffM = 0;
      for (let i = 0; i < count; i += 7) {
        const s = (i * length) / (count - 1);
        const fromStart = WGS84.Inverse(path.from.lat, path.from.lon, lat[i], lon[i]).s12 ?? NaN;
        const toEnd = WGS84.Inverse(lat[i], lon[i], path.to.lat, path.to.lon).s12 ?? NaN;
        expect(Math.abs(fromStart - s)).toBeLessThan(tolerance);
        expect(Math.abs(fromStart + toEnd - length)).toBeLessThan(tolerance);
        const exact = line.Position(s);
        const off = WGS84.Inverse(exact.lat2 ?? NaN, exact.lon2 ?? NaN, lat[i], lon[i]).s12 ?? NaN;
        worstOffM = Math.max(worstOffM, off);
      }
      expect(worstOffM).toBeLessThan(0.001);
      expect([lat[0], lon[0], lat[count - 1], lon[count - 1]]).toEqual([path.from.lat, path.from.lon, path.to.lat, path.to.lon]);
    });
  }
});

describe('cross-check with turf (spherical, mean radius: differs from the ellipsoid by up to ~0.5 %)', () => {
  for (const path of paths) {
    it(`${path.name}: length and midpoint agree with turf within 0.5 % of the length`, () => {
      const ours = geodesicInverse(path.from, path.to).distanceM;
      const theirs = turf.distance([path.from.lon, path.from.lat], [path.to.lon, path.to.lat], { units: 'meters' });
      expect(Math.abs(ours - theirs) / ours).toBeLessThan(0.005);
      const lat = new Float64Array(3);
      const lon = new Float64Array(3);
      geodesicPoints(path.from, path.to, 3, lat, lon);
      const mid = turf.midpoint([path.from.lon, path.from.lat], [path.to.lon, path.to.lat]).geometry.coordinates;
      const apart = geodesicInverse({ lat: lat[1], lon: lon[1] }, { lat: mid[1], lon: mid[0] }).distanceM;
      expect(apart / ours).toBeLessThan(0.005);
    });
  }
});
