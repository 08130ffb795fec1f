// los mode against GDAL's gdal_viewshed (the reference viewshed of GDAL,
// Debian package gdal-bin): same DEM, observer, target height, radius and
// curvature coefficient (cc = 1/k); share of cells that agree ≥ 97 %.
// GDAL measures -md and curvature in the raster's own units, so the
// geographic sample DEM is first reprojected to UTM with gdalwarp.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { openGeoRaster } from '../../server/terrain/raster.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { coverageCommands } from '../../server/cli/coverage.ts';
import { EARTH_RADIUS_M, sampleBilinear } from '../../server/coverage/geometry.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const gdalAvailable = spawnSync('gdal_viewshed', ['--help'], { encoding: 'utf8' }).status !== null && spawnSync('which', ['gdal_viewshed']).status === 0;
const inCi = process.env.CI === 'true';
if (!gdalAvailable && !inCi) console.warn('SKIPPED coverage-gdal: gdal_viewshed not installed (apt-get install gdal-bin)');
const suite = gdalAvailable || inCi ? describe : describe.skip;

const dir = mkdtempSync(join(tmpdir(), 'earshot-cov-gdal-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const coverage = coverageCommands.find((command) => command.words === 'coverage')!;
const quietContext = { readStdin: async () => '', progress: () => {} };

interface Comparison {
  total: number;
  agree: number;
  /** Agreement of ours / GDAL's with a brute-force sight line per cell (bilinear heights every 0.1 cell). */
  oursTruth: number;
  gdalTruth: number;
}

/** Runs both tools with the observer at the centre of cell (col, row) and compares cell by cell. */
async function compare(demPath: string, epsg: number, col: number, row: number, heightM: number, radiusM: number): Promise<Comparison> {
  const dem = await openGeoRaster(demPath);
  const g = dem.geoTransform;
  const x = g[0] + (col + 0.5) * g[1];
  const y = g[3] + (row + 0.5) * g[5];
  const [lon, lat] = dem.transform.inverse(x, y);
  const gdalOut = join(dir, `gdal-${col}-${row}.tif`);
  const oursOut = join(dir, `ours-${col}-${row}.tif`);
  execFileSync('gdal_viewshed', ['-q', '-oz', String(heightM), '-tz', '1.5', '-md', String(radiusM), '-cc', '0.75', '-vv', '1', '-iv', '0', '-ov', '100', '-ox', String(x), '-oy', String(y), demPath, gdalOut]);
  const parsed = coverage.options.parse({
    terrain: demPath, site: `${lat},${lon}`, 'height-m': String(heightM), 'radius-km': String(radiusM / 1000), mode: 'los', 'k-factor': '1.3333333', out: oursOut, workers: '1',
  });
  const summary = (await coverage.run(parsed, quietContext)) as { cells: number; visibleCells: number };
  expect(summary.visibleCells).toBeGreaterThan(0);
  const [ours, gdal] = await Promise.all([openGeoRaster(oursOut), openGeoRaster(gdalOut)]);
  expect(ours.widthPx).toBe(dem.widthPx);
  expect(ours.geoTransform).toEqual(dem.geoTransform);
  const E = await dem.readWindow(0, 0, dem.widthPx, dem.heightPx);
  const A = await ours.readWindow(0, 0, ours.widthPx, ours.heightPx);
  const B = await gdal.readWindow(0, 0, gdal.widthPx, gdal.heightPx);
  const ox = Math.round((gdal.geoTransform[0] - g[0]) / g[1]);
  const oy = Math.round((gdal.geoTransform[3] - g[3]) / g[5]);
  const cellM = Math.abs(g[1]);
  const eye = E[row * dem.widthPx + col] + heightM;
  const drop = (d: number) => (d * d * 0.75) / (2 * EARTH_RADIUS_M);
  let total = 0;
  let agree = 0;
  let oursTruth = 0;
  let gdalTruth = 0;
  let truthCells = 0;
  let rimMismatch = 0;
  for (let gy = 0; gy < gdal.heightPx; gy++) {
    for (let gx = 0; gx < gdal.widthPx; gx++) {
      const X = gx + ox;
      const Y = gy + oy;
      const ground = E[Y * dem.widthPx + X];
      const gv = B[gy * gdal.widthPx + gx];
      const ov = A[Y * ours.widthPx + X];
      if (ground !== ground) continue; // NoData in the DEM: neither tool has an answer
      const inOurs = ov === ov;
      const inGdal = gv !== 100;
      if (inOurs !== inGdal) {
        // Only cells on the rim may differ (distance rounding at exactly R).
        rimMismatch++;
        expect(Math.abs(Math.hypot(X - col, Y - row) * cellM - radiusM), `cell ${X},${Y} inside the radius for one tool only`).toBeLessThan(cellM);
        continue;
      }
      if (!inOurs) continue;
      total++;
      if (ov === gv) agree++;
      const d = Math.hypot(X - col, Y - row) * cellM;
      // The brute-force sight line is costly: check every third cell each way.
      if (d < 1 || X % 3 !== 0 || Y % 3 !== 0) continue;
      truthCells++;
      const steps = Math.ceil((d / cellM) * 10);
      let horizon = -Infinity;
      for (let s = 1; s < steps - 5; s++) {
        const t = s / steps;
        const h = sampleBilinear(E, dem.widthPx, dem.heightPx, col + 0.5 + t * (X - col), row + 0.5 + t * (Y - row));
        if (h === h) horizon = Math.max(horizon, (h - drop(t * d) - eye) / (t * d));
      }
      const truth = (ground + 1.5 - drop(d) - eye) / d >= horizon ? 1 : 0;
      if (truth === ov) oursTruth++;
      if (truth === gv) gdalTruth++;
    }
  }
  await Promise.all([dem.close(), ours.close(), gdal.close()]);
  expect(epsg).toBeGreaterThan(0);
  expect(rimMismatch).toBeLessThan(total * 0.005);
  return { total, agree: agree / total, oursTruth: oursTruth / truthCells, gdalTruth: gdalTruth / truthCells };
}

suite('coverage los vs gdal_viewshed -oz H -tz 1.5 -md R -cc 0.75 (GDAL reference viewshed)', () => {
  it('synthetic 30 m DEM (UTM 33N), observer 10 m, 5 km: ≥ 97 % of cells agree', async () => {
    const dem = makeSyntheticDem(400, 400, 30, 5, 1.5);
    const path = join(dir, 'synthetic.tif');
    writeFileSync(path, writeGeoTiff({ widthPx: 400, heightPx: 400, data: dem.elevationM, geoTransform: [500_000, 30, 0, 4_100_000, 0, -30], epsg: 32633, noData: -9999 }));
    const result = await compare(path, 32633, 200, 200, 10, 5_000);
    console.log('synthetic 30 m, 10 m observer, 5 km:', result);
    expect(result.total).toBeGreaterThan(80_000);
    expect(result.agree).toBeGreaterThanOrEqual(0.97);
  });

  const sample = [resolve('terrain-samples/elev.tif'), '/work/shared/reference/terrain/elev.tif', resolve('../shared/reference/terrain/elev.tif')].find((p) => existsSync(p));
  it.each([
    [60, 85, 10, 30_000],
    [30, 40, 30, 20_000],
    [90, 120, 2, 40_000],
  ])('terrain-samples/elev.tif (real SRTM-derived DEM) warped to UTM 31N at 500 m, observer at cell %i,%i, %i m, radius %i m: ≥ 97 % agree', async (col, row, heightM, radiusM) => {
    expect(sample, 'elev.tif sample DEM').toBeDefined();
    const path = join(dir, 'elev-utm31.tif');
    if (!existsSync(path)) execFileSync('gdalwarp', ['-q', '-overwrite', '-t_srs', 'EPSG:32631', '-tr', '500', '500', '-r', 'bilinear', sample!, path]);
    const result = await compare(path, 32631, col, row, heightM, radiusM);
    console.log(`elev.tif UTM 500 m, cell ${col},${row}, ${heightM} m, ${radiusM} m:`, result);
    expect(result.total).toBeGreaterThan(2_000);
    expect(result.agree).toBeGreaterThanOrEqual(0.97);
    // And ours agrees with an exact sight line per cell (the figures for GDAL are printed beside it).
    expect(result.oursTruth).toBeGreaterThanOrEqual(0.97);
  });
});
