// The terrain store: nearest/bilinear sampling (GDAL pixel-centre convention), NoData flagged never 0,
// finer layers winning where layers overlap, the cache's byte ceiling, clutter classes and heights.
import { describe, expect, it } from 'vitest';
import { writeGeoTiff, type GeoTransform } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { TerrainStore } from '../../../server/terrain/store.ts';
import { P1812_REPRESENTATIVE_CLUTTER_HEIGHTS_M, clutterHeightsByIndex } from '../../../server/terrain/clutter.ts';
import { toArrayBuffer } from './tiff-patch.ts';

async function layer(width: number, height: number, gt: GeoTransform, f: (c: number, r: number) => number, options: { epsg?: number; noData?: number; tile?: number; int?: boolean } = {}) {
  const data = options.int ? new Int16Array(width * height) : new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) data[r * width + c] = f(c, r);
  const bytes = writeGeoTiff({ widthPx: width, heightPx: height, data, geoTransform: gt, epsg: options.epsg ?? 4326, noData: options.noData, tiled: options.tile ? { tileSizePx: options.tile } : undefined, compression: 'deflate' });
  return openGeoRaster(toArrayBuffer(bytes));
}

// A plane z = 100 + 2·col + 3·row sampled at pixel centres: bilinear interpolation of a plane is exact, so the
// expected value at any position follows from the position alone (pixel-centre convention: centre of (c, r) is c + 0.5).
const plane = (c: number, r: number) => 100 + 2 * c + 3 * r;
const GT: GeoTransform = [10, 0.001, 0, 50, 0, -0.001];

describe('sampling under GDAL\'s pixel-centre convention', () => {
  it('bilinear on a plane equals the plane at the continuous pixel position minus half a pixel', async () => {
    const store = new TerrainStore();
    store.addLayer(await layer(64, 48, GT, plane, { tile: 16 }), { kind: 'elevation' });
    for (const [lon, lat] of [[10.0123, 49.9801], [10.0405, 49.9705], [10.0159, 49.9841], [10.03, 49.98]]) {
      const x = (lon - GT[0]) / GT[1] - 0.5;
      const y = (lat - GT[3]) / GT[5] - 0.5;
      expect(await store.sampleElevation(lat, lon, 'bilinear')).toBeCloseTo(100 + 2 * x + 3 * y, 3);
    }
  });

  it('nearest returns the pixel containing the point (pixel (i, j) spans [i, i+1))', async () => {
    const store = new TerrainStore();
    store.addLayer(await layer(64, 48, GT, plane, { tile: 16 }), { kind: 'elevation' });
    // lon 10.01299 → col 12.99 → 12; lat 49.98001 → row 19.99 → 19.
    expect(await store.sampleElevation(49.98001, 10.01299, 'nearest')).toBe(plane(12, 19));
    expect(await store.sampleElevation(49.97999, 10.01301, 'nearest')).toBe(plane(13, 20));
  });

  it('within half a pixel of the edge, bilinear repeats the outer row/column', async () => {
    const store = new TerrainStore();
    store.addLayer(await layer(8, 8, GT, plane), { kind: 'elevation' });
    // Top-left corner quarter of pixel (0, 0): both fx and fy clamp to 0.
    expect(await store.sampleElevation(49.99990, 10.00010, 'bilinear')).toBeCloseTo(plane(0, 0), 6);
    // Right edge: column clamps, rows still interpolate (y = 3.7 → between rows 3 and 4 at 0.2).
    expect(await store.sampleElevation(50 - 0.0037, 10.0079, 'bilinear')).toBeCloseTo(100 + 2 * 7 + 3 * 3.2, 4);
  });

  it('outside every layer and on NoData the result is null, never 0; bilinear next to NoData is NoData', async () => {
    const store = new TerrainStore();
    store.addLayer(await layer(16, 16, GT, (c, r) => (c === 5 && r === 5 ? -32768 : 250), { noData: -32768, int: true }), { kind: 'elevation' });
    expect(await store.sampleElevation(49.9945, 10.0055, 'nearest')).toBeNull(); // pixel (5, 5)
    expect(await store.sampleElevation(49.9945, 10.0062, 'bilinear')).toBeNull(); // weights on (5, 5)
    expect(await store.sampleElevation(49.9935, 10.0085, 'bilinear')).toBe(250);
    expect(await store.sampleElevation(51, 10.005, 'bilinear')).toBeNull();
    expect(await store.sampleElevation(49.99, 9.9, 'nearest')).toBeNull();
  });

  it('a bilinear sample whose four neighbours lie in four different tiles is still exact', async () => {
    const store = new TerrainStore();
    store.addLayer(await layer(64, 64, GT, plane, { tile: 16 }), { kind: 'elevation' });
    // Position (16.0, 16.0) in pixels sits between centres 15.5 and 16.5: columns 15|16 and rows 15|16 straddle tiles.
    const lon = GT[0] + 16 * GT[1];
    const lat = GT[3] + 16 * GT[5];
    expect(await store.sampleElevation(lat, lon, 'bilinear')).toBeCloseTo(100 + 2 * 15.5 + 3 * 15.5, 4);
  });
});

describe('several layers', () => {
  it('the finer layer wins where layers overlap; the coarser fills where the finer has NoData or no coverage', async () => {
    const store = new TerrainStore();
    // Coarse: 0.004° pixels, 100 m everywhere. Fine: 0.001° pixels covering the north-west part, 500 m, one NoData cell.
    store.addLayer(await layer(20, 20, [10, 0.004, 0, 50, 0, -0.004], () => 100), { kind: 'elevation', name: 'coarse' });
    store.addLayer(await layer(20, 20, GT, (c, r) => (c === 3 && r === 3 ? -1 : 500), { noData: -1 }), { kind: 'elevation', name: 'fine' });
    expect(store.elevationLayers.map((l) => l.name)).toEqual(['fine', 'coarse']);
    expect(await store.sampleElevation(49.9905, 10.0105, 'nearest')).toBe(500);
    expect(await store.sampleElevation(49.9965, 10.0035, 'nearest')).toBe(100); // NoData in the fine layer
    expect(await store.sampleElevation(49.95, 10.05, 'nearest')).toBe(100); // outside the fine layer
    expect(store.finestResolutionM()).toBeCloseTo(0.001 * 71700, -2); // ~0.001° of longitude at 50° N ≈ 71.7 m
  });
});

describe('the block cache', () => {
  it('stays under its byte ceiling while sampling across far more blocks than fit, and evicts', async () => {
    const raster = await layer(512, 512, GT, plane, { tile: 32 }); // 256 tiles of 4 KiB decoded
    const ceiling = 64 * 1024; // 16 tiles
    const store = new TerrainStore({ cacheBytes: ceiling });
    store.addLayer(raster, { kind: 'elevation' });
    const n = 4000;
    const lat = new Float64Array(n);
    const lon = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      lon[i] = GT[0] + ((i * 37) % 512 + 0.5) * GT[1];
      lat[i] = GT[3] + ((i * 91) % 512 + 0.5) * GT[5];
    }
    const out = await store.sampleElevations(lat, lon, 'nearest');
    for (let i = 0; i < n; i += 97) expect(out[i]).toBe(plane((i * 37) % 512, (i * 91) % 512));
    const stats = store.cacheStats();
    expect(stats.capacityBytes).toBe(ceiling);
    expect(stats.usedBytes).toBeLessThanOrEqual(ceiling);
    expect(stats.evictions).toBeGreaterThan(0);
    expect(stats.loads).toBeGreaterThan(16);
  });

  it('a ceiling smaller than eight blocks is raised to eight blocks so sampling always progresses', async () => {
    const store = new TerrainStore({ cacheBytes: 1000 });
    store.addLayer(await layer(64, 64, GT, plane, { tile: 16 }), { kind: 'elevation' });
    expect(store.cacheStats().capacityBytes).toBe(8 * 16 * 16 * 4);
    expect(await store.sampleElevation(49.97, 10.05, 'nearest')).toBe(plane(50, 30));
  });
});

describe('clutter', () => {
  it('representative clutter heights by class, ITU-R P.1812-8 Table 2 (water 0, open 0, suburban 10, urban 15, trees 15, dense urban 20 m), with per-plan overrides', () => {
    expect(P1812_REPRESENTATIVE_CLUTTER_HEIGHTS_M).toEqual({ water: 0, open: 0, suburban: 10, urban: 15, trees: 15, dense_urban: 20 });
    expect(Array.from(clutterHeightsByIndex({ trees: 22, open: 4 }))).toEqual([0, 4, 10, 15, 22, 20]);
    expect(() => clutterHeightsByIndex({ urban: -3 })).toThrow(/urban must be between 0 and 100 m/);
  });

  it('a clutter layer maps codes to classes and heights (preset and custom maps); unmapped codes have no class', async () => {
    const store = new TerrainStore({ clutterHeightsM: { trees: 18 } });
    store.addLayer(await layer(16, 16, GT, () => 300), { kind: 'elevation' });
    store.addLayer(await layer(16, 16, GT, (c) => [10, 50, 80, 33][c % 4], { int: true }), { kind: 'clutter', clutterCodes: 'worldcover' });
    const at = (c: number) => store.sampleClutter(49.9955, GT[0] + (c + 0.5) * GT[1]);
    expect(await at(0)).toEqual({ clutterClass: 'trees', heightM: 18 });
    expect(await at(1)).toEqual({ clutterClass: 'urban', heightM: 15 });
    expect(await at(2)).toEqual({ clutterClass: 'water', heightM: 0 });
    expect(await at(3)).toBeNull();
    const custom = new TerrainStore();
    custom.addLayer(await layer(16, 16, GT, () => 7, { int: true }), { kind: 'clutter', clutterCodes: { 7: 'dense_urban' } });
    expect(await custom.sampleClutter(49.995, 10.005)).toEqual({ clutterClass: 'dense_urban', heightM: 20 });
    expect(() => custom.addLayer(custom.clutterLayer!.raster, { kind: 'clutter' })).toThrow(/only one clutter layer/);
  });
});
