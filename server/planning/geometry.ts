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

// On WGS84 the radius of curvature runs from 6,335 km (meridian at the equator)
// to 6,400 km (at the poles), so the geodesic is within −0.6 % … +0.5 % of the
// great circle on the 6,371 km sphere of the path geometry; a 1 % band on each side is safe.
const SPHERE_BAND = 0.01;

/**
 * Whether two points lie within `maxDistanceM` of each other along the WGS84
 * geodesic. A great-circle (haversine) distance decides every pair clearly
 * inside or outside; only pairs within 1 % of the limit pay for the exact
 * geodesic inverse. Fleet link runs test every node × gateway pair and most
 * are far out of range, so this is the one range test they share.
 */
export function isWithinDistanceM(fromLat: number, fromLon: number, toLat: number, toLon: number, maxDistanceM: number): boolean {
  const toRad = Math.PI / 180;
  const sinHalfDLat = Math.sin(((toLat - fromLat) * toRad) / 2);
  const sinHalfDLon = Math.sin(((toLon - fromLon) * toRad) / 2);
  const h = sinHalfDLat * sinHalfDLat + Math.cos(fromLat * toRad) * Math.cos(toLat * toRad) * sinHalfDLon * sinHalfDLon;
  const sphereM = 2 * EARTH_RADIUS_KM * 1000 * Math.asin(Math.min(1, Math.sqrt(h)));
  if (sphereM > maxDistanceM * (1 + SPHERE_BAND)) return false;
  if (sphereM < maxDistanceM * (1 - SPHERE_BAND)) return true;
  return bearingsBetween(fromLat, fromLon, toLat, toLon).distanceM <= maxDistanceM;
}
