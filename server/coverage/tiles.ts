// Map tiles of a coverage margin raster: Web Mercator XYZ, 256 px PNG, one
// colour per margin class in a scale of our own. The scale runs from a dark
// blue (most margin) through light blue to yellow and orange (least), a
// blue–orange ramp that stays distinct under the common forms of colour
// blindness (no red/green pair); lightness also falls monotonically with
// margin, so it reads in grey too. Cells below −5 dB and outside are transparent.
import { encodePng } from '../terrain/png.ts';
import { mercatorPixelToLonLat } from '../terrain/hillshade.ts';
import { TILE_SIZE_PX, validTile, tileWindowAffordable } from '../terrain/tiles.ts';
import type { GeoRaster } from '../terrain/raster.ts';

export interface MarginClass {
  /** Lower bound of the class, dB (inclusive); the first class has no upper bound. */
  minMarginDb: number;
  label: string;
  /** #rrggbb */
  colour: string;
  rgba: [number, number, number, number];
}

function rgba(hex: string, alpha = 210): [number, number, number, number] {
  return [parseInt(hex.slice(1, 3), 16), parseInt(hex.slice(3, 5), 16), parseInt(hex.slice(5, 7), 16), alpha];
}

/** Margin classes, strongest first. */
export const MARGIN_CLASSES: MarginClass[] = [
  { minMarginDb: 20, label: '≥ 20 dB: strong', colour: '#10307a' },
  { minMarginDb: 10, label: '10 – 20 dB: good', colour: '#2f6fba' },
  { minMarginDb: 5, label: '5 – 10 dB: fair', colour: '#86bde6' },
  { minMarginDb: 0, label: '0 – 5 dB: marginal', colour: '#f3d36b' },
  { minMarginDb: -5, label: '−5 – 0 dB: below sensitivity, heard sometimes', colour: '#d9822b' },
].map((c) => ({ ...c, rgba: rgba(c.colour) }));

export function legend() {
  return {
    quantity: 'margin at the chosen SF (received power − sensitivity), dB',
    classes: MARGIN_CLASSES.map(({ minMarginDb, label, colour }) => ({ minMarginDb, label, colour })),
    transparent: 'below −5 dB, outside the radius, or no terrain',
    note: 'blue–orange scale chosen to stay distinct with red–green colour blindness; lightness falls with margin',
  };
}

/** Buffers one margin tile render needs; a caller rendering many tiles (the report map) reuses one. */
export interface MarginTileScratch {
  px: Float64Array;
  py: Float64Array;
  /** RGBA, TILE_SIZE_PX² × 4 bytes: the returned pixels (cleared at the start of each render). */
  pixels: Uint8Array;
}

export function newMarginTileScratch(): MarginTileScratch {
  const n = TILE_SIZE_PX;
  return { px: new Float64Array(n * n), py: new Float64Array(n * n), pixels: new Uint8Array(n * n * 4) };
}

/** Renders tile (z, x, y) of a margin raster (nearest cell); returns null for an invalid tile address. */
export async function renderMarginTile(raster: GeoRaster, z: number, x: number, y: number): Promise<Uint8Array | null> {
  const pixels = await marginTilePixels(raster, z, x, y);
  return pixels ? encodePng(TILE_SIZE_PX, TILE_SIZE_PX, pixels, 'rgba') : null;
}

/**
 * The RGBA pixels renderMarginTile encodes (null for an invalid tile address). With a `scratch`
 * (newMarginTileScratch) the pixels are its buffer, overwritten by the next render.
 */
export async function marginTilePixels(raster: GeoRaster, z: number, x: number, y: number, scratch: MarginTileScratch = newMarginTileScratch()): Promise<Uint8Array | null> {
  if (!validTile(z, x, y)) return null;
  const n = TILE_SIZE_PX;
  const { px, py } = scratch;
  let minX = Infinity;
  let minY = Infinity;
  let maxX = -Infinity;
  let maxY = -Infinity;
  for (let r = 0; r < n; r++) {
    for (let c = 0; c < n; c++) {
      const p = mercatorPixelToLonLat(x * n + c + 0.5, y * n + r + 0.5, z);
      const q = raster.lonLatToPixel(p.lon, p.lat);
      px[r * n + c] = q.x;
      py[r * n + c] = q.y;
      if (q.x < minX) minX = q.x;
      if (q.x > maxX) maxX = q.x;
      if (q.y < minY) minY = q.y;
      if (q.y > maxY) maxY = q.y;
    }
  }
  const pixels = scratch.pixels.fill(0);
  const x0 = Math.max(0, Math.floor(minX));
  const y0 = Math.max(0, Math.floor(minY));
  const x1 = Math.min(raster.widthPx, Math.ceil(maxX) + 1);
  const y1 = Math.min(raster.heightPx, Math.ceil(maxY) + 1);
  if (x1 > x0 && y1 > y0 && tileWindowAffordable(raster, x0, y0, x1 - x0, y1 - y0)) {
    const w = x1 - x0;
    const window = await raster.readWindow(x0, y0, w, y1 - y0);
    for (let k = 0; k < n * n; k++) {
      const col = Math.floor(px[k]) - x0;
      const row = Math.floor(py[k]) - y0;
      if (col < 0 || row < 0 || col >= w || row >= y1 - y0) continue;
      const margin = window[row * w + col];
      if (margin !== margin) continue;
      for (const cls of MARGIN_CLASSES) {
        if (margin >= cls.minMarginDb) {
          pixels.set(cls.rgba, k * 4);
          break;
        }
      }
    }
  }
  return pixels;
}
