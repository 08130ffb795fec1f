// `earshot profile` as other tools call it: one JSON document, the contract's fields, NoData as null,
// first point at --from and last at --to; errors as one line on stderr with a non-zero exit.
import { spawnSync } from 'node:child_process';
import { describe, expect, it, vi } from 'vitest';
import { runCli } from '../../../server/cli.ts';

const ELEV = new URL('../../../terrain-samples/elev.tif', import.meta.url).pathname;
const root = new URL('../../../', import.meta.url).pathname;

function earshot(args: string[]) {
  const result = spawnSync(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args], { cwd: root, encoding: 'utf8' });
  return { status: result.status, stdout: result.stdout, stderr: result.stderr };
}

describe('earshot profile (CLI contract)', () => {
  it('prints {"lengthM", "points": [{distanceM, lat, lon, groundM}]} with null for NoData, ends at --from and --to', () => {
    // From inside the data (Luxembourg) westward past the raster's edge: the tail is outside → null.
    const run = earshot(['profile', '--terrain', ELEV, '--from', '49.8,6.1', '--to', '49.8,5.6', '--step-m', '250', '--interpolation', 'nearest', '--json']);
    expect(run.status, run.stderr).toBe(0);
    const doc = JSON.parse(run.stdout) as { lengthM: number; points: { distanceM: number; lat: number; lon: number; groundM: number | null }[] };
    expect(run.stdout.trim().split('\n')).toHaveLength(1);
    expect(doc.lengthM).toBeGreaterThan(35000);
    expect(doc.points[0]).toMatchObject({ distanceM: 0, lat: 49.8, lon: 6.1 });
    expect(doc.points.at(-1)).toMatchObject({ lat: 49.8, lon: 5.6, distanceM: doc.lengthM });
    expect(Object.keys(doc.points[0]).sort()).toEqual(['distanceM', 'groundM', 'lat', 'lon']);
    expect(typeof doc.points[0].groundM).toBe('number');
    expect(doc.points.at(-1)?.groundM).toBeNull();
    const steps = doc.points.slice(1).map((p, i) => p.distanceM - doc.points[i].distanceM);
    expect(Math.max(...steps)).toBeLessThanOrEqual(250.001);
  });

  it('bad input: one line on stderr naming the option, non-zero exit, nothing on stdout (in-process runCli)', async () => {
    for (const [args, pattern] of [
      [['profile', '--terrain', ELEV, '--from', '95,6', '--to', '49.8,5.6', '--json'], /--from: latitude must be within ±90°/],
      [['profile', '--terrain', 'missing.tif', '--from', '49.8,6', '--to', '49.8,5.6', '--json'], /--terrain: file not found: missing.tif/],
      [['profile', '--terrain', `${ELEV},package.json`, '--from', '49.8,6', '--to', '49.8,5.6', '--json'], /--terrain: not a TIFF/],
    ] as const) {
      const out: string[] = [];
      const err: string[] = [];
      const stdout = vi.spyOn(process.stdout, 'write').mockImplementation((chunk) => (out.push(String(chunk)), true));
      const stderr = vi.spyOn(process.stderr, 'write').mockImplementation((chunk) => (err.push(String(chunk)), true));
      let status: number;
      try {
        status = await runCli([...args]);
      } finally {
        stdout.mockRestore();
        stderr.mockRestore();
      }
      const run = { status, stdout: out.join(''), stderr: err.join('') };
      expect(run.status).not.toBe(0);
      expect(run.stdout).toBe('');
      expect(run.stderr.trim().split('\n')).toHaveLength(1);
      expect(run.stderr).toMatch(pattern);
    }
  });
});
