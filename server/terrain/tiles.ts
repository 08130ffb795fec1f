// Hillshade basemap tiles (Web Mercator XYZ, 256 px) rendered from a plan's elevation rasters,
// so the map works offline. Reads one window per raster per tile, from the overview whose
// resolution best fits the zoom (one choice per raster and zoom, so neighbouring tiles agree),
// and mosaics finest layer first.
import { encodePng } from './png.ts';
import { hillshade, mercatorPixelSizeM, mercatorPixelToLonLat, type HillshadeOptions } from './hillshade.ts';
import type { GeoRaster } from './raster.ts';

export const TILE_SIZE_PX = 256;

/** Windows larger than this (cells) are not read for one tile: the tile is left transparent there. */
export const MAX_TILE_WINDOW_CELLS = 4_000_000;
/**
 * Nor windows whose tiles/strips decode to more pixels than this: a narrow window of a stripped raster
 * decodes every strip across the full width (a 1 245-row window of a 20 000-wide file is 25 M pixels).
 */
export const MAX_TILE_DECODE_CELLS = 32_000_000;

/** Whether one tile may read this window of `raster` (level 0 = full resolution). */
export function tileWindowAffordable(raster: GeoRaster, x0: number, y0: number, w: number, h: number, level = 0): boolean {
  return w * h <= MAX_TILE_WINDOW_CELLS && raster.blockCellsTouched(x0, y0, w, h, level) <= MAX_TILE_DECODE_CELLS;
}

export interface TileResult {
  png: Uint8Array;
  /** False when no raster had data in the tile (the PNG is fully transparent). */
  hasData: boolean;
  /** True when some raster covered the tile but was skipped as too large to read at this zoom (no overview fits). */
  tooCoarse: boolean;
}

export function validTile(z: number, x: number, y: number): boolean {
  if (!Number.isInteger(z) || !Number.isInteger(x) || !Number.isInteger(y) || z < 0 || z > 24) return false;
  const n = 2 ** z;
  return x >= 0 && y >= 0 && x < n && y < n;
}

/** The overview level (0 = full resolution) whose pixels are the coarsest not coarser than `targetM`. */
function chooseLevel(raster: GeoRaster, targetM: number): { level: number; fx: number; fy: number; w: number; h: number } {
  let best = { level: 0, fx: 1, fy: 1, w: raster.widthPx, h: raster.heightPx };
  const baseM = Math.min(raster.resolutionM.x, raster.resolutionM.y);
  raster.overviews.forEach((o, i) => {
    const fx = raster.widthPx / o.widthPx;
    const fy = raster.heightPx / o.heightPx;
    if (baseM * Math.min(fx, fy) <= targetM) best = { level: i + 1, fx, fy, w: o.widthPx, h: o.heightPx };
  });
  return best;
}

/** Buffers one hillshade tile render needs; a caller rendering many tiles (the report map) reuses one. */
export interface HillshadeTileScratch {
  heights: Float64Array;
  lat: Float64Array;
  lon: Float64Array;
  px: Float64Array;
  py: Float64Array;
  rowCellM: Float64Array;
}

export function newHillshadeTileScratch(): HillshadeTileScratch {
  const n = TILE_SIZE_PX + 2;
  return { heights: new Float64Array(n * n), lat: new Float64Array(n * n), lon: new Float64Array(n * n), px: new Float64Array(n * n), py: new Float64Array(n * n), rowCellM: new Float64Array(n) };
}

/** A hillshade tile's pixels before PNG encoding: grey + alpha, TILE_SIZE_PX² × 2 bytes. */
export interface HillshadeTilePixels {
  pixels: Uint8Array;
  hasData: boolean;
  tooCoarse: boolean;
}

/**
 * Renders tile (z, x, y): heights sampled (bilinear, pixel-centre convention) at the centres of a 258 × 258
 * grid (the tile plus a one-pixel ring for Horn's 3 × 3 window), then shaded; transparent where no data.
 */
export async function renderHillshadeTile(rasters: GeoRaster[], z: number, x: number, y: number, options: HillshadeOptions = {}): Promise<TileResult> {
  const { pixels, hasData, tooCoarse } = await hillshadeTilePixels(rasters, z, x, y, options);
  return { png: encodePng(TILE_SIZE_PX, TILE_SIZE_PX, pixels, 'grey-alpha'), hasData, tooCoarse };
}

/** The pixels renderHillshadeTile encodes; `scratch` (newHillshadeTileScratch) is overwritten and may be reused for the next tile. */
export async function hillshadeTilePixels(rasters: GeoRaster[], z: number, x: number, y: number, options: HillshadeOptions = {}, scratch: HillshadeTileScratch = newHillshadeTileScratch()): Promise<HillshadeTilePixels> {
  const n = TILE_SIZE_PX + 2;
  const { heights, lat, lon, rowCellM } = scratch;
  heights.fill(Number.NaN);
  for (let r = 0; r < n; r++) {
    const py = y * TILE_SIZE_PX + r - 1 + 0.5;
    for (let c = 0; c < n; c++) {
      const p = mercatorPixelToLonLat(x * TILE_SIZE_PX + c - 1 + 0.5, py, z);
      lat[r * n + c] = p.lat;
      lon[r * n + c] = p.lon;
    }
    rowCellM[r] = mercatorPixelSizeM(lat[r * n], z);
  }
  let tooCoarse = false;
  const ordered = [...rasters].sort((a, b) => Math.min(a.resolutionM.x, a.resolutionM.y) - Math.min(b.resolutionM.x, b.resolutionM.y));
  const px = scratch.px;
  const pyArr = scratch.py;
  for (const raster of ordered) {
    const b = raster.boundsLonLat;
    if (b.east < lon[0] || b.west > lon[n * n - 1] || b.north < lat[n * n - 1] || b.south > lat[0]) continue;
    // The level is chosen per raster and zoom, at the raster's centre latitude, never per tile: a tile's own
    // Mercator cell size changes with its latitude (∝ cos φ), so two neighbours one above the other could
    // pick different overviews where 2^k × the raster's cell size falls between theirs, and shade the two
    // sides of their seam from different resolutions.
    const centreLat = (b.north + b.south) / 2;
    const { level, fx, fy, w, h } = chooseLevel(raster, mercatorPixelSizeM(centreLat, z));
    // Pixel coordinates in the chosen level; exact transforms every 8th column, linear between (smooth at tile scale).
    const gt = raster.geoTransform;
    const toPixel = (k: number) => {
      let ex = lon[k];
      let ny = lat[k];
      if (!raster.transform.identity) [ex, ny] = raster.transform.forward(ex, ny);
      px[k] = (ex - gt[0]) / gt[1] / fx;
      pyArr[k] = (ny - gt[3]) / gt[5] / fy;
    };
    for (let r = 0; r < n; r++) {
      for (let c = 0; c < n; c += 8) {
        const c1 = Math.min(n - 1, c + 8);
        toPixel(r * n + c);
        toPixel(r * n + c1);
        for (let k = c + 1; k < c1; k++) {
          const t = (k - c) / (c1 - c);
          px[r * n + k] = px[r * n + c] + t * (px[r * n + c1] - px[r * n + c]);
          pyArr[r * n + k] = pyArr[r * n + c] + t * (pyArr[r * n + c1] - pyArr[r * n + c]);
        }
      }
    }
    let minX = Infinity;
    let minY = Infinity;
    let maxX = -Infinity;
    let maxY = -Infinity;
    for (let k = 0; k < n * n; k++) {
      // Only points that fall on the raster count: far outside a projected CRS's zone (zoom 0/1
      // tiles span the globe) the transform gives NaN or huge values, which must not reach the window.
      if (Number.isNaN(heights[k]) && px[k] >= 0 && px[k] < w && pyArr[k] >= 0 && pyArr[k] < h) {
        minX = Math.min(minX, px[k]);
        maxX = Math.max(maxX, px[k]);
        minY = Math.min(minY, pyArr[k]);
        maxY = Math.max(maxY, pyArr[k]);
      }
    }
    const x0 = Math.max(0, Math.floor(minX - 1));
    const y0 = Math.max(0, Math.floor(minY - 1));
    const x1 = Math.min(w, Math.ceil(maxX + 1));
    const y1 = Math.min(h, Math.ceil(maxY + 1));
    if (x1 <= x0 || y1 <= y0) continue;
    const ww = x1 - x0;
    const wh = y1 - y0;
    if (!tileWindowAffordable(raster, x0, y0, ww, wh, level)) {
      tooCoarse = true;
      continue;
    }
    const window = await raster.readWindow(x0, y0, ww, wh, level);
    for (let k = 0; k < n * n; k++) {
      if (!Number.isNaN(heights[k])) continue;
      const sx = px[k];
      const sy = pyArr[k];
      if (!(sx >= 0 && sy >= 0 && sx < w && sy < h)) continue;
      // Bilinear over the four pixel centres (clamped at the raster edge), as the terrain store samples.
      const u = Math.min(Math.max(sx - 0.5, 0), w - 1) - x0;
      const v = Math.min(Math.max(sy - 0.5, 0), h - 1) - y0;
      const i0 = Math.min(Math.max(Math.floor(u), 0), ww - 1);
      const j0 = Math.min(Math.max(Math.floor(v), 0), wh - 1);
      const i1 = Math.min(i0 + 1, ww - 1);
      const j1 = Math.min(j0 + 1, wh - 1);
      const tx = Math.min(Math.max(u - i0, 0), 1);
      const ty = Math.min(Math.max(v - j0, 0), 1);
      const z00 = window[j0 * ww + i0];
      const z10 = window[j0 * ww + i1];
      const z01 = window[j1 * ww + i0];
      const z11 = window[j1 * ww + i1];
      heights[k] = (1 - tx) * (1 - ty) * z00 + tx * (1 - ty) * z10 + (1 - tx) * ty * z01 + tx * ty * z11;
    }
  }
  const shade = hillshade(heights, n, n, rowCellM, rowCellM, options);
  const pixels = new Uint8Array(TILE_SIZE_PX * TILE_SIZE_PX * 2);
  let hasData = false;
  for (let r = 0; r < TILE_SIZE_PX; r++) {
    for (let c = 0; c < TILE_SIZE_PX; c++) {
      const s = shade[(r + 1) * n + c + 1];
      const o = (r * TILE_SIZE_PX + c) * 2;
      if (s === 0) continue;
      pixels[o] = s;
      pixels[o + 1] = 255;
      hasData = true;
    }
  }
  return { pixels, hasData, tooCoarse };
}
