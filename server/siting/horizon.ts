// How far apart two antennas can be before the earth's bulge alone hides one
// from the other: the smooth-earth radio horizon over an effective earth of
// radius k·a. d = √(2·k·a·h1) + √(2·k·a·h2) (the tangent-line geometry of a
// sphere; with k = 4/3 this is the familiar d[km] ≈ 4.12·(√h1 + √h2), h in m).
import { EARTH_RADIUS_KM } from '../propagation/path-geometry.ts';

/** Smooth-earth radio horizon between antennas `h1M` and `h2M` above a common reference, m. */
export function radioHorizonM(h1M: number, h2M: number, kFactor: number): number {
  const aeM = kFactor * EARTH_RADIUS_KM * 1000;
  return Math.sqrt(2 * aeM * Math.max(0, h1M)) + Math.sqrt(2 * aeM * Math.max(0, h2M));
}
