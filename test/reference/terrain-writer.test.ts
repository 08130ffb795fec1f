// Our GeoTIFF writer checked against GDAL's reader (gdalinfo, gdallocationinfo): the file GDAL sees must have
// the size, geotransform, CRS, sample type, block layout, NoData, overviews and pixel values we wrote.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, expect, it } from 'vitest';
import { writeGeoTiff, writeGeoTiffFile, type RasterArray } from '../../server/terrain/geotiff-writer.ts';
import { describeWithGdal, gdal, gdalInfo } from '../unit/terrain/gdal-helper.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-writer-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function epsgOf(wkt: string): number {
  const ids = [...wkt.matchAll(/ID\["EPSG",(\d+)\]\]*$/gm)];
  const last = wkt.trim().match(/ID\["EPSG",(\d+)\]\]$/);
  return Number(last?.[1] ?? ids.at(-1)?.[1]);
}

/** Pixel values at (col,row) through gdallocationinfo in pixel coordinates. */
function gdalPixels(path: string, cells: [number, number][]): number[] {
  const args = ['-valonly', path];
  const out = gdal('gdallocationinfo', args, cells.map(([c, r]) => `${c} ${r}`).join('\n') + '\n');
  return out.trim().split('\n').map(Number);
}

function pattern<T extends RasterArray>(make: (n: number) => T, width: number, height: number, f: (col: number, row: number) => number): T {
  const data = make(width * height);
  for (let row = 0; row < height; row++) for (let col = 0; col < width; col++) data[row * width + col] = f(col, row);
  return data;
}

const cases: { name: string; make: (n: number) => RasterArray; gdalType: string; f: (c: number, r: number) => number }[] = [
  { name: 'Int16', make: (n) => new Int16Array(n), gdalType: 'Int16', f: (c, r) => c * 7 - r * 3 - 100 },
  { name: 'UInt16', make: (n) => new Uint16Array(n), gdalType: 'UInt16', f: (c, r) => c * 11 + r * 5 },
  { name: 'Int32', make: (n) => new Int32Array(n), gdalType: 'Int32', f: (c, r) => c * 100003 - r * 77 },
  { name: 'Float32', make: (n) => new Float32Array(n), gdalType: 'Float32', f: (c, r) => Math.fround(c * 0.25 + r * 1.5 - 3.75) },
  { name: 'Float64', make: (n) => new Float64Array(n), gdalType: 'Float64', f: (c, r) => c * 0.1 + r * 1e-3 },
  { name: 'Byte', make: (n) => new Uint8Array(n), gdalType: 'Byte', f: (c, r) => (c + r) % 251 },
];

describeWithGdal('GeoTIFF writer read back by GDAL (gdalinfo / gdallocationinfo, GDAL as reference reader)', () => {
  const width = 77;
  const height = 53;
  const cells: [number, number][] = [[0, 0], [76, 0], [0, 52], [76, 52], [33, 17], [64, 40], [15, 49]];

  // Every sample type tiled + deflate, and every layout × compression for Int16 and Float32 (each case spawns GDAL twice).
  const combos = cases.flatMap((sample) =>
    (['stripped', 'tiled'] as const).flatMap((layout) =>
      (['none', 'deflate'] as const)
        .filter((compression) => (layout === 'tiled' && compression === 'deflate') || sample.name === 'Int16' || sample.name === 'Float32')
        .map((compression) => ({ sample, layout, compression })),
    ),
  );
  for (const { sample, layout, compression } of combos) {
    it(`${sample.name}, ${layout}, ${compression}: size, geotransform, EPSG:32633, type, block and values match`, () => {
      const data = pattern(sample.make, width, height, sample.f);
      const bytes = writeGeoTiff({
        widthPx: width, heightPx: height, data, geoTransform: [500000, 30, 0, 4000020, 0, -30], epsg: 32633,
        tiled: layout === 'tiled' ? { tileSizePx: 32 } : undefined, compression, rowsPerStrip: layout === 'stripped' ? 5 : undefined,
      });
      const path = join(dir, `${sample.name}-${layout}-${compression}.tif`);
      writeFileSync(path, bytes);
      const info = gdalInfo(path);
      expect(info.size).toEqual([width, height]);
      expect(info.geoTransform).toEqual([500000, 30, 0, 4000020, 0, -30]);
      expect(epsgOf(info.coordinateSystem?.wkt ?? '')).toBe(32633);
      expect(info.bands[0].type).toBe(sample.gdalType);
      expect(info.bands[0].block).toEqual(layout === 'tiled' ? [32, 32] : [width, 5]);
      expect(info.metadata?.IMAGE_STRUCTURE?.COMPRESSION).toBe(compression === 'deflate' ? 'DEFLATE' : undefined);
      // gdallocationinfo prints 15 significant digits, so doubles are compared to that precision.
      const values = gdalPixels(path, cells);
      values.forEach((value, i) => expect(value).toBeCloseTo(sample.f(cells[i][0], cells[i][1]), 10));
    });
  }

  it('geographic EPSG:4326 with NoData −32768: GDAL reports the CRS, NoData and AREA_OR_POINT=Area', () => {
    const data = pattern((n) => new Int16Array(n), 20, 10, (c, r) => (c === 3 && r === 4 ? -32768 : 100 + c + r));
    const path = join(dir, 'geo.tif');
    writeFileSync(path, writeGeoTiff({ widthPx: 20, heightPx: 10, data, geoTransform: [5.5, 0.01, 0, 50.25, 0, -0.01], epsg: 4326, noData: -32768 }));
    const info = gdalInfo(path);
    expect(epsgOf(info.coordinateSystem?.wkt ?? '')).toBe(4326);
    expect(info.bands[0].noDataValue).toBe(-32768);
    expect(info.metadata?.['']?.AREA_OR_POINT).toBe('Area');
    expect(info.geoTransform.map((v) => Number(v.toFixed(12)))).toEqual([5.5, 0.01, 0, 50.25, 0, -0.01]);
    expect(gdalPixels(path, [[3, 4], [4, 4]])).toEqual([-32768, 108]);
  });

  it('pixel-is-point: GDAL reports AREA_OR_POINT=Point and the same corner geotransform we asked for', () => {
    const data = pattern((n) => new Float32Array(n), 16, 16, (c, r) => c + r);
    const path = join(dir, 'point.tif');
    writeFileSync(path, writeGeoTiff({ widthPx: 16, heightPx: 16, data, geoTransform: [300000, 10, 0, 5000000, 0, -10], epsg: 32632, rasterType: 'point' }));
    const info = gdalInfo(path);
    expect(info.metadata?.['']?.AREA_OR_POINT).toBe('Point');
    expect(info.geoTransform).toEqual([300000, 10, 0, 5000000, 0, -10]);
  });

  it('overviews 2, 4, 8: GDAL lists them with the decimated sizes and the nearest (block-centre) samples', () => {
    const data = pattern((n) => new Int16Array(n), 100, 60, (c, r) => c * 3 + r * 500);
    const path = join(dir, 'ovr.tif');
    writeFileSync(path, writeGeoTiff({ widthPx: 100, heightPx: 60, data, geoTransform: [0, 1, 0, 60, 0, -1], epsg: 3857, tiled: { tileSizePx: 16 }, compression: 'deflate', overviews: [2, 4, 8] }));
    const info = gdalInfo(path);
    expect(info.bands[0].overviews?.map((o) => o.size)).toEqual([[50, 30], [25, 15], [13, 8]]);
    // Overview 1 (factor 2), extracted by GDAL: pixel (c, r) holds source (2c + 1, 2r + 1).
    const extracted = join(dir, 'ovr0.tif');
    gdal('gdal_translate', ['-q', '-oo', 'OVERVIEW_LEVEL=0', path, extracted]);
    expect(gdalPixels(extracted, [[0, 0], [10, 7], [49, 29]])).toEqual([1 * 3 + 1 * 500, 21 * 3 + 15 * 500, 99 * 3 + 59 * 500]);
  });

  it('streaming file writer (block source): GDAL reads the same values as the in-memory writer', () => {
    const f = (c: number, r: number) => (c * 13 + r * 7) % 3000;
    const path = join(dir, 'stream.tif');
    writeGeoTiffFile(path, {
      widthPx: 130, heightPx: 90, sampleType: 'int16', geoTransform: [10, 0.001, 0, 45, 0, -0.001], epsg: 4326, tiled: { tileSizePx: 64 },
      compression: 'deflate', noData: -1, overviewFactors: [2],
      readBlock: (level, x0, y0, w, h) => pattern((n) => new Int16Array(n), w, h, (c, r) => f((x0 + c) * (level + 1), (y0 + r) * (level + 1))),
    });
    const info = gdalInfo(path);
    expect(info.size).toEqual([130, 90]);
    expect(info.bands[0].block).toEqual([64, 64]);
    expect(info.bands[0].overviews?.map((o) => o.size)).toEqual([[65, 45]]);
    expect(gdalPixels(path, cells.map(([c, r]) => [c, r]))).toEqual(cells.map(([c, r]) => f(c, r)));
  });
});
