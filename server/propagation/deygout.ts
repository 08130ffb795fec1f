// Multiple knife-edge diffraction by the Deygout construction (up to three edges):
// the edge with the highest diffraction parameter ν over the whole path is the main
// edge; the highest-ν edge of each sub-path (Tx→main, main→Rx) is added when it
// obstructs. Each edge's loss is J(ν) of ITU-R P.526-16 Eq. (31). No empirical
// correction is applied, so for closely spaced edges the result leans pessimistic.
import { knifeEdgeLossDb } from './knife-edge.ts';
import { EARTH_RADIUS_KM, DEFAULT_K_FACTOR } from './path-geometry.ts';

export interface DeygoutResult {
  lossDb: number;
  /** Profile indices of the edges used (main first); empty when nothing obstructs. */
  edgeIndices: number[];
  edgeLossesDb: number[];
}

/** Highest ν between profile indices a and b (exclusive) on the ray from (a, ha) to (b, hb). */
function highestEdge(
  d: ArrayLike<number>,
  surface: (i: number) => number,
  a: number,
  b: number,
  ha: number,
  hb: number,
  wavelengthM: number,
): { index: number; v: number } {
  let best = -Infinity;
  let bestIndex = -1;
  const da = d[a];
  const span = d[b] - da;
  for (let i = a + 1; i < b; i++) {
    const d1 = d[i] - da;
    const d2 = span - d1;
    const h = surface(i) - (ha + ((hb - ha) * d1) / span);
    // P.526-16 Eq. (26) with distances in metres.
    const v = h * Math.sqrt((2 / wavelengthM) * (1 / (d1 * 1000) + 1 / (d2 * 1000)));
    if (v > best) {
      best = v;
      bestIndex = i;
    }
  }
  return { index: bestIndex, v: best };
}

/**
 * Deygout loss (in dB) over a profile for antennas `txHeightAglM`/`rxHeightAglM` above the end points,
 * earth curvature for `kFactor` (default 4/3) and up to `maxEdges` (1–3) edges.
 */
export function deygoutLossDb(
  distanceKm: ArrayLike<number>,
  groundM: ArrayLike<number>,
  txHeightAglM: number,
  rxHeightAglM: number,
  frequencyMhz: number,
  kFactor = DEFAULT_K_FACTOR,
  maxEdges = 3,
): DeygoutResult {
  const n = distanceKm.length;
  const wavelengthM = 299_792_458 / (frequencyMhz * 1e6);
  const total = distanceKm[n - 1] - distanceKm[0];
  const ae = kFactor * EARTH_RADIUS_KM;
  // Earth bulge added to each point (flat-baseline drawing of the curved earth).
  const surface = (i: number): number => {
    const d1 = distanceKm[i] - distanceKm[0];
    return groundM[i] + (1000 * d1 * (total - d1)) / (2 * ae);
  };
  const tx = groundM[0] + txHeightAglM;
  const rx = groundM[n - 1] + rxHeightAglM;
  const result: DeygoutResult = { lossDb: 0, edgeIndices: [], edgeLossesDb: [] };
  if (n < 3) return result;
  const main = highestEdge(distanceKm, surface, 0, n - 1, tx, rx, wavelengthM);
  const mainLoss = knifeEdgeLossDb(main.v);
  if (mainLoss <= 0) return result;
  result.edgeIndices.push(main.index);
  result.edgeLossesDb.push(mainLoss);
  result.lossDb = mainLoss;
  if (maxEdges < 2) return result;
  const top = surface(main.index);
  const sides = [
    highestEdge(distanceKm, surface, 0, main.index, tx, top, wavelengthM),
    highestEdge(distanceKm, surface, main.index, n - 1, top, rx, wavelengthM),
  ].filter((edge) => edge.index >= 0 && knifeEdgeLossDb(edge.v) > 0);
  sides.sort((a, b) => b.v - a.v);
  for (const edge of sides.slice(0, maxEdges - 1)) {
    const loss = knifeEdgeLossDb(edge.v);
    result.edgeIndices.push(edge.index);
    result.edgeLossesDb.push(loss);
    result.lossDb += loss;
  }
  return result;
}
