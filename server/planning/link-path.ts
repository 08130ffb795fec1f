// The expensive part of one link: the terrain profile node → gateway and the
// path prediction over it. One function for every caller (the API and CLI in
// their own thread, the link worker threads of server/jobs/link-pool.ts), so a
// path predicted in a worker is the same number as one predicted in-thread.
// The terrain store is passed in (no globals); without one the path runs over a
// smooth earth at 0 m.
import type { TerrainStore, Interpolation } from '../terrain/store.ts';
import { extractProfile } from '../terrain/profile.ts';
import { bearingsBetween, bearingsOf } from './geometry.ts';
import { predictPath, type PathEnd, type PathPrediction, type PathProfile, type PathScratch, type PathSettings } from './path.ts';

/** The plan settings a path depends on (a structured-clone-safe subset of ResolvedLinkSettings). */
export interface LinkPathSettings {
  path: PathSettings;
  /** Profile step, m (null = the terrain's finest resolution under the path). */
  profileStepM: number | null;
  profileInterpolation: Interpolation;
}

export type LinkProfile = PathProfile & { lat: Float64Array | null; lon: Float64Array | null; filledPoints: number };

/** The terrain profile node → gateway (smooth earth at 0 m without terrain). */
export async function linkProfile(terrain: TerrainStore | null, settings: LinkPathSettings, from: { lat: number; lon: number }, to: { lat: number; lon: number }): Promise<LinkProfile> {
  if (!terrain) {
    const bearings = bearingsBetween(from.lat, from.lon, to.lat, to.lon);
    const lengthM = bearings.distanceM;
    const count = Math.max(3, Math.min(2001, Math.ceil(lengthM / 30) + 1));
    const distanceM = new Float64Array(count);
    for (let i = 0; i < count; i++) distanceM[i] = (lengthM * i) / (count - 1);
    return { distanceM, groundM: new Float64Array(count), clutterHeightM: null, lat: null, lon: null, filledPoints: 0, bearings };
  }
  const step = settings.profileStepM ?? undefined;
  let profile;
  try {
    profile = await extractProfile(terrain, from, to, { stepM: step, interpolation: settings.profileInterpolation, maxPoints: 20_001 });
  } catch (error) {
    if (!(error instanceof RangeError)) throw error;
    const lengthM = bearingsBetween(from.lat, from.lon, to.lat, to.lon).distanceM;
    profile = await extractProfile(terrain, from, to, { stepM: Math.max(lengthM / 20_000, step ?? 0), interpolation: settings.profileInterpolation, maxPoints: 20_001 });
  }
  let distanceM = profile.distanceM;
  let groundM = profile.groundM;
  let clutter = profile.clutterHeightM ?? null;
  if (distanceM.length < 3) {
    // Very short paths: three points so every method has a mid-point.
    const total = distanceM[distanceM.length - 1];
    distanceM = Float64Array.from([0, total / 2, total]);
    const g0 = groundM[0];
    const g1 = groundM[groundM.length - 1];
    groundM = Float64Array.from([g0, (g0 + g1) / 2, g1]);
    clutter = clutter ? Float64Array.from([clutter[0], (clutter[0] + clutter[clutter.length - 1]) / 2, clutter[clutter.length - 1]]) : null;
  }
  const filledPoints = fillGaps(groundM);
  if (clutter) for (let i = 0; i < clutter.length; i++) if (!Number.isFinite(clutter[i])) clutter[i] = 0;
  // The profile solved the geodesic from → to once; the path's bearings reuse that solution.
  const bearings = bearingsOf({ distanceM: profile.lengthM, azimuthFromDeg: profile.azimuthFromDeg, azimuthToDeg: profile.azimuthToDeg });
  return { distanceM, groundM, clutterHeightM: clutter, lat: profile.lat, lon: profile.lon, filledPoints, bearings };
}

/** Profile + path prediction of one node → gateway pair (`scratch`: see PathScratch). */
export async function computeLinkPath(terrain: TerrainStore | null, settings: LinkPathSettings, node: PathEnd, gateway: PathEnd, scratch?: PathScratch): Promise<PathPrediction> {
  const profile = await linkProfile(terrain, settings, node, gateway);
  const path = predictPath(profile, settings.path, node, gateway, scratch);
  if (profile.filledPoints > 0) path.warnings.push(`${profile.filledPoints} profile points had no terrain data and were filled from their neighbours`);
  return path;
}

/** Fills NaN ground heights from the nearest valid neighbours (linear between them); returns how many. */
function fillGaps(values: Float64Array): number {
  let filled = 0;
  const n = values.length;
  let last = -1;
  for (let i = 0; i < n; i++) {
    if (Number.isFinite(values[i])) {
      if (last < i - 1) {
        for (let j = last + 1; j < i; j++) {
          values[j] = last < 0 ? values[i] : values[last] + ((values[i] - values[last]) * (j - last)) / (i - last);
          filled++;
        }
      }
      last = i;
    }
  }
  if (last < 0) {
    values.fill(0);
    return n;
  }
  for (let j = last + 1; j < n; j++) {
    values[j] = values[last];
    filled++;
  }
  return filled;
}
