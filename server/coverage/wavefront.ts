// los on projected grids: a wavefront over square rings of cells around the
// observer, visiting every cell once (O(cells), no ray buffer). Each cell's
// horizon (largest elevation slope, from the eye, of the ground between it and
// the observer) is interpolated from the two cells of the previous ring that
// the sight line crosses, then extended with the cell's own ground. This is
// the classic approximate viewshed recursion on a grid (ring order: every
// predecessor lies one ring nearer, so it is final when read).
//
// Curvature and refraction as in sweep.ts: ground lowered by d²/(2·k·R).
import { EARTH_RADIUS_M } from './geometry.ts';
import { BYTE_NODATA } from './rasterise.ts';
import { siteGroundM, type SweepSite, type TerrainWindow } from './sweep.ts';

/** Slope used for "no horizon yet" (finite so that 0-weighted interpolation stays a number). */
const NO_HORIZON = -1e30;

/**
 * Visibility of every window cell (1 visible, 0 hidden, 255 outside the
 * radius or NoData) for a projected window, with the counts of visible and of
 * inside (not 255) cells; returns null for geographic windows (their rays are
 * not straight in pixel space; use the ray sweep).
 */
export function viewshedWavefront(terrain: TerrainWindow, site: SweepSite, radiusM: number): { visible: Uint8Array; visibleCells: number; insideCells: number } | null {
  const f = terrain.frame;
  if (f.kind !== 'projected') return null;
  const w = f.widthPx;
  const h = f.heightPx;
  const g = f.geoTransform;
  // Observer's fractional pixel and its cell.
  const dxS = f.siteX - g[0];
  const dyS = f.siteY - g[3];
  const spx = f.inv[0] * dxS + f.inv[1] * dyS;
  const spy = f.inv[2] * dxS + f.inv[3] * dyS;
  const oc = Math.floor(spx);
  const or = Math.floor(spy);
  if (oc < 0 || or < 0 || oc >= w || or >= h) return null;
  const eyeM = siteGroundM(terrain) + site.heightAglM;
  const targetM = site.targetHeightAglM;
  const dropPerM2 = 1 / (2 * site.kFactor * EARTH_RADIUS_M);
  const elevation = terrain.elevationM;
  // Local metres of cell centre (col, row) relative to the site: affine in col and row.
  const e0 = g[0] + 0.5 * g[1] + 0.5 * g[2] - f.siteX;
  const n0 = g[3] + 0.5 * g[4] + 0.5 * g[5] - f.siteY;
  const cellM = Math.min(Math.hypot(g[1], g[4]), Math.hypot(g[2], g[5]));
  // Rings out to the radius, or to the window's farthest edge when that comes first.
  const rings = Math.min(Math.ceil(radiusM / cellM) + 1, Math.max(oc, w - 1 - oc, or, h - 1 - or));
  const radius2 = radiusM * radiusM;
  // Horizon slopes including each cell's own ground (what farther cells see), kept for two rings only:
  // ring n reads ring n − 1 alone. Slots per ring m: four sides of 2m + 1 (left column, right column,
  // top row, bottom row; position along the side + m), the corners held by the columns and copied to
  // the rows' end slots once the ring is done, so every predecessor pair is two neighbouring slots and
  // a side's reads and writes run along memory (a column of a full grid is one cache line per cell).
  // Float32 as the grid it replaces, and a slot never written reads 0 as that grid's cells did.
  let prevRing = new Float32Array(4 * (2 * rings + 1));
  let ring = new Float32Array(4 * (2 * rings + 1));
  const visible = new Uint8Array(w * h).fill(BYTE_NODATA);
  // Visible and inside cells, [visible, inside]: the site's own cell here, every other one in sweepSide.
  const counts = new Float64Array(2);
  const o = or * w + oc;
  prevRing.fill(NO_HORIZON, 0, 4);
  if (elevation[o] === elevation[o] && (e0 + oc * g[1] + or * g[2]) ** 2 + (n0 + oc * g[4] + or * g[5]) ** 2 <= radius2) {
    visible[o] = 1;
    counts[0]++;
    counts[1]++;
  }
  // Cells that cannot matter are skipped (north-up grids): with D a cell's distance from the observer's
  // cell centre in whole-cell offsets, each of the two predecessors of a cell on ring n lies at most
  // D·(n−1)/n + (one cell along the side) from it, and D/n ≥ the cell size across the side, so D grows by
  // at most |cellX − cellY| per ring going inwards. Every cell an inside cell depends on (itself, its
  // predecessors, theirs, …) therefore has D ≤ radius + (site to cell-centre offset) + rings·|cellX − cellY|;
  // cells beyond that bound (plus one cell of margin) are never read by a cell inside the radius and are
  // outside it themselves, so skipping them leaves every output cell as it was (255 outside the radius).
  const northUp = g[2] === 0 && g[4] === 0;
  const cellX = Math.abs(g[1]);
  const cellY = Math.abs(g[5]);
  const needM = radiusM + Math.hypot(cellX, cellY) + rings * Math.abs(cellX - cellY) + Math.max(cellX, cellY);
  const need2 = needM * needM;
  for (let n = 1; n <= rings; n++) {
    const back = (n - 1) / n;
    const sideSlots = 2 * n + 1;
    const prevSideSlots = 2 * n - 1;
    ring.fill(0, 0, 4 * sideSlots);
    // Cells of ring n: |dc| = n (left/right sides, predecessors in column oc ± (n−1)) or |dr| = n (top/bottom).
    for (let side = 0; side < 4; side++) {
      const vertical = side < 2; // left/right side: the ring's column is fixed
      const sign = side % 2 === 0 ? -1 : 1;
      const fixed = vertical ? oc + sign * n : or + sign * n;
      if (fixed < 0 || fixed >= (vertical ? w : h)) continue;
      // Along the side: offsets −n..n (corners belong to the left/right sides only).
      const lo = vertical ? -n : -n + 1;
      const hi = vertical ? n : n - 1;
      const centre = vertical ? or : oc;
      const limit = vertical ? h : w;
      let startT = Math.max(lo, -centre);
      let endT = Math.min(hi, limit - 1 - centre);
      if (northUp) {
        const acrossM = n * (vertical ? cellX : cellY);
        if (acrossM * acrossM > need2) continue;
        const reach = Math.floor(Math.sqrt(need2 - acrossM * acrossM) / (vertical ? cellY : cellX));
        startT = Math.max(startT, -reach);
        endT = Math.min(endT, reach);
      }
      // Cell index, and local metres, as affine functions of the position u = centre + t along the side
      // (no per-cell branch on the side's orientation).
      const stride = vertical ? w : 1;
      const fixedBase = vertical ? fixed : fixed * w;
      // Slot of position t on this side of ring n, and of position a on the same side of ring n − 1.
      const slotBase = side * sideSlots + n;
      const prevSlotBase = side * prevSideSlots + n - 1;
      const eFixed = e0 + (vertical ? fixed * g[1] : fixed * g[2]);
      const nFixed = n0 + (vertical ? fixed * g[4] : fixed * g[5]);
      const eAlong = vertical ? g[2] : g[1];
      const nAlong = vertical ? g[5] : g[4];
      sweepSide(startT, endT, centre, back, fixedBase, stride, prevSlotBase, slotBase, eFixed, nFixed, eAlong, nAlong, prevRing, ring, elevation, visible, dropPerM2, eyeM, targetM, radius2, counts);
    }
    // Corners (computed on the columns) into the end slots of the rows: top row ← the columns' first
    // slots, bottom row ← their last.
    ring[2 * sideSlots] = ring[0];
    ring[3 * sideSlots - 1] = ring[sideSlots];
    ring[3 * sideSlots] = ring[sideSlots - 1];
    ring[4 * sideSlots - 1] = ring[2 * sideSlots - 1];
    const done = prevRing;
    prevRing = ring;
    ring = done;
  }
  return { visible, visibleCells: counts[0], insideCells: counts[1] };
}

/**
 * The cells t = startT…endT of one side of ring n (see viewshedWavefront): a small function of its own, so
 * that V8 optimises it after a few sides instead of waiting for the on-stack replacement of the whole
 * sweep (a run is one call; its first ~1.4 M cells would otherwise run in the interpreter the longer).
 */
function sweepSide(
  startT: number, endT: number, centre: number, back: number, fixedBase: number, stride: number, prevSlotBase: number, slotBase: number,
  eFixed: number, nFixed: number, eAlong: number, nAlong: number, prevRing: Float32Array, ring: Float32Array, elevation: Float32Array, visible: Uint8Array,
  dropPerM2: number, eyeM: number, targetM: number, radius2: number, counts: Float64Array,
): void {
  let visibleCells = 0;
  let insideCells = 0;
  for (let t = startT; t <= endT; t++) {
    const u = centre + t;
    const cell = fixedBase + u * stride;
    // Where the sight line to this cell crosses the previous ring, and its two neighbours there.
    const along = t * back;
    const a0 = Math.floor(along);
    const frac = along - a0;
    const p0 = prevSlotBase + a0;
    const horizon = frac > 0 ? prevRing[p0] * (1 - frac) + prevRing[p0 + 1] * frac : prevRing[p0];
    const e = eFixed + u * eAlong;
    const nn = nFixed + u * nAlong;
    const d2 = e * e + nn * nn;
    const ground = elevation[cell];
    if (ground !== ground) {
      ring[slotBase + t] = horizon;
      continue;
    }
    const d = Math.sqrt(d2);
    const lowered = ground - d2 * dropPerM2 - eyeM;
    const slope = lowered / d;
    ring[slotBase + t] = slope > horizon ? slope : horizon;
    if (d2 > radius2) continue;
    insideCells++;
    if ((lowered + targetM) / d >= horizon) {
      visible[cell] = 1;
      visibleCells++;
    } else {
      visible[cell] = 0;
    }
  }
  counts[0] += visibleCells;
  counts[1] += insideCells;
}
