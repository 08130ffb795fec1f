// Reading GeoTIFFs written by our writer: sample types, layouts, compression, NoData, scale/offset,
// pixel-is-point, overviews, CRS lookups and the clear errors for files we cannot use.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeGeoTiff, type RasterArray } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster, RasterError } from '../../../server/terrain/raster.ts';
import { patchTag, toArrayBuffer } from './tiff-patch.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-raster-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const W = 70;
const H = 45;
function fill<T extends RasterArray>(make: (n: number) => T, f: (c: number, r: number) => number): T {
  const data = make(W * H);
  for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) data[r * W + c] = f(c, r);
  return data;
}

async function expectRasterError(source: ArrayBuffer | string, code: string, message: RegExp): Promise<void> {
  const error = await openGeoRaster(source).then(() => null, (e: unknown) => e);
  expect(error).toBeInstanceOf(RasterError);
  expect((error as RasterError).code).toBe(code);
  expect((error as RasterError).message).toMatch(message);
}

describe('openGeoRaster: sample types × layouts × compression round trip (values as written)', () => {
  const types: { name: string; make: (n: number) => RasterArray; f: (c: number, r: number) => number }[] = [
    { name: 'Int16', make: (n) => new Int16Array(n), f: (c, r) => c * 9 - r * 4 - 50 },
    { name: 'UInt16', make: (n) => new Uint16Array(n), f: (c, r) => c * 9 + r * 4 },
    { name: 'Int32', make: (n) => new Int32Array(n), f: (c, r) => c * 1000 - r * 3 },
    { name: 'Float32', make: (n) => new Float32Array(n), f: (c, r) => Math.fround(c * 0.5 + r * 0.25) },
    { name: 'Float64', make: (n) => new Float64Array(n), f: (c, r) => c * 0.5 + r * 0.25 },
  ];
  for (const type of types) {
    for (const tiled of [false, true]) {
      for (const compression of ['none', 'deflate'] as const) {
        it(`${type.name}, ${tiled ? 'tiled' : 'stripped'}, ${compression}`, async () => {
          const data = fill(type.make, type.f);
          const bytes = writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [400000, 10, 0, 5000000, 0, -10], epsg: 32631, tiled: tiled ? { tileSizePx: 16 } : undefined, compression, rowsPerStrip: 4 });
          const raster = await openGeoRaster(toArrayBuffer(bytes));
          expect([raster.widthPx, raster.heightPx, raster.tiled, raster.compression]).toEqual([W, H, tiled, compression]);
          const window = await raster.readWindow(13, 7, 30, 20);
          for (let r = 0; r < 20; r++) for (let c = 0; c < 30; c++) expect(window[r * 30 + c]).toBeCloseTo(type.f(13 + c, 7 + r), 4);
          await raster.close();
        });
      }
    }
  }
});

describe('openGeoRaster: metadata', () => {
  it('NoData cells read as NaN (never 0), others unchanged', async () => {
    const data = fill((n) => new Int16Array(n), (c, r) => (c === r ? -9999 : 0));
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [0, 1, 0, 0, 0, -1], epsg: 3857, noData: -9999 })));
    const window = await raster.readWindow(0, 0, 3, 3);
    expect(Array.from(window)).toEqual([NaN, 0, 0, 0, NaN, 0, 0, 0, NaN]);
    expect(raster.noData).toBe(-9999);
  });

  it('Float32 NoData −3.4028235e38 matches in single precision', async () => {
    const nd = -3.4028234663852886e38;
    const data = fill((n) => new Float32Array(n), (c) => (c === 0 ? nd : 5));
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [0, 1, 0, 0, 0, -1], epsg: 3857, noData: nd })));
    expect(Array.from(await raster.readWindow(0, 0, 2, 1))).toEqual([NaN, 5]);
  });

  it('scale and offset (GDAL_METADATA) are applied: value = raw · scale + offset', async () => {
    const data = fill((n) => new Int16Array(n), (c) => c);
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [0, 1, 0, 0, 0, -1], epsg: 3857, scale: 0.1, offset: -5 })));
    expect([raster.scale, raster.offset]).toEqual([0.1, -5]);
    const window = await raster.readWindow(10, 0, 2, 1);
    expect(window[0]).toBeCloseTo(-4, 6);
    expect(window[1]).toBeCloseTo(-3.9, 6);
  });

  it('pixel-is-point: the tiepoint names a pixel centre and is shifted back to the corner convention', async () => {
    const data = fill((n) => new Int16Array(n), () => 1);
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [1000, 5, 0, 2000, 0, -5], epsg: 32630, rasterType: 'point' })));
    expect(raster.rasterType).toBe('point');
    expect(raster.geoTransform).toEqual([1000, 5, 0, 2000, 0, -5]);
  });

  it('overviews are listed and readable by level; windows read only what they ask for', async () => {
    const data = fill((n) => new Int16Array(n), (c, r) => c + 100 * r);
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [0, 1, 0, 0, 0, -1], epsg: 3857, tiled: { tileSizePx: 16 }, overviews: [2, 4] })));
    expect(raster.overviews).toEqual([{ widthPx: 35, heightPx: 23, factor: 2 }, { widthPx: 18, heightPx: 12, factor: 70 / 18 }]);
    expect(Array.from(await raster.readWindow(3, 2, 2, 1, 1))).toEqual([7 + 500, 9 + 500]);
    await expect(raster.readWindow(0, 0, 1, 1, 3)).rejects.toThrow(/no overview level 3/);
    await expect(raster.readWindow(60, 0, 20, 1)).rejects.toThrow(/outside/);
  });

  it('geographic bounds and metre resolution of a UTM raster; lon/lat ↔ pixel round trip', async () => {
    const data = fill((n) => new Int16Array(n), () => 1);
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: W, heightPx: H, data, geoTransform: [500000, 30, 0, 5500000, 0, -30], epsg: 32632 })));
    expect(raster.resolutionM).toEqual({ x: 30, y: 30 });
    expect(raster.boundsLonLat.west).toBeCloseTo(9, 3); // the zone's central meridian at x = 500 000 m
    const { lon, lat } = raster.pixelToLonLat(12.5, 7.5);
    const back = raster.lonLatToPixel(lon, lat);
    expect(back.x).toBeCloseTo(12.5, 6);
    expect(back.y).toBeCloseTo(7.5, 6);
  });

  it('geographic raster: resolution in metres from the WGS 84 radii at the centre latitude', async () => {
    const data = fill((n) => new Int16Array(n), () => 1);
    const raster = await openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: 10, heightPx: 10, data: data.subarray(0, 100), geoTransform: [0, 1 / 3600, 0, 0.0014, 0, -1 / 3600], epsg: 4326 })));
    // One arc-second at the equator: 30.92 m along the equator, 30.72 m along the meridian (WGS 84).
    expect(raster.resolutionM.x).toBeCloseTo(30.92, 2);
    expect(raster.resolutionM.y).toBeCloseTo(30.72, 2);
  });
});

describe('openGeoRaster: clear errors', () => {
  const good = writeGeoTiff({ widthPx: W, heightPx: H, data: fill((n) => new Int16Array(n), (c) => c), geoTransform: [0, 1, 0, 0, 0, -1], epsg: 3857, tiled: { tileSizePx: 16 }, compression: 'deflate' });

  it('not a TIFF', async () => {
    await expectRasterError(toArrayBuffer(new TextEncoder().encode('PK\u0003\u0004 not a tiff at all')), 'not_tiff', /not a TIFF/);
  });

  it('a missing file', async () => {
    await expectRasterError(join(dir, 'missing.tif'), 'not_tiff', /file not found/);
  });

  it('unsupported compression (JPEG, ZSTD, LERC codes) names the method and the supported ones', async () => {
    await expectRasterError(toArrayBuffer(patchTag(good, 259, { shortValue: 7 })), 'unsupported_compression', /unsupported compression JPEG .*supported: none, deflate, LZW, PackBits/);
    await expectRasterError(toArrayBuffer(patchTag(good, 259, { shortValue: 50000 })), 'unsupported_compression', /ZSTD/);
    await expectRasterError(toArrayBuffer(patchTag(good, 259, { shortValue: 34887 })), 'unsupported_compression', /LERC/);
  });

  it('a TIFF without georeferencing tags', async () => {
    let bytes = patchTag(good, 33550, { newTag: 33551 });
    bytes = patchTag(bytes, 33922, { newTag: 33923 });
    await expectRasterError(toArrayBuffer(bytes), 'no_georeferencing', /no georeferencing/);
  });

  it('a TIFF without a GeoKeyDirectory (no CRS)', async () => {
    await expectRasterError(toArrayBuffer(patchTag(good, 34735, { newTag: 34734 })), 'no_georeferencing', /no coordinate reference system/);
  });

  it('an EPSG code we do not know is named in the error', async () => {
    const bytes = writeGeoTiff({ widthPx: 4, heightPx: 4, data: new Int16Array(16), geoTransform: [0, 1, 0, 0, 0, -1], epsg: 31467, crsKind: 'projected' });
    await expectRasterError(toArrayBuffer(bytes), 'unsupported_crs', /EPSG:31467/);
  });

  it('truncated tile data fails the read with a "corrupt" error, not garbage', async () => {
    const cut = good.slice(0, good.length - 200);
    const path = join(dir, 'truncated.tif');
    writeFileSync(path, cut);
    const raster = await openGeoRaster(path);
    const error = await raster.readWindow(0, 0, W, H).then(() => null, (e: unknown) => e);
    expect(error).toBeInstanceOf(RasterError);
    expect((error as RasterError).code).toBe('corrupt');
    await raster.close();
  });

  it('garbage in a deflate tile fails the read with a "corrupt" error', async () => {
    const broken = good.slice();
    // Overwrite the middle of the image data (after the IFD) with bytes that are no zlib stream.
    for (let i = good.length - 400; i < good.length - 300; i++) broken[i] = 0xff;
    const raster = await openGeoRaster(toArrayBuffer(broken));
    const error = await raster.readWindow(0, 0, W, H).then(() => null, (e: unknown) => e);
    expect(error).toBeInstanceOf(RasterError);
    await raster.close();
  });
});
