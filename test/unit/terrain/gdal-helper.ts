// GDAL command-line tools as a reference to check against (never a run-time dependency).
// Outside CI, a missing gdal-bin skips the GDAL checks with a visible reason; in CI (CI=true) it fails.
import { execFileSync, spawnSync } from 'node:child_process';
import { describe, it, expect } from 'vitest';

export const gdalAvailable = spawnSync('gdalinfo', ['--version'], { stdio: 'ignore' }).status === 0;
const inCi = process.env.CI === 'true';

/** describe() that runs only where gdal-bin is installed; skipped with its reason elsewhere, failing in CI. */
export function describeWithGdal(name: string, fn: () => void): void {
  if (gdalAvailable) {
    describe(name, fn);
  } else if (inCi) {
    describe(name, () => {
      it('needs gdal-bin (CI=true: a missing reference tool is a failure)', () => {
        expect(gdalAvailable, 'gdal-bin is not installed; apt-get install gdal-bin').toBe(true);
      });
    });
  } else {
    describe.skip(`${name} [skipped: gdal-bin not installed; apt-get install gdal-bin]`, fn);
  }
}

/** Runs a GDAL tool and returns its stdout. */
export function gdal(tool: string, args: string[], input?: string): string {
  return execFileSync(tool, args, { encoding: 'utf8', input, stdio: ['pipe', 'pipe', 'pipe'] });
}

/** gdalinfo -json of a file. */
export function gdalInfo(path: string): GdalInfo {
  return JSON.parse(gdal('gdalinfo', ['-json', path])) as GdalInfo;
}

export interface GdalInfo {
  size: [number, number];
  geoTransform: number[];
  coordinateSystem?: { wkt: string };
  stac?: { 'proj:epsg'?: number };
  metadata?: Record<string, Record<string, string>>;
  bands: {
    type: string;
    block: [number, number];
    noDataValue?: number | string;
    overviews?: { size: [number, number] }[];
    scale?: number;
    offset?: number;
  }[];
}

/**
 * Values at WGS 84 positions by `gdallocationinfo -valonly -wgs84` (one batch through stdin: "lon lat" lines).
 * Returns null where GDAL prints an empty line (outside the raster) or the NoData value.
 */
export function gdalValuesAt(path: string, points: { lat: number; lon: number }[], noData: number | null): (number | null)[] {
  const input = points.map((p) => `${p.lon} ${p.lat}`).join('\n') + '\n';
  const out = gdal('gdallocationinfo', ['-valonly', '-wgs84', path], input);
  const lines = out.split('\n');
  return points.map((_, i) => {
    const text = (lines[i] ?? '').trim();
    if (text === '') return null;
    const value = Number(text);
    if (noData !== null && value === noData) return null;
    return value;
  });
}
