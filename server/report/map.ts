// The report's map raster: Web Mercator tiles of the plan's hillshade
// (renderHillshadeTile, server/terrain/tiles.ts) and of the latest coverage
// run's margin (renderMarginTile, server/coverage/tiles.ts) for a view fitted to
// the plan's extent, composited into one image. The PDF writer places the image
// and draws the symbols on top as vectors, so symbols stay sharp in print.
import { marginTilePixels, newMarginTileScratch } from '../coverage/tiles.ts';
import { mercatorPixelSizeM } from '../terrain/hillshade.ts';
import type { GeoRaster } from '../terrain/raster.ts';
import { hillshadeTilePixels, newHillshadeTileScratch, TILE_SIZE_PX } from '../terrain/tiles.ts';
import { decodePng, encodePng } from '../terrain/png.ts';

export interface LonLatBox {
  west: number;
  south: number;
  east: number;
  north: number;
}

/** A view on the global Web Mercator pixel grid at one zoom (256-pixel tiles). */
export interface MapView {
  zoom: number;
  /** Global pixel coordinates of the view's top-left corner. */
  x0: number;
  y0: number;
  widthPx: number;
  heightPx: number;
}

/** Global Web Mercator pixel of a WGS 84 position (EPSG:3857 spherical formulas, 256 · 2^z pixels around). */
export function lonLatToGlobalPx(lon: number, lat: number, zoom: number): { x: number; y: number } {
  const size = TILE_SIZE_PX * 2 ** zoom;
  const clamped = Math.max(-85.05112878, Math.min(85.05112878, lat));
  const phi = (clamped * Math.PI) / 180;
  return { x: ((lon + 180) / 360) * size, y: ((1 - Math.log(Math.tan(phi) + 1 / Math.cos(phi)) / Math.PI) / 2) * size };
}

/** Box around points, padded by `padShare` of its size (and at least ~300 m) on each side. */
export function paddedBox(points: Iterable<{ lat: number; lon: number }>, padShare = 0.08): LonLatBox | null {
  let box: LonLatBox | null = null;
  for (const p of points) {
    if (!Number.isFinite(p.lat) || !Number.isFinite(p.lon)) continue;
    box = box ? { west: Math.min(box.west, p.lon), south: Math.min(box.south, p.lat), east: Math.max(box.east, p.lon), north: Math.max(box.north, p.lat) } : { west: p.lon, south: p.lat, east: p.lon, north: p.lat };
  }
  if (!box) return null;
  const padLat = Math.max((box.north - box.south) * padShare, 0.003);
  const padLon = Math.max((box.east - box.west) * padShare, 0.003 / Math.max(0.1, Math.cos(((box.north + box.south) / 2) * (Math.PI / 180))));
  return { west: box.west - padLon, south: box.south - padLat, east: box.east + padLon, north: box.north + padLat };
}

/**
 * A view of the box for a frame of maxWidthPx × maxHeightPx: the deepest zoom (≤ 16) at which
 * the box fits in 1.5 × the frame (so the box fills the frame at 1–1.5 × the nominal pixel
 * density instead of leaving it half empty), the view grown to the frame's aspect ratio around
 * the box's centre.
 */
export function fitView(box: LonLatBox, maxWidthPx: number, maxHeightPx: number): MapView {
  const grow = 1.5;
  let zoom = 16;
  for (; zoom > 0; zoom--) {
    const nw = lonLatToGlobalPx(box.west, box.north, zoom);
    const se = lonLatToGlobalPx(box.east, box.south, zoom);
    if (se.x - nw.x <= maxWidthPx * grow && se.y - nw.y <= maxHeightPx * grow) break;
  }
  const nw = lonLatToGlobalPx(box.west, box.north, zoom);
  const se = lonLatToGlobalPx(box.east, box.south, zoom);
  const aspect = maxWidthPx / maxHeightPx;
  let widthPx = Math.max(se.x - nw.x, maxWidthPx / grow);
  let heightPx = Math.max(se.y - nw.y, maxHeightPx / grow);
  if (widthPx / heightPx > aspect) heightPx = widthPx / aspect;
  else widthPx = heightPx * aspect;
  widthPx = Math.ceil(widthPx);
  heightPx = Math.round(widthPx / aspect);
  const cx = (nw.x + se.x) / 2;
  const cy = (nw.y + se.y) / 2;
  return { zoom, x0: Math.round(cx - widthPx / 2), y0: Math.round(cy - heightPx / 2), widthPx, heightPx };
}

/** Position of a point inside the view, pixels from its top-left corner. */
export function viewPx(view: MapView, lat: number, lon: number): { x: number; y: number } {
  const p = lonLatToGlobalPx(lon, lat, view.zoom);
  return { x: p.x - view.x0, y: p.y - view.y0 };
}

/** Ground metres per view pixel at the view's centre latitude. */
export function metresPerPx(view: MapView): number {
  const size = TILE_SIZE_PX * 2 ** view.zoom;
  const yMid = view.y0 + view.heightPx / 2;
  const lat = (180 / Math.PI) * Math.atan(Math.sinh(Math.PI - (2 * Math.PI * yMid) / size));
  return mercatorPixelSizeM(lat, view.zoom);
}

export interface MapTile {
  /** Tile's top-left corner inside the view, pixels (may be negative: tiles overhang the frame). */
  x: number;
  y: number;
  hillshadePng: Uint8Array | null;
  marginPng: Uint8Array | null;
}

/** The tiles (XYZ at the view's zoom) under the view, each with its top-left corner inside the view. */
function tilesUnder(view: MapView): Array<{ tx: number; ty: number; x: number; y: number }> {
  const out: Array<{ tx: number; ty: number; x: number; y: number }> = [];
  const n = 2 ** view.zoom;
  const tx0 = Math.floor(view.x0 / TILE_SIZE_PX);
  const ty0 = Math.max(0, Math.floor(view.y0 / TILE_SIZE_PX));
  const tx1 = Math.floor((view.x0 + view.widthPx - 1) / TILE_SIZE_PX);
  const ty1 = Math.min(n - 1, Math.floor((view.y0 + view.heightPx - 1) / TILE_SIZE_PX));
  for (let ty = ty0; ty <= ty1; ty++) for (let tx = tx0; tx <= tx1; tx++) out.push({ tx: ((tx % n) + n) % n, ty, x: tx * TILE_SIZE_PX - view.x0, y: ty * TILE_SIZE_PX - view.y0 });
  return out;
}

/** Paper colour where there is no terrain (a light grey, so the frame reads in grey print). */
const BACKGROUND = 0xf4;

/**
 * The view's RGB canvas: hillshade grey where there is terrain, the margin colours over it
 * at their own opacity, light grey elsewhere. Tiles are placed one at a time as they are
 * rendered (a tile's hillshade, then its margin: tiles do not overlap, so the order across
 * tiles does not matter), so only the canvas and one tile are in memory at once.
 */
class MapCanvas {
  readonly rgb: Uint8Array;

  constructor(readonly view: MapView) {
    this.rgb = new Uint8Array(view.widthPx * view.heightPx * 3).fill(BACKGROUND);
  }

  place(png: Uint8Array, tileX: number, tileY: number, layer: 'shade' | 'margin'): void {
    const { pixels, colour, widthPx, heightPx } = decodePng(png);
    this.placePixels(pixels, colour === 'grey-alpha' ? 2 : colour === 'rgba' ? 4 : colour === 'rgb' ? 3 : 1, widthPx, heightPx, tileX, tileY, layer);
  }

  /** A tile's decoded pixels (`channels` bytes each: grey, grey + alpha, RGB or RGBA) placed at (tileX, tileY). */
  placePixels(pixels: Uint8Array, channels: number, widthPx: number, heightPx: number, tileX: number, tileY: number, layer: 'shade' | 'margin'): void {
    const w = this.view.widthPx;
    const hPx = this.view.heightPx;
    const rgb = this.rgb;
    for (let ty = 0; ty < heightPx; ty++) {
      const y = tileY + ty;
      if (y < 0 || y >= hPx) continue;
      for (let tx = 0; tx < widthPx; tx++) {
        const x = tileX + tx;
        if (x < 0 || x >= w) continue;
        const k = (ty * widthPx + tx) * channels;
        const o = (y * w + x) * 3;
        if (layer === 'shade') {
          if (channels === 2 && pixels[k + 1] === 0) continue;
          // Lift the shade toward white a little so symbols and margin colours stay readable on it.
          const grey = 70 + Math.round(pixels[k] * 0.72);
          rgb[o] = grey;
          rgb[o + 1] = grey;
          rgb[o + 2] = grey;
        } else {
          const alpha = channels === 4 ? pixels[k + 3] / 255 : 1;
          if (alpha === 0) continue;
          for (let c = 0; c < 3; c++) rgb[o + c] = Math.round(pixels[k + c] * alpha + rgb[o + c] * (1 - alpha));
        }
      }
    }
  }

  /** One opaque RGB PNG: it embeds in a PDF as it is (no alpha channel to split), which keeps the report fast and small. */
  png(): Uint8Array {
    return encodePng(this.view.widthPx, this.view.heightPx, this.rgb, 'rgb');
  }
}

/**
 * The report's map image: the hillshade tiles (from the elevation rasters) and coverage margin
 * tiles (from the coverage raster) under the view, rendered and composited one tile at a time.
 * The tiles' pixels go onto the canvas as rendered (the pixels the tile routes encode as PNG,
 * without the encode and decode) through one set of tile buffers, so a 20-tile map allocates its
 * buffers once instead of ~5 MB per tile (native memory the process kept after the map).
 */
export async function renderMapImage(view: MapView, elevation: GeoRaster[], margin: GeoRaster | null): Promise<Uint8Array> {
  const canvas = new MapCanvas(view);
  const shadeScratch = elevation.length > 0 ? newHillshadeTileScratch() : null;
  const marginScratch = margin ? newMarginTileScratch() : null;
  for (const tile of tilesUnder(view)) {
    if (shadeScratch) {
      const shade = await hillshadeTilePixels(elevation, view.zoom, tile.tx, tile.ty, {}, shadeScratch);
      if (shade.hasData) canvas.placePixels(shade.pixels, 2, TILE_SIZE_PX, TILE_SIZE_PX, tile.x, tile.y, 'shade');
    }
    const cover = margin && marginScratch ? await marginTilePixels(margin, view.zoom, tile.tx, tile.ty, marginScratch) : null;
    if (cover) canvas.placePixels(cover, 4, TILE_SIZE_PX, TILE_SIZE_PX, tile.x, tile.y, 'margin');
  }
  return canvas.png();
}

/** Already-rendered tiles composited into one RGB PNG of the view (as renderMapImage does tile by tile). */
export function composeMapImage(view: MapView, tiles: readonly MapTile[]): Uint8Array {
  const canvas = new MapCanvas(view);
  for (const tile of tiles) {
    if (tile.hillshadePng) canvas.place(tile.hillshadePng, tile.x, tile.y, 'shade');
    if (tile.marginPng) canvas.place(tile.marginPng, tile.x, tile.y, 'margin');
  }
  return canvas.png();
}
