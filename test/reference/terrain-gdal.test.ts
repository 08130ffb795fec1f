// Heights sampled by earshot against GDAL's gdallocationinfo (-valonly -wgs84), the reference reader:
// the real DEM terrain-samples/elev.tif (terra example data, from SRTM), a UTM copy made by gdalwarp,
// and GDAL-written variants (tiled, COG with overviews, LZW + predictor, PackBits, deflate, no compression,
// UInt16/Int32/Float32/Float64, scale/offset, pixel-is-point).
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { openGeoRaster } from '../../server/terrain/raster.ts';
import { TerrainStore } from '../../server/terrain/store.ts';
import { describeWithGdal, gdal, gdalInfo, gdalValuesAt } from '../unit/terrain/gdal-helper.ts';

const ELEV = new URL('../../terrain-samples/elev.tif', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'earshot-gdal-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Deterministic pseudo-random positions covering a box widened by 8 % on each side (so some fall outside). */
function positions(box: { west: number; south: number; east: number; north: number }, count: number, seed = 7): { lat: number; lon: number }[] {
  let state = seed;
  const random = () => {
    state = (state * 1103515245 + 12345) % 2147483648;
    return state / 2147483648;
  };
  const w = box.east - box.west;
  const h = box.north - box.south;
  return Array.from({ length: count }, () => ({ lon: box.west - 0.08 * w + random() * 1.16 * w, lat: box.south - 0.08 * h + random() * 1.16 * h }));
}

async function nearestAll(path: string, points: { lat: number; lon: number }[]): Promise<(number | null)[]> {
  const raster = await openGeoRaster(path);
  const store = new TerrainStore({ cacheBytes: 1 << 20 });
  store.addLayer(raster, { kind: 'elevation' });
  const out = await store.sampleElevations(Float64Array.from(points, (p) => p.lat), Float64Array.from(points, (p) => p.lon), 'nearest');
  await store.close();
  return Array.from(out, (v) => (Number.isNaN(v) ? null : v));
}

/** Compares earshot nearest heights with GDAL's at every point; returns counts for the report. */
async function agreeWithGdal(path: string, points: { lat: number; lon: number }[], transformRaw: (raw: number) => number = (raw) => raw) {
  const info = gdalInfo(path);
  const noDataRaw = info.bands[0].noDataValue;
  const reference = gdalValuesAt(path, points, typeof noDataRaw === 'number' ? noDataRaw : null).map((v) => (v === null ? null : transformRaw(v)));
  const ours = await nearestAll(path, points);
  let equal = 0;
  let noData = 0;
  const mismatches: string[] = [];
  points.forEach((p, i) => {
    const a = ours[i];
    const b = reference[i];
    if (a === null && b === null) {
      noData++;
      equal++;
    } else if (a !== null && b !== null && Math.abs(a - b) <= 1e-6 * Math.max(1, Math.abs(b))) {
      equal++;
    } else if (mismatches.length < 5) {
      mismatches.push(`${p.lat},${p.lon}: earshot ${a}, GDAL ${b}`);
    }
  });
  return { equal, noData, total: points.length, mismatches };
}

describeWithGdal('nearest heights equal gdallocationinfo -valonly -wgs84 (GDAL as reference)', () => {
  const elevBox = { west: 5.741666666666666, south: 49.44166666666666, east: 6.533333333333333, north: 50.19166666666666 };
  const points = positions(elevBox, 1500);
  let utmPath = '';

  beforeAll(() => {
    // The projected DEM: elev.tif warped by GDAL to WGS 84 / UTM zone 32N at 250 m, tiled, LZW.
    utmPath = join(dir, 'elev-utm32.tif');
    gdal('gdalwarp', ['-q', '-t_srs', 'EPSG:32632', '-tr', '250', '250', '-r', 'near', '-dstnodata', '-32768', '-co', 'TILED=YES', '-co', 'BLOCKXSIZE=64', '-co', 'BLOCKYSIZE=64', '-co', 'COMPRESS=LZW', ELEV, utmPath]);
  });

  it('real DEM elev.tif (EPSG:4326, LZW, stripped, NoData −32768): 1500 points, every one equal, NoData where GDAL has none', async () => {
    const result = await agreeWithGdal(ELEV, points);
    expect(result.mismatches).toEqual([]);
    expect(result.equal).toBe(result.total);
    expect(result.noData).toBeGreaterThan(100); // outside the raster and the NoData cells around the data
    expect(result.total - result.noData).toBeGreaterThan(500); // 624 of the 1500 points fall on data cells
  });

  it('UTM DEM (EPSG:32632 by gdalwarp, tiled 64 px, LZW): 1500 points, every one equal', async () => {
    const raster = await openGeoRaster(utmPath);
    expect(raster.crs.epsg).toBe(32632);
    expect(raster.tiled).toBe(true);
    await raster.close();
    const result = await agreeWithGdal(utmPath, points);
    expect(result.mismatches).toEqual([]);
    expect(result.equal).toBe(result.total);
    expect(result.total - result.noData).toBeGreaterThan(500); // 624 of the 1500 points fall on data cells
  });

  const variants: { name: string; args: string[]; raw?: (raw: number) => number }[] = [
    { name: 'tiled 32 px, deflate', args: ['-co', 'TILED=YES', '-co', 'BLOCKXSIZE=32', '-co', 'BLOCKYSIZE=32', '-co', 'COMPRESS=DEFLATE'] },
    { name: 'LZW with horizontal predictor', args: ['-co', 'COMPRESS=LZW', '-co', 'PREDICTOR=2'] },
    { name: 'PackBits', args: ['-co', 'COMPRESS=PACKBITS'] },
    { name: 'no compression, 7-row strips', args: ['-co', 'COMPRESS=NONE', '-co', 'BLOCKYSIZE=7'] },
    { name: 'COG (tiled, overviews)', args: ['-of', 'COG', '-co', 'BLOCKSIZE=32', '-co', 'COMPRESS=DEFLATE'] },
    { name: 'UInt16 (NoData 0)', args: ['-ot', 'UInt16', '-a_nodata', '0'] },
    { name: 'Int32', args: ['-ot', 'Int32'] },
    { name: 'Float32, deflate + floating-point predictor', args: ['-ot', 'Float32', '-co', 'COMPRESS=DEFLATE', '-co', 'PREDICTOR=3'] },
    { name: 'Float64', args: ['-ot', 'Float64', '-co', 'COMPRESS=LZW'] },
    { name: 'scale 0.5 / offset 10 (GDAL prints raw values: compared as raw · 0.5 + 10)', args: ['-a_scale', '0.5', '-a_offset', '10'], raw: (raw) => raw * 0.5 + 10 },
    { name: 'pixel-is-point (AREA_OR_POINT=Point)', args: ['-mo', 'AREA_OR_POINT=Point'] },
  ];
  for (const variant of variants) {
    it(`GDAL-written variant: ${variant.name}: 1500 points, every one equal`, async () => {
      const path = join(dir, `${variant.name.replace(/[^a-z0-9]+/gi, '-')}.tif`);
      gdal('gdal_translate', ['-q', ...variant.args, ELEV, path]);
      const result = await agreeWithGdal(path, points, variant.raw);
      expect(result.mismatches).toEqual([]);
      expect(result.equal).toBe(result.total);
    });
  }

  it('pixel-is-point file: our corner geotransform equals gdalinfo\'s', async () => {
    const path = join(dir, 'point-gt.tif');
    gdal('gdal_translate', ['-q', '-mo', 'AREA_OR_POINT=Point', ELEV, path]);
    const info = gdalInfo(path);
    expect(info.metadata?.['']?.AREA_OR_POINT).toBe('Point');
    const raster = await openGeoRaster(path);
    expect(raster.rasterType).toBe('point');
    raster.geoTransform.forEach((v, i) => expect(v).toBeCloseTo(info.geoTransform[i], 12));
    await raster.close();
  });

  it('COG overview level 1 read through readWindow equals the overview GDAL extracts (OVERVIEW_LEVEL=0)', async () => {
    const cog = join(dir, 'cog-ovr.tif');
    gdal('gdal_translate', ['-q', '-of', 'COG', '-co', 'BLOCKSIZE=32', '-co', 'OVERVIEW_RESAMPLING=NEAREST', ELEV, cog]);
    const info = gdalInfo(cog);
    const overviewSizes = info.bands[0].overviews?.map((o) => o.size) ?? [];
    expect(overviewSizes.length).toBeGreaterThan(0);
    const raster = await openGeoRaster(cog);
    expect(raster.overviews.map((o) => [o.widthPx, o.heightPx])).toEqual(overviewSizes);
    const [w, h] = overviewSizes[0];
    const ours = await raster.readWindow(0, 0, w, h, 1);
    await raster.close();
    const extracted = join(dir, 'cog-ovr0.tif');
    gdal('gdal_translate', ['-q', '-oo', 'OVERVIEW_LEVEL=0', cog, extracted]);
    const cells: string[] = [];
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) cells.push(`${c} ${r}`);
    const reference = gdal('gdallocationinfo', ['-valonly', extracted], cells.join('\n') + '\n').trim().split('\n').map(Number);
    const oursRaw = Array.from(ours, (v) => (Number.isNaN(v) ? -32768 : v));
    expect(oursRaw).toEqual(reference);
  });
});

describeWithGdal('bilinear equals the four-neighbour formula under GDAL\'s pixel-centre convention (values and positions from GDAL)', () => {
  it('elev.tif and its UTM copy: 400 points each, within 1e-6 m of the formula over GDAL\'s four neighbour values', async () => {
    const utmPath = join(dir, 'elev-utm32-bilinear.tif');
    gdal('gdalwarp', ['-q', '-t_srs', 'EPSG:32632', '-tr', '200', '200', '-r', 'near', '-dstnodata', '-32768', ELEV, utmPath]);
    for (const path of [ELEV, utmPath]) {
      const info = gdalInfo(path);
      const gt = info.geoTransform;
      const [width, height] = info.size;
      const epsg = path === ELEV ? 4326 : 32632;
      const raster = await openGeoRaster(path);
      const store = new TerrainStore({ cacheBytes: 1 << 20 });
      store.addLayer(raster, { kind: 'elevation' });
      const box = raster.boundsLonLat;
      const inner = { west: box.west + 0.2 * (box.east - box.west), east: box.east - 0.2 * (box.east - box.west), south: box.south + 0.2 * (box.north - box.south), north: box.north - 0.2 * (box.north - box.south) };
      const pts = positions(inner, 400, 99);
      // Positions in the raster CRS by gdaltransform (PROJ), independent of our proj4 path.
      const xy = epsg === 4326
        ? pts.map((p) => [p.lon, p.lat])
        : gdal('gdaltransform', ['-s_srs', 'EPSG:4326', '-t_srs', `EPSG:${epsg}`], pts.map((p) => `${p.lon} ${p.lat}`).join('\n') + '\n').trim().split('\n').map((line) => line.split(/\s+/).map(Number));
      const neighbours: string[] = [];
      const weights: { i0: number; j0: number; fx: number; fy: number }[] = [];
      for (const [x, y] of xy) {
        const u = (x - gt[0]) / gt[1] - 0.5;
        const v = (y - gt[3]) / gt[5] - 0.5;
        const i0 = Math.floor(u);
        const j0 = Math.floor(v);
        weights.push({ i0, j0, fx: u - i0, fy: v - j0 });
        neighbours.push(`${i0} ${j0}`, `${i0 + 1} ${j0}`, `${i0} ${j0 + 1}`, `${i0 + 1} ${j0 + 1}`);
        expect(i0 >= 0 && j0 >= 0 && i0 + 1 < width && j0 + 1 < height).toBe(true);
      }
      const values = gdal('gdallocationinfo', ['-valonly', path], neighbours.join('\n') + '\n').trim().split('\n').map(Number);
      const ours = await store.sampleElevations(Float64Array.from(pts, (p) => p.lat), Float64Array.from(pts, (p) => p.lon), 'bilinear');
      let compared = 0;
      weights.forEach(({ fx, fy }, k) => {
        const [z00, z10, z01, z11] = values.slice(4 * k, 4 * k + 4);
        if ([z00, z10, z01, z11].includes(-32768)) {
          expect(Number.isNaN(ours[k])).toBe(true);
          return;
        }
        const expected = (1 - fx) * (1 - fy) * z00 + fx * (1 - fy) * z10 + (1 - fx) * fy * z01 + fx * fy * z11;
        expect(Math.abs(ours[k] - expected)).toBeLessThan(1e-6);
        compared++;
      });
      expect(compared).toBeGreaterThan(200);
      await store.close();
    }
  });
});
