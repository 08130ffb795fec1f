// Radio-meteorological parameters of ITU-R P.1812-8 §3.4–3.5: path centre,
// time percentage β0 for anomalous propagation (Eq. (5) with μ1, τ and μ4), effective earth
// radii (Eq. (7a)–(7b)), and the zone statistics dtm, dlm and ω of the profile.
import { ZONE_INLAND, ZONE_SEA } from './types.ts';

const EARTH_RADIUS_KM = 6371;
const DEG = Math.PI / 180;

/**
 * Latitude (degrees) of the path centre: the point half the profile length `distanceKm` from the
 * transmitter along the great circle towards the receiver (spherical earth of radius 6371 km),
 * as the Recommendation's great-circle path construction does (it uses the profile length, which
 * may differ slightly from the great-circle distance between the coordinates).
 */
export function pathCentreLatitudeDeg(
  txLatDeg: number,
  txLonDeg: number,
  rxLatDeg: number,
  rxLonDeg: number,
  distanceKm: number,
): number {
  const p1 = txLatDeg * DEG;
  const p2 = rxLatDeg * DEG;
  const dl = (rxLonDeg - txLonDeg) * DEG;
  const bearing = Math.atan2(Math.sin(dl) * Math.cos(p2), Math.cos(p1) * Math.sin(p2) - Math.sin(p1) * Math.cos(p2) * Math.cos(dl));
  const delta = distanceKm / 2 / EARTH_RADIUS_KM;
  return Math.asin(Math.sin(p1) * Math.cos(delta) + Math.cos(p1) * Math.sin(delta) * Math.cos(bearing)) / DEG;
}

/** Median effective earth radius ae (km) from ΔN, P.1812-8 Eq. (7a) with k50 = 157/(157 − ΔN). */
export function medianEffectiveRadiusKm(deltaN: number): number {
  return (EARTH_RADIUS_KM * 157) / (157 - deltaN);
}

/** Effective earth radius aβ (km) exceeded for β0 % of time, Eq. (7b): kβ = 3. */
export const BETA_EFFECTIVE_RADIUS_KM = EARTH_RADIUS_KM * 3;

/**
 * β0 (%), the time percentage for which refractivity lapse rates exceeding 100 N-units/km
 * can be expected in the first 100 m of the atmosphere, Eq. (5) with μ1, τ and μ4.
 */
export function beta0Percent(pathCentreLatDeg: number, dtmKm: number, dlmKm: number): number {
  const lat = Math.abs(pathCentreLatDeg);
  const tau = 1 - Math.exp(-4.12e-4 * Math.pow(dlmKm, 2.41));
  let mu1 = Math.pow(Math.pow(10, -dtmKm / (16 - 6.6 * tau)) + Math.pow(10, -5 * (0.496 + 0.354 * tau)), 0.2);
  if (mu1 > 1) mu1 = 1;
  const logMu1 = Math.log10(mu1);
  if (lat <= 70) {
    const mu4 = Math.pow(10, (-0.935 + 0.0176 * lat) * logMu1);
    return Math.pow(10, -0.015 * lat + 1.67) * mu1 * mu4;
  }
  const mu4 = Math.pow(10, 0.3 * logMu1);
  return 4.17 * mu1 * mu4;
}

/** τ of the β0 formula (Eq. (5)), needed again by the ducting model (α of μ2). */
export function tauOfInlandLength(dlmKm: number): number {
  return 1 - Math.exp(-4.12e-4 * Math.pow(dlmKm, 2.41));
}

export interface ZoneStatistics {
  /** Longest continuous land (inland + coastal) section (km). */
  dtmKm: number;
  /** Longest continuous inland section (km). */
  dlmKm: number;
  /** Fraction of the path over sea, ω. */
  omega: number;
}

/**
 * dtm, dlm and ω from the zone code of each profile point. Each point stands for the
 * stretch half way to its neighbours (the end points for half a step), so the lengths
 * add up to the path length.
 */
export function zoneStatistics(distanceKm: Float64Array, zone: Uint8Array, count: number): ZoneStatistics {
  let landRun = 0;
  let inlandRun = 0;
  let dtm = 0;
  let dlm = 0;
  let sea = 0;
  for (let i = 0; i < count; i++) {
    const left = i > 0 ? distanceKm[i - 1] : distanceKm[0];
    const right = i < count - 1 ? distanceKm[i + 1] : distanceKm[count - 1];
    const stretch = (right - left) / 2;
    const z = zone[i];
    if (z === ZONE_SEA) {
      sea += stretch;
      landRun = 0;
      inlandRun = 0;
    } else {
      landRun += stretch;
      if (landRun > dtm) dtm = landRun;
      if (z === ZONE_INLAND) {
        inlandRun += stretch;
        if (inlandRun > dlm) dlm = inlandRun;
      } else {
        inlandRun = 0;
      }
    }
  }
  const total = distanceKm[count - 1] - distanceKm[0];
  return { dtmKm: dtm, dlmKm: dlm, omega: sea / total };
}
