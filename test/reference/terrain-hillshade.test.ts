// Hillshade against GDAL: Horn's method cell by cell against `gdaldem hillshade` (azimuth 315°, altitude 45°),
// a whole Web Mercator tile against gdalwarp (EPSG:3857, bilinear) + gdaldem, and our PNG encoder read back by
// GDAL's PNG driver.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, expect, it } from 'vitest';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { hillshade, tileBounds } from '../../server/terrain/hillshade.ts';
import { encodePng } from '../../server/terrain/png.ts';
import { openGeoRaster } from '../../server/terrain/raster.ts';
import { renderHillshadeTile } from '../../server/terrain/tiles.ts';
import { describeWithGdal, gdal } from '../unit/terrain/gdal-helper.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-hillshade-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Reads Byte band `band` of a raster GDAL can open, as rows in file order (via a raw ENVI copy). */
function gdalGrid(path: string, band = 1): number[][] {
  const raw = join(dir, `grid-${Math.random().toString(36).slice(2)}.img`);
  gdal('gdal_translate', ['-q', '-of', 'ENVI', '-ot', 'Byte', '-b', String(band), path, raw]);
  const header = readFileSync(raw.replace(/\.img$/, '.hdr'), 'utf8');
  const width = Number(/samples\s*=\s*(\d+)/.exec(header)?.[1]);
  const bytes = readFileSync(raw);
  const rows: number[][] = [];
  for (let at = 0; at < bytes.length; at += width) rows.push(Array.from(bytes.subarray(at, at + width)));
  return rows;
}

const hills = (c: number, r: number) => 300 + 60 * Math.sin(c / 6) * Math.cos(r / 5) + 2 * c - 3 * r;

describeWithGdal('hillshade and PNG checked against GDAL (gdaldem hillshade, GDAL PNG driver)', () => {
  it('Horn\'s method equals gdaldem hillshade (az 315°, alt 45°) at every interior cell, non-square cells', () => {
    const W = 60;
    const H = 50;
    const data = new Float32Array(W * H);
    for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) data[r * W + c] = hills(c, r);
    const path = join(dir, 'hs.tif');
    writeFileSync(path, writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [400000, 30, 0, 5500000, 0, -25], epsg: 32632 }));
    const shaded = join(dir, 'hs-gdal.tif');
    gdal('gdaldem', ['hillshade', '-q', path, shaded]);
    const reference = gdalGrid(shaded);
    const ours = hillshade(data, W, H, 30, 25);
    let worst = 0;
    for (let r = 1; r < H - 1; r++) for (let c = 1; c < W - 1; c++) worst = Math.max(worst, Math.abs(reference[r][c] - ours[r * W + c]));
    expect(worst).toBe(0);
  });

  it('a rendered Web Mercator tile matches gdalwarp (EPSG:3857, bilinear) + gdaldem hillshade within 2 grey levels at 99 % of pixels', async () => {
    // 1 arc-second DEM around 49.8° N 6.1° E; tile z=13 inside it.
    const W = 400;
    const H = 300;
    const data = new Float32Array(W * H);
    for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) data[r * W + c] = 250 + 80 * Math.sin(c / 23) * Math.cos(r / 17) + 0.4 * c;
    const demPath = join(dir, 'tile-dem.tif');
    writeFileSync(demPath, writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [6.0, 1 / 3600, 0, 49.85, 0, -1 / 3600], epsg: 4326, tiled: { tileSizePx: 64 } }));
    const z = 13;
    const x = Math.floor(((6.05 + 180) / 360) * 2 ** z);
    const lat = 49.81;
    const y = Math.floor(((1 - Math.log(Math.tan((lat * Math.PI) / 180) + 1 / Math.cos((lat * Math.PI) / 180)) / Math.PI) / 2) * 2 ** z);
    const raster = await openGeoRaster(demPath);
    const tile = await renderHillshadeTile([raster], z, x, y);
    await raster.close();
    expect(tile.hasData).toBe(true);
    const pngPath = join(dir, 'tile.png');
    writeFileSync(pngPath, tile.png);
    const ours = gdalGrid(pngPath, 1);
    const alpha = gdalGrid(pngPath, 2);
    expect(ours).toHaveLength(256);
    // GDAL: the same 258 × 258 grid (tile + 1-pixel ring) in EPSG:3857, bilinear, then shaded with the ground scale
    // (Mercator metres are 1/cos(lat) ground metres, so gdaldem -s cos(lat) gives gradients per ground metre).
    const b = tileBounds(z, x, y);
    const merc = (lon: number, la: number) => [(lon * Math.PI * 6378137) / 180, 6378137 * Math.log(Math.tan(Math.PI / 4 + (la * Math.PI) / 360))];
    const [minX, maxY] = merc(b.west, b.north);
    const [maxX, minY] = merc(b.east, b.south);
    const px = (maxX - minX) / 256;
    const warped = join(dir, 'tile-3857.tif');
    gdal('gdalwarp', ['-q', '-t_srs', 'EPSG:3857', '-r', 'bilinear', '-te', String(minX - px), String(minY - px), String(maxX + px), String(maxY + px), '-ts', '258', '258', demPath, warped]);
    const shaded = join(dir, 'tile-3857-hs.tif');
    const centreLat = (b.north + b.south) / 2;
    gdal('gdaldem', ['hillshade', '-q', '-s', String(Math.cos((centreLat * Math.PI) / 180)), warped, shaded]);
    const reference = gdalGrid(shaded);
    let within = 0;
    let compared = 0;
    for (let r = 0; r < 256; r++) {
      for (let c = 0; c < 256; c++) {
        if (alpha[r][c] !== 255) continue;
        compared++;
        if (Math.abs(ours[r][c] - reference[r + 1][c + 1]) <= 2) within++;
      }
    }
    expect(compared).toBe(256 * 256);
    console.info(`tile vs gdalwarp+gdaldem: ${((100 * within) / compared).toFixed(2)} % of pixels within 2 grey levels`);
    expect(within / compared).toBeGreaterThan(0.99);
  });

  it('PNG encoder: GDAL reads size, bands and every pixel value back (grey + alpha and RGBA)', () => {
    const w = 37;
    const h = 23;
    const ga = new Uint8Array(w * h * 2);
    for (let i = 0; i < w * h; i++) {
      ga[2 * i] = (i * 7) % 256;
      ga[2 * i + 1] = (i * 13) % 256;
    }
    const path = join(dir, 'ga.png');
    writeFileSync(path, encodePng(w, h, ga, 'grey-alpha'));
    const grey = gdalGrid(path, 1);
    const alpha = gdalGrid(path, 2);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) {
      expect(grey[r][c]).toBe(ga[2 * (r * w + c)]);
      expect(alpha[r][c]).toBe(ga[2 * (r * w + c) + 1]);
    }
    const rgba = new Uint8Array(w * h * 4).map((_, i) => (i * 31) % 256);
    const rgbaPath = join(dir, 'rgba.png');
    writeFileSync(rgbaPath, encodePng(w, h, rgba, 'rgba'));
    for (let band = 1; band <= 4; band++) {
      const grid = gdalGrid(rgbaPath, band);
      expect(grid[5][9]).toBe(rgba[(5 * w + 9) * 4 + band - 1]);
      expect(grid[22][36]).toBe(rgba[(22 * w + 36) * 4 + band - 1]);
    }
  });
});
