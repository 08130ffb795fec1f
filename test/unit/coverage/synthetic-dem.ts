// Deterministic synthetic terrain for coverage checks (our own invented
// landscape: rolling hills, two ridges and a valley; labelled synthetic).
// Heights in metres on a grid of `cellM` metre cells, row 0 at the north.

export interface SyntheticDem {
  widthPx: number;
  heightPx: number;
  cellM: number;
  elevationM: Float32Array;
}

/** Pseudo-random but repeatable value noise in [0, 1). */
function hash(i: number, j: number, seed: number): number {
  let h = (i * 374_761_393 + j * 668_265_263 + seed * 982_451_653) | 0;
  h = Math.imul(h ^ (h >>> 13), 1_274_126_177);
  h ^= h >>> 16;
  return (h >>> 0) / 4_294_967_296;
}

function smoothNoise(x: number, y: number, seed: number): number {
  const i = Math.floor(x);
  const j = Math.floor(y);
  const fx = x - i;
  const fy = y - j;
  const sx = fx * fx * (3 - 2 * fx);
  const sy = fy * fy * (3 - 2 * fy);
  const a = hash(i, j, seed);
  const b = hash(i + 1, j, seed);
  const c = hash(i, j + 1, seed);
  const d = hash(i + 1, j + 1, seed);
  return a + (b - a) * sx + (c - a) * sy + (a - b - c + d) * sx * sy;
}

/** Terrain of `widthPx` × `heightPx` cells; roughness scales the small-scale relief. */
export function makeSyntheticDem(widthPx: number, heightPx: number, cellM: number, seed = 7, roughness = 1): SyntheticDem {
  const elevationM = new Float32Array(widthPx * heightPx);
  for (let row = 0; row < heightPx; row++) {
    for (let col = 0; col < widthPx; col++) {
      const xKm = (col * cellM) / 1000;
      const yKm = (row * cellM) / 1000;
      let h = 200;
      h += 120 * smoothNoise(xKm / 6, yKm / 6, seed);
      h += 50 * roughness * smoothNoise(xKm / 1.5, yKm / 1.5, seed + 1);
      h += 12 * roughness * smoothNoise(xKm / 0.3, yKm / 0.3, seed + 2);
      // A ridge running north-east and a valley floor.
      const ridge = Math.abs(xKm - yKm * 0.8 - 3);
      h += 90 * Math.exp(-ridge * ridge * 2);
      elevationM[row * widthPx + col] = h;
    }
  }
  return { widthPx, heightPx, cellM, elevationM };
}
