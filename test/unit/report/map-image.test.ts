// The report map composites tiles from their raw pixels through reused buffers
// (renderMapImage); the tile routes encode the same pixels as PNG (renderHillshadeTile,
// renderMarginTile). Both ways must give the same image, byte for byte: the PNG round trip
// is lossless, so skipping it may change nothing (server/report/map.ts).
import { describe, expect, it } from 'vitest';
import { composeMapImage, lonLatToGlobalPx, type MapView, renderMapImage } from '../../../server/report/map.ts';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { renderHillshadeTile, TILE_SIZE_PX } from '../../../server/terrain/tiles.ts';
import { renderMarginTile } from '../../../server/coverage/tiles.ts';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { renderMapInWorker } from '../../../server/jobs/map-worker.ts';

const SIZE = 400;

function raster(fill: (u: number, v: number) => number): ArrayBuffer {
  const data = new Float32Array(SIZE * SIZE);
  for (let y = 0; y < SIZE; y++) for (let x = 0; x < SIZE; x++) data[y * SIZE + x] = fill(x / SIZE, y / SIZE);
  // 400 × 400 cells of 0.0004° (≈ 30–45 m) west of −110.3°, north of 44.58°: a synthetic field of our own.
  const bytes = writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data, geoTransform: [-110.3, 0.0004, 0, 44.58, 0, -0.0004], epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 128 } });
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
}

describe('report map image', () => {
  it('renderMapImage over raw tile pixels equals composeMapImage over the tile routes\u2019 PNGs', async () => {
    const dem = await openGeoRaster(raster((u, v) => 900 + 150 * Math.sin(7 * u) * Math.cos(5 * v) + 40 * Math.sin(23 * (u + v))));
    const margin = await openGeoRaster(raster((u, v) => 30 - 70 * Math.hypot(u - 0.5, v - 0.5)));
    try {
      const zoom = 13;
      const corner = lonLatToGlobalPx(-110.26, 44.56, zoom);
      const tx0 = Math.floor(corner.x / TILE_SIZE_PX);
      const ty0 = Math.floor(corner.y / TILE_SIZE_PX);
      // A view of 3 × 2 tiles, offset by part of a tile so tiles overhang the frame on every side.
      const view: MapView = { zoom, x0: tx0 * TILE_SIZE_PX + 40, y0: ty0 * TILE_SIZE_PX + 70, widthPx: 2 * TILE_SIZE_PX + 30, heightPx: TILE_SIZE_PX + 20 };
      const tiles = [];
      for (let ty = ty0; ty <= ty0 + 1; ty++) {
        for (let tx = tx0; tx <= tx0 + 2; tx++) {
          const shade = await renderHillshadeTile([dem], zoom, tx, ty);
          tiles.push({ x: tx * TILE_SIZE_PX - view.x0, y: ty * TILE_SIZE_PX - view.y0, hillshadePng: shade.hasData ? shade.png : null, marginPng: await renderMarginTile(margin, zoom, tx, ty) });
        }
      }
      expect(tiles.filter((t) => t.hillshadePng).length).toBe(6);
      const fromPngs = composeMapImage(view, tiles);
      const direct = await renderMapImage(view, [dem], margin);
      expect(Buffer.from(direct).equals(Buffer.from(fromPngs))).toBe(true);
      // Hillshade only (no coverage run) takes the same path.
      const shadeOnly = composeMapImage(view, tiles.map((t) => ({ ...t, marginPng: null })));
      expect(Buffer.from(await renderMapImage(view, [dem], null)).equals(Buffer.from(shadeOnly))).toBe(true);
    } finally {
      await Promise.all([dem.close(), margin.close()]);
    }
  });

  it('the report draws it in a worker thread (renderMapInWorker): the same bytes as in-thread; an unreadable margin or layer is left out', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'earshot-map-worker-'));
    try {
      const demPath = join(dir, 'dem.tif');
      const marginPath = join(dir, 'margin.tif');
      writeFileSync(demPath, new Uint8Array(raster((u, v) => 900 + 150 * Math.sin(7 * u) * Math.cos(5 * v))));
      writeFileSync(marginPath, new Uint8Array(raster((u, v) => 30 - 70 * Math.hypot(u - 0.5, v - 0.5))));
      writeFileSync(join(dir, 'broken.tif'), 'not a tiff');
      const zoom = 13;
      const corner = lonLatToGlobalPx(-110.26, 44.56, zoom);
      const view: MapView = { zoom, x0: Math.floor(corner.x) , y0: Math.floor(corner.y), widthPx: 300, heightPx: 200 };
      const dem = await openGeoRaster(demPath, { decodedTileCache: 16 });
      const margin = await openGeoRaster(marginPath, { decodedTileCache: 16 });
      let inThread: Uint8Array;
      let shadeOnly: Uint8Array;
      try {
        inThread = await renderMapImage(view, [dem], margin);
        shadeOnly = await renderMapImage(view, [dem], null);
      } finally {
        await Promise.all([dem.close(), margin.close()]);
      }
      const drawn = await renderMapInWorker({ view, elevationPaths: [demPath, join(dir, 'broken.tif')], marginPath, decodedTileCache: 16 });
      expect(drawn.marginShown).toBe(true);
      expect(Buffer.from(drawn.png).equals(Buffer.from(inThread))).toBe(true);
      const noMargin = await renderMapInWorker({ view, elevationPaths: [demPath], marginPath: join(dir, 'broken.tif'), decodedTileCache: 16 });
      expect(noMargin.marginShown).toBe(false);
      expect(Buffer.from(noMargin.png).equals(Buffer.from(shadeOnly))).toBe(true);
      expect(Buffer.from(shadeOnly).equals(Buffer.from(inThread))).toBe(false);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
