import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { bearingsBetween, isWithinDistanceM } from '../../../server/planning/geometry.ts';

// The spherical pre-filter must answer exactly as the WGS84 geodesic
// (geographiclib through terrain/geodesic.ts) would, for every pair.
const lat = fc.double({ min: -89.9, max: 89.9, noNaN: true });
const lon = fc.double({ min: -180, max: 180, noNaN: true });

describe('isWithinDistanceM: great-circle pre-filter, exact geodesic near the limit', () => {
  it('agrees with the geodesic inverse on random pairs anywhere on earth and random limits (fast-check)', () => {
    fc.assert(
      fc.property(lat, lon, lat, lon, fc.double({ min: 1, max: 2e7, noNaN: true }), (aLat, aLon, bLat, bLon, maxM) => {
        const exact = bearingsBetween(aLat, aLon, bLat, bLon).distanceM <= maxM;
        expect(isWithinDistanceM(aLat, aLon, bLat, bLon, maxM)).toBe(exact);
      }),
      { numRuns: 5000 },
    );
  });

  it('agrees on fleet-sized pairs whose limit sits just beside the true distance (fast-check, ±0.5 % … ±2 %)', () => {
    // Short pairs (≤ 200 km) at any latitude, limit set a little above or
    // below the exact distance: the band where the sphere alone could be wrong.
    const offset = fc.double({ min: 0.0001, max: 0.3, noNaN: true });
    fc.assert(
      fc.property(lat, lon, offset, offset, fc.double({ min: -0.02, max: 0.02, noNaN: true }), (aLat, aLon, dLat, dLon, shift) => {
        const bLat = Math.max(-89.9, Math.min(89.9, aLat + dLat * Math.sign(shift || 1)));
        const bLon = aLon + dLon;
        const exactM = bearingsBetween(aLat, aLon, bLat, bLon).distanceM;
        const maxM = exactM * (1 + shift);
        expect(isWithinDistanceM(aLat, aLon, bLat, bLon, maxM)).toBe(exactM <= maxM);
      }),
      { numRuns: 5000 },
    );
  });

  it('along a meridian at the equator and at the pole, where WGS84 departs most from the sphere', () => {
    // 1° of latitude: 110,574 m at the equator, 111,694 m at the pole (WGS84, from memory).
    const equatorM = bearingsBetween(0, 10, 1, 10).distanceM;
    const polarM = bearingsBetween(88.5, 10, 89.5, 10).distanceM;
    expect(equatorM).toBeCloseTo(110_574, -1);
    expect(polarM).toBeCloseTo(111_694, -1);
    expect(isWithinDistanceM(0, 10, 1, 10, equatorM + 1)).toBe(true);
    expect(isWithinDistanceM(0, 10, 1, 10, equatorM - 1)).toBe(false);
    expect(isWithinDistanceM(88.5, 10, 89.5, 10, polarM + 1)).toBe(true);
    expect(isWithinDistanceM(88.5, 10, 89.5, 10, polarM - 1)).toBe(false);
  });
});
