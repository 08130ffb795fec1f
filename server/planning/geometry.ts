// Geometry of a link seen from its two ends: the bearing each antenna must
// look along, and the elevation of the path at each end over a curved earth.
import geodesic from 'geographiclib-geodesic';

const WGS84 = geodesic.Geodesic.WGS84;

/** Mean earth radius used with the effective-earth factor, km (ITU-R P.1812 / P.452 a = 6371 km). */
export const EARTH_RADIUS_KM = 6371;

/** Median effective earth-radius factor k50 = 157 / (157 − ΔN), ITU-R P.1812-8 Eq. (5). */
export function medianEarthFactor(deltaN = 45): number {
  return 157 / (157 - deltaN);
}

export interface Bearings {
  distanceM: number;
  /** Azimuth at the first point toward the second, degrees clockwise from north, 0–360. */
  forwardAzimuthDeg: number;
  /** Azimuth at the second point back toward the first, 0–360. */
  backAzimuthDeg: number;
}

/** Geodesic distance and the azimuth at each end (WGS84, Karney's algorithm via geographiclib). */
export function bearingsBetween(fromLat: number, fromLon: number, toLat: number, toLon: number): Bearings {
  const r = WGS84.Inverse(fromLat, fromLon, toLat, toLon);
  const s12 = r.s12 ?? 0;
  const azi1 = r.azi1 ?? 0;
  const azi2 = r.azi2 ?? 0;
  // azi2 is the forward direction at the far point; the back azimuth points the other way.
  return { distanceM: s12, forwardAzimuthDeg: normaliseDeg(azi1), backAzimuthDeg: normaliseDeg(azi2 + 180) };
}

/**
 * Elevation angle (degrees) at an antenna at `fromAmslM` toward one at
 * `toAmslM` a distance `distanceM` away, over an earth of effective radius
 * k·a: θ = atan((h2 − h1)/d − d/(2·k·a)) (the usual spherical-earth form,
 * as in ITU-R P.1812's horizon elevation angles).
 */
export function pathElevationDeg(fromAmslM: number, toAmslM: number, distanceM: number, earthFactor = medianEarthFactor()): number {
  if (distanceM <= 0) return 0;
  const effectiveRadiusM = earthFactor * EARTH_RADIUS_KM * 1000;
  return (Math.atan((toAmslM - fromAmslM) / distanceM - distanceM / (2 * effectiveRadiusM)) * 180) / Math.PI;
}

function normaliseDeg(angleDeg: number): number {
  const a = angleDeg % 360;
  return a < 0 ? a + 360 : a;
}
