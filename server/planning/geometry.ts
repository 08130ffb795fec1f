// Geometry of a link seen from its two ends: the bearing each antenna must
// look along, and the elevation of the path at each end over a curved earth.
import { geodesicInverse } from '../terrain/geodesic.ts';
import { EARTH_RADIUS_KM } from '../propagation/path-geometry.ts';


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

/** Geodesic distance and the azimuth at each end (WGS84, through the terrain room's geodesic). */
export function bearingsBetween(fromLat: number, fromLon: number, toLat: number, toLon: number): Bearings {
  return bearingsOf(geodesicInverse({ lat: fromLat, lon: fromLon }, { lat: toLat, lon: toLon }));
}

/** Bearings from a geodesic inverse solution already at hand (a terrain profile solves it once). */
export function bearingsOf(r: { distanceM: number; azimuthFromDeg: number; azimuthToDeg: number }): Bearings {
  // azimuthToDeg is the forward direction at the far point; looking back is the opposite way.
  return { distanceM: r.distanceM, forwardAzimuthDeg: normaliseDeg(r.azimuthFromDeg), backAzimuthDeg: normaliseDeg(r.azimuthToDeg + 180) };
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
