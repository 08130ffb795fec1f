// openGeoRaster's decodedTileCache (kept decoded file tiles, least recently used out) must not
// change a single value readWindow returns: the same windows, overlapping, at full resolution
// and on an overview, read with and without the cache and compared sample for sample.
import { describe, expect, it } from 'vitest';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';

const SIZE = 700;

function tiff(): ArrayBuffer {
  const data = new Float32Array(SIZE * SIZE);
  for (let y = 0; y < SIZE; y++) for (let x = 0; x < SIZE; x++) data[y * SIZE + x] = 500 + 3 * x - 2 * y + 40 * Math.sin(x / 17) * Math.cos(y / 23);
  const bytes = writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data, geoTransform: [10, 0.001, 0, 50, 0, -0.001], epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 128 }, overviews: [2] });
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
}

describe('GeoRaster decoded tile cache', () => {
  it('gives the same windows as reads without it (overlapping windows, evictions, an overview level)', async () => {
    const bytes = tiff();
    const plain = await openGeoRaster(bytes.slice(0));
    const cached = await openGeoRaster(bytes.slice(0), { decodedTileCache: 3 });
    try {
      // A row of overlapping windows, then back to the start (tiles evicted by then), then the overview.
      const windows: Array<[number, number, number, number, number]> = [
        [0, 0, 200, 150, 0],
        [150, 100, 200, 150, 0],
        [300, 100, 260, 200, 0],
        [520, 500, 180, 200, 0],
        [0, 0, 200, 150, 0],
        [10, 20, 300, 300, 1],
        [100, 120, 200, 200, 1],
      ];
      for (const [x0, y0, w, h, level] of windows) {
        const a = await plain.readWindow(x0, y0, w, h, level);
        const b = await cached.readWindow(x0, y0, w, h, level);
        expect(b.length).toBe(w * h);
        expect(Buffer.from(b.buffer, b.byteOffset, b.byteLength).equals(Buffer.from(a.buffer, a.byteOffset, a.byteLength))).toBe(true);
      }
    } finally {
      await Promise.all([plain.close(), cached.close()]);
    }
  });
});
