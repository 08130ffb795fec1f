// readWindow's own tile/strip path (raster.ts readFast) against geotiff.js readRasters, the reference
// decoder it replaced: the same values for GDAL-written files with predictors, LZW, PackBits,
// stripped and tiled layouts, uncompressed blocks (read straight from the file), windows crossing
// block edges, and big-endian files (which keep the geotiff.js path). NoData → NaN and scale/offset are checked in raster.test.ts.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, expect, it } from 'vitest';
import { fromFile } from 'geotiff';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { describeWithGdal, gdal } from './gdal-helper.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-raster-window-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const W = 300;
const H = 170;
const source = join(dir, 'source.tif');
const data = new Float32Array(W * H);
for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) data[r * W + c] = 200 + 90 * Math.sin(c / 17) * Math.cos(r / 11) + ((c * 7 + r * 3) % 13);
data[5 * W + 7] = -9999;
writeFileSync(source, writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [500_000, 30, 0, 4_100_000, 0, -30], epsg: 32633, noData: -9999 }));

async function reference(path: string, x0: number, y0: number, w: number, h: number): Promise<ArrayLike<number>> {
  const tiff = await fromFile(path);
  const image = await tiff.getImage(0);
  const raw = (await image.readRasters({ window: [x0, y0, x0 + w, y0 + h], samples: [0], interleave: true })) as unknown as ArrayLike<number>;
  await tiff.close();
  return raw;
}

describeWithGdal('readWindow (own tile path) = geotiff.js readRasters on GDAL-written files', () => {
  const cases: { name: string; type: string; options: string[] }[] = [
    { name: 'Int16 deflate PREDICTOR=2 tiled 64', type: 'Int16', options: ['COMPRESS=DEFLATE', 'PREDICTOR=2', 'TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64'] },
    { name: 'Float32 deflate PREDICTOR=3 stripped', type: 'Float32', options: ['COMPRESS=DEFLATE', 'PREDICTOR=3', 'BLOCKYSIZE=7'] },
    { name: 'Float32 LZW PREDICTOR=3 tiled 32', type: 'Float32', options: ['COMPRESS=LZW', 'PREDICTOR=3', 'TILED=YES', 'BLOCKXSIZE=32', 'BLOCKYSIZE=32'] },
    { name: 'UInt16 PackBits stripped', type: 'UInt16', options: ['COMPRESS=PACKBITS'] },
    { name: 'Float64 uncompressed tiled 128', type: 'Float64', options: ['TILED=YES', 'BLOCKXSIZE=128', 'BLOCKYSIZE=128'] },
    { name: 'Byte deflate stripped', type: 'Byte', options: ['COMPRESS=DEFLATE'] },
    // Uncompressed blocks are read straight from the file (one read per run of neighbouring blocks) and
    // copied natively, NoData found afterwards: same values as the decoder path.
    { name: 'Float32 uncompressed tiled 64', type: 'Float32', options: ['TILED=YES', 'BLOCKXSIZE=64', 'BLOCKYSIZE=64'] },
    { name: 'Int16 uncompressed stripped 7 rows', type: 'Int16', options: ['BLOCKYSIZE=7'] },
    { name: 'Byte uncompressed stripped', type: 'Byte', options: [] },
    { name: 'Float32 big-endian deflate tiled (geotiff.js path)', type: 'Float32', options: ['COMPRESS=DEFLATE', 'ENDIANNESS=BIG', 'TILED=YES'] },
  ];
  for (const { name, type, options } of cases) {
    it(name, async () => {
      const path = join(dir, `${name.replace(/\W+/g, '_')}.tif`);
      gdal('gdal_translate', ['-q', '-ot', type, ...options.flatMap((o) => ['-co', o]), source, path]);
      const raster = await openGeoRaster(path);
      try {
        for (const [x0, y0, w, h] of [[0, 0, W, H], [31, 6, 97, 70], [W - 5, H - 3, 5, 3], [63, 63, 2, 2]]) {
          const ours = await raster.readWindow(x0, y0, w, h);
          const raw = await reference(path, x0, y0, w, h);
          expect(ours.length).toBe(raw.length);
          let mismatches = 0;
          const nd = raster.noData === null ? null : Math.fround(raster.noData);
          for (let i = 0; i < raw.length; i++) {
            const expected = nd !== null && raw[i] === (type === 'Float64' ? raster.noData : type === 'Float32' ? nd : raster.noData) ? Number.NaN : Math.fround(raw[i]);
            if (!Object.is(ours[i], expected)) mismatches++;
          }
          expect(mismatches, `${x0},${y0} ${w}×${h}`).toBe(0);
        }
      } finally {
        await raster.close();
      }
    });
  }
});
