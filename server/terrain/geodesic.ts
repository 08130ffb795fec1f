// Points along the WGS 84 geodesic between two positions (Karney's algorithm via geographiclib-geodesic).
import geographiclib from 'geographiclib-geodesic';
import { metresPerDegree } from './raster.ts';

const { Geodesic } = geographiclib;
const WGS84 = Geodesic.WGS84;

export interface LatLon {
  lat: number;
  lon: number;
}

/** Geodesic distance (m) and forward azimuths (degrees from north) between two positions on WGS 84. */
export function geodesicInverse(from: LatLon, to: LatLon): { distanceM: number; azimuthFromDeg: number; azimuthToDeg: number } {
  const r = WGS84.Inverse(from.lat, from.lon, to.lat, to.lon, Geodesic.DISTANCE | Geodesic.AZIMUTH);
  return { distanceM: r.s12 ?? 0, azimuthFromDeg: r.azi1 ?? 0, azimuthToDeg: r.azi2 ?? 0 };
}

/** Exact positions are computed every NODE_EVERY points; points between are cubic Hermite interpolated. */
export const NODE_EVERY = 16;

/**
 * Fills lat/lon (degrees) of `count` points at distances `i · lengthM / (count − 1)` along the geodesic.
 * Every NODE_EVERY-th point (and the last) is an exact geodesic position; points between are cubic Hermite
 * interpolated in lat/lon from the two neighbouring exact positions and their azimuths (error far below a
 * millimetre at node spacings of a kilometre; checked against exact positions in test/unit/terrain/geodesic.test.ts).
 */
export function geodesicPoints(from: LatLon, to: LatLon, count: number, lat: Float64Array, lon: Float64Array): number {
  const line = WGS84.InverseLine(from.lat, from.lon, to.lat, to.lon, Geodesic.LATITUDE | Geodesic.LONGITUDE | Geodesic.AZIMUTH | Geodesic.DISTANCE_IN);
  const lengthM = line.s13;
  if (count < 2) throw new RangeError('geodesicPoints: count must be at least 2');
  const stepM = lengthM / (count - 1);
  const mask = Geodesic.LATITUDE | Geodesic.LONGITUDE | Geodesic.AZIMUTH | Geodesic.LONG_UNROLL;
  const at = (s: number) => {
    const r = line.Position(s, mask);
    return { lat: r.lat2 ?? Number.NaN, lon: r.lon2 ?? Number.NaN, azi: r.azi2 ?? Number.NaN };
  };
  let prev = at(0);
  lat[0] = from.lat;
  lon[0] = from.lon;
  for (let start = 0; start < count - 1; start += NODE_EVERY) {
    const end = Math.min(count - 1, start + NODE_EVERY);
    const next = at(end * stepM);
    const segmentM = (end - start) * stepM;
    // Derivatives d(lat)/ds and d(lon)/ds (degrees per metre) at both nodes, from the azimuths.
    const m0 = metresPerDegree(prev.lat);
    const m1 = metresPerDegree(next.lat);
    const a0 = (prev.azi * Math.PI) / 180;
    const a1 = (next.azi * Math.PI) / 180;
    const dLat0 = (Math.cos(a0) / m0.lat) * segmentM;
    const dLon0 = (Math.sin(a0) / m0.lon) * segmentM;
    const dLat1 = (Math.cos(a1) / m1.lat) * segmentM;
    const dLon1 = (Math.sin(a1) / m1.lon) * segmentM;
    const lat0 = prev.lat;
    const lon0 = prev.lon;
    const lat1 = next.lat;
    const lon1 = next.lon;
    for (let i = start + 1; i < end; i++) {
      const t = (i - start) / (end - start);
      const t2 = t * t;
      const t3 = t2 * t;
      const h00 = 2 * t3 - 3 * t2 + 1;
      const h10 = t3 - 2 * t2 + t;
      const h01 = -2 * t3 + 3 * t2;
      const h11 = t3 - t2;
      lat[i] = h00 * lat0 + h10 * dLat0 + h01 * lat1 + h11 * dLat1;
      lon[i] = h00 * lon0 + h10 * dLon0 + h01 * lon1 + h11 * dLon1;
    }
    lat[end] = lat1;
    lon[end] = lon1;
    prev = next;
  }
  // The ends are the given positions exactly (longitude unrolled by LONG_UNROLL is wrapped back to ±180).
  lat[count - 1] = to.lat;
  lon[count - 1] = to.lon;
  for (let i = 1; i < count - 1; i++) {
    if (lon[i] > 180) lon[i] -= 360;
    else if (lon[i] < -180) lon[i] += 360;
  }
  return lengthM;
}
