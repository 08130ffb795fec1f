// The `earshot coverage` contract through the real command line (one JSON document, one-line errors).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import proj4 from 'proj4';
import { afterAll, describe, expect, it } from 'vitest';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { makeSyntheticDem } from './synthetic-dem.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-cov-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function earshot(args: string[]) {
  return spawnSync(process.execPath, ['--import', 'tsx', 'server/cli.ts', ...args], { encoding: 'utf8', timeout: 120_000 });
}

describe('earshot coverage (command-line contract)', () => {
  const dem = makeSyntheticDem(120, 100, 30, 3);
  const path = join(dir, 'dem.tif');
  writeFileSync(path, writeGeoTiff({ widthPx: 120, heightPx: 100, data: dem.elevationM, geoTransform: [400_000, 30, 0, 5_200_000, 0, -30], epsg: 32632, noData: -9999 }));
  const [lon, lat] = proj4('+proj=utm +zone=32 +datum=WGS84 +units=m +no_defs', 'WGS84', [400_000 + 60.5 * 30, 5_200_000 - 50.5 * 30]) as [number, number];

  it('--json prints exactly one document with mode, cells, seconds, visibleCells; OUT.tif is on the DEM grid with 255 outside the radius', async () => {
    const out = join(dir, 'los.tif');
    const run = earshot(['coverage', '--terrain', path, '--site', `${lat},${lon}`, '--height-m', '8', '--radius-km', '1.2', '--mode', 'los', '--out', out, '--json']);
    expect(run.status, run.stderr).toBe(0);
    const lines = run.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const doc = JSON.parse(lines[0]) as { mode: string; cells: number; seconds: number; visibleCells: number };
    expect(doc.mode).toBe('los');
    expect(typeof doc.seconds).toBe('number');
    // π·(1200/30)² ≈ 5027 cells inside the radius.
    expect(doc.cells).toBeGreaterThan(4900);
    expect(doc.cells).toBeLessThan(5150);
    expect(doc.visibleCells).toBeGreaterThan(0);
    expect(doc.visibleCells).toBeLessThanOrEqual(doc.cells);
    const raster = await openGeoRaster(out);
    expect([raster.widthPx, raster.heightPx]).toEqual([120, 100]);
    expect(raster.noData).toBe(255);
    const values = await raster.readWindow(0, 0, 120, 100);
    let inside = 0;
    for (const v of values) if (v === v) { expect([0, 1]).toContain(v); inside++; }
    expect(inside).toBe(doc.cells);
    await raster.close();
  });

  it('bad input: one line on stderr naming the option, non-zero exit, no stack trace', () => {
    const run = earshot(['coverage', '--terrain', path, '--site', `${lat},${lon}`, '--height-m', '8', '--radius-km', '-3', '--mode', 'los', '--out', join(dir, 'x.tif'), '--json']);
    expect(run.status).not.toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr.trim().split('\n')).toHaveLength(1);
    expect(run.stderr).toMatch(/--radius-km/);
  });
});
