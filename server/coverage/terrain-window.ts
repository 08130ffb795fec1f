// Cuts the DEM window a coverage run needs out of a terrain raster (the
// terrain room's GeoRaster), and writes coverage rasters back onto the DEM's
// own grid. This is the only file of the room that does I/O; the sweeps,
// rasterisation and composites stay pure.
import { renameSync, rmSync } from 'node:fs';
import { makeGridFrame, type GeoTransform } from './geometry.ts';
import type { TerrainWindow } from './sweep.ts';
import type { GeoRaster } from '../terrain/raster.ts';
import { writeGeoTiffFile, type RasterArray, type SampleType } from '../terrain/geotiff-writer.ts';

/** Raised for a request the terrain cannot serve (site outside, radius beyond the raster, too many cells). */
export class CoverageInputError extends Error {
  readonly code: 'site_outside_terrain' | 'radius_beyond_terrain' | 'too_many_cells';
  constructor(code: CoverageInputError['code'], message: string) {
    super(message);
    this.name = 'CoverageInputError';
    this.code = code;
  }
}

/** Position of a window inside the full raster. */
export interface WindowPlacement {
  x0: number;
  y0: number;
  widthPx: number;
  heightPx: number;
}

export interface WindowRequest {
  lat: number;
  lon: number;
  radiusM: number;
  /** When false (default), a circle reaching past the raster edge is refused; when true it is clipped. */
  allowClip?: boolean;
  /** Ceiling on window cells (refused above it). */
  maxCells?: number;
}

/** The pixel window of the raster that holds the circle of `radiusM` around the site. */
export function windowFor(raster: GeoRaster, request: WindowRequest): WindowPlacement {
  const { x, y } = raster.lonLatToPixel(request.lon, request.lat);
  if (!(x >= 0 && y >= 0 && x < raster.widthPx && y < raster.heightPx)) {
    throw new CoverageInputError('site_outside_terrain', `site ${request.lat.toFixed(5)},${request.lon.toFixed(5)} is outside the terrain raster`);
  }
  // Cells per metre along x/y at the site (2 % spare for the change of scale across the window).
  const resolution = raster.resolutionM;
  const halfCols = Math.ceil((request.radiusM / resolution.x) * 1.02) + 1;
  const halfRows = Math.ceil((request.radiusM / resolution.y) * 1.02) + 1;
  let x0 = Math.floor(x) - halfCols;
  let y0 = Math.floor(y) - halfRows;
  let x1 = Math.floor(x) + halfCols + 1;
  let y1 = Math.floor(y) + halfRows + 1;
  const beyond = x0 < -1 || y0 < -1 || x1 > raster.widthPx + 1 || y1 > raster.heightPx + 1;
  if (beyond && !request.allowClip) {
    const maxRadiusKm = Math.min(Math.min(x, raster.widthPx - x) * resolution.x, Math.min(y, raster.heightPx - y) * resolution.y) / 1000;
    throw new CoverageInputError(
      'radius_beyond_terrain',
      `radius ${(request.radiusM / 1000).toFixed(2)} km reaches past the terrain raster around this site (at most ${maxRadiusKm.toFixed(2)} km fits)`,
    );
  }
  x0 = Math.max(0, x0);
  y0 = Math.max(0, y0);
  x1 = Math.min(raster.widthPx, x1);
  y1 = Math.min(raster.heightPx, y1);
  const placement = { x0, y0, widthPx: x1 - x0, heightPx: y1 - y0 };
  if (request.maxCells !== undefined && placement.widthPx * placement.heightPx > request.maxCells) {
    throw new CoverageInputError(
      'too_many_cells',
      `the area holds ${placement.widthPx * placement.heightPx} cells, above the ceiling of ${request.maxCells}; use a smaller radius or a coarser terrain layer`,
    );
  }
  return placement;
}

/** Geotransform of a window of the raster. */
export function windowGeoTransform(raster: GeoRaster, placement: WindowPlacement): GeoTransform {
  const g = raster.geoTransform;
  return [g[0] + placement.x0 * g[1] + placement.y0 * g[2], g[1], g[2], g[3] + placement.x0 * g[4] + placement.y0 * g[5], g[4], g[5]];
}

/** Reads the window and builds the TerrainWindow (frame centred on the site) the sweeps run on. */
export async function loadTerrainWindow(raster: GeoRaster, request: WindowRequest, placement = windowFor(raster, request)): Promise<{ terrain: TerrainWindow; placement: WindowPlacement }> {
  const elevationM = await raster.readWindow(placement.x0, placement.y0, placement.widthPx, placement.heightPx);
  const [siteX, siteY] = raster.transform.forward(request.lon, request.lat);
  const frame = makeGridFrame({
    kind: raster.crs.kind,
    widthPx: placement.widthPx,
    heightPx: placement.heightPx,
    geoTransform: windowGeoTransform(raster, placement),
    siteX,
    siteY,
  });
  return { terrain: { frame, elevationM }, placement };
}

/**
 * Writes a window raster onto the full grid of `raster` (same size, same
 * geotransform and CRS), `noData` everywhere outside the window. Written to
 * a temporary name beside `path` and renamed, so a reader never sees half a file.
 */
export function writeOnRasterGrid(
  path: string,
  raster: GeoRaster,
  placement: WindowPlacement,
  data: RasterArray,
  sampleType: SampleType,
  noData: number,
  // Deflate by default (loss/margin exports); the CLI's byte los raster is written plain: it is small and deflating it cost more than the viewshed.
  compression: 'none' | 'deflate' = 'deflate',
): { bytes: number } {
  const temp = `${path}.${process.pid}.${Date.now()}.partial`;
  const make = (n: number): RasterArray => (sampleType === 'uint8' ? new Uint8Array(n) : new Float32Array(n));
  try {
    const written = writeGeoTiffFile(temp, {
      widthPx: raster.widthPx,
      heightPx: raster.heightPx,
      geoTransform: raster.geoTransform,
      epsg: raster.crs.epsg,
      crsKind: raster.crs.kind,
      noData,
      sampleType,
      compression,
      tiled: { tileSizePx: 256 },
      readBlock: (_level, bx0, by0, w, h) => {
        const block = make(w * h);
        block.fill(noData);
        // Columns of this block that the window covers.
        const c0 = Math.max(bx0, placement.x0);
        const c1 = Math.min(bx0 + w, placement.x0 + placement.widthPx);
        if (c1 <= c0) return block;
        // Bytes into a byte raster hold no NaN: whole rows are copied as they are.
        const copyRows = sampleType === 'uint8' && data instanceof Uint8Array;
        for (let row = 0; row < h; row++) {
          const wy = by0 + row - placement.y0;
          if (wy < 0 || wy >= placement.heightPx) continue;
          const from = wy * placement.widthPx + (c0 - placement.x0);
          const to = row * w + (c0 - bx0);
          if (copyRows) {
            block.set(data.subarray(from, from + (c1 - c0)), to);
            continue;
          }
          for (let k = 0; k < c1 - c0; k++) {
            const v = data[from + k];
            block[to + k] = v === v ? v : noData;
          }
        }
        return block;
      },
    });
    renameSync(temp, path);
    return written;
  } catch (error) {
    rmSync(temp, { force: true });
    throw error;
  }
}

/**
 * Representative clutter heights (m) on the cells of a DEM window: each DEM
 * cell centre takes the class of the clutter pixel it falls in (nearest; the
 * terrain room's code → class table and per-class heights), NaN where the
 * clutter layer has no class (outside it, NoData, unmapped code). Same CRS:
 * affine pixel → pixel; otherwise through WGS 84. The clutter window under
 * the DEM window is read once.
 */
export async function loadClutterHeights(
  dem: GeoRaster,
  placement: WindowPlacement,
  clutter: GeoRaster,
  classByCode: Uint8Array,
  heightByClassM: ArrayLike<number>,
): Promise<Float32Array> {
  const { widthPx, heightPx } = placement;
  const out = new Float32Array(widthPx * heightPx).fill(Number.NaN);
  const g = dem.geoTransform;
  const c = clutter.geoTransform;
  const sameGrid = dem.crs.proj4 === clutter.crs.proj4 && c[2] === 0 && c[4] === 0;
  const cx = new Float64Array(widthPx * heightPx);
  const cy = new Float64Array(widthPx * heightPx);
  let minX = Infinity;
  let minY = Infinity;
  let maxX = -Infinity;
  let maxY = -Infinity;
  for (let row = 0; row < heightPx; row++) {
    for (let col = 0; col < widthPx; col++) {
      const px = placement.x0 + col + 0.5;
      const py = placement.y0 + row + 0.5;
      let x: number;
      let y: number;
      if (sameGrid) {
        x = (g[0] + px * g[1] + py * g[2] - c[0]) / c[1];
        y = (g[3] + px * g[4] + py * g[5] - c[3]) / c[5];
      } else {
        const ll = dem.pixelToLonLat(px, py);
        const p = clutter.lonLatToPixel(ll.lon, ll.lat);
        x = p.x;
        y = p.y;
      }
      const i = row * widthPx + col;
      cx[i] = x;
      cy[i] = y;
      if (x === x && y === y) {
        if (x < minX) minX = x;
        if (x > maxX) maxX = x;
        if (y < minY) minY = y;
        if (y > maxY) maxY = y;
      }
    }
  }
  const wx0 = Math.max(0, Math.floor(minX));
  const wy0 = Math.max(0, Math.floor(minY));
  const wx1 = Math.min(clutter.widthPx, Math.floor(maxX) + 1);
  const wy1 = Math.min(clutter.heightPx, Math.floor(maxY) + 1);
  if (!(wx1 > wx0 && wy1 > wy0)) return out;
  const ww = wx1 - wx0;
  const codes = await clutter.readWindow(wx0, wy0, ww, wy1 - wy0);
  for (let i = 0; i < out.length; i++) {
    const col = Math.floor(cx[i]) - wx0;
    const row = Math.floor(cy[i]) - wy0;
    if (!(col >= 0 && row >= 0 && col < ww && row < wy1 - wy0)) continue;
    const code = codes[row * ww + col];
    if (!(code >= 0 && code <= 65535)) continue;
    const cls = classByCode[Math.round(code)];
    if (cls < heightByClassM.length) out[i] = heightByClassM[cls];
  }
  return out;
}
