// Hillshade tiles at every zoom 0–22 over a UTM raster answer a PNG (empty or shaded), never an
// error: at zoom 0 and 1 the tile spans the globe and the UTM forward transform of far points is
// NaN, which once reached readWindow ("window NaN,NaN").
import { describe, expect, it } from 'vitest';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { renderHillshadeTile } from '../../../server/terrain/tiles.ts';
import { validDem } from '../../helpers/hostile-tiffs.ts';

function tileOf(lon: number, lat: number, zoom: number): { x: number; y: number } {
  const n = 2 ** zoom;
  const x = Math.floor(((lon + 180) / 360) * n);
  const rad = (lat * Math.PI) / 180;
  const y = Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n);
  return { x: Math.min(n - 1, x), y: Math.min(n - 1, y) };
}

describe('hillshade tiles at every zoom over a UTM raster', () => {
  it('zoom 0–22 over the raster centre: a PNG each time, shaded at the fine zooms', async () => {
    const bytes = validDem();
    const raster = await openGeoRaster(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer);
    try {
      const centre = { lon: (raster.boundsLonLat.west + raster.boundsLonLat.east) / 2, lat: (raster.boundsLonLat.south + raster.boundsLonLat.north) / 2 };
      let shaded = 0;
      for (let zoom = 0; zoom <= 22; zoom++) {
        const { x, y } = tileOf(centre.lon, centre.lat, zoom);
        const tile = await renderHillshadeTile([raster], zoom, x, y);
        expect(tile.png.length, `zoom ${zoom}`).toBeGreaterThan(0);
        if (tile.hasData) shaded++;
      }
      expect(shaded).toBeGreaterThan(5);
    } finally {
      await raster.close();
    }
  }, 120_000);
});
