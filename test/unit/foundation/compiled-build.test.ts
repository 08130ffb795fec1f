// npm start, the CLI and the queue workers run the compiled tree (scripts/build-server.mjs →
// build/server, the CLI from its bundle build/cli, started through scripts/launch.mjs) rather than tsx. The compiled programs
// must answer exactly as the sources do, worker threads included (they load compiled .js
// entries without the TypeScript loader).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { makeSyntheticDem } from '../coverage/synthetic-dem.ts';

const dir = mkdtempSync(join(tmpdir(), 'earshot-compiled-'));
const run = (args: string[]) => spawnSync(process.execPath, args, { encoding: 'utf8', timeout: 120_000, env: { ...process.env, EARSHOT_DATA_DIR: join(dir, 'data') } });
const fromSources = (args: string[]) => run(['--import', 'tsx', 'server/cli.ts', ...args]);
const compiled = (args: string[]) => run(['scripts/launch.mjs', 'cli', ...args]);

beforeAll(() => {
  const build = run(['scripts/build-server.mjs', '--force', '--quiet']);
  expect(build.status, build.stderr).toBe(0);
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('compiled build (build/server)', () => {
  it('holds one .js file per server module and no TypeScript', () => {
    expect(existsSync('build/server/main.js')).toBe(true);
    expect(existsSync('build/server/cli.js')).toBe(true);
    expect(existsSync('build/server/jobs/worker-main.js')).toBe(true);
    expect(existsSync('build/server/jobs/worker-boot.mjs')).toBe(true);
    expect(existsSync('build/server/cli.ts')).toBe(false);
  });

  it('holds the CLI bundle (build/cli) that the compiled CLI runs, and no TypeScript in it', () => {
    expect(existsSync('build/cli/cli.js')).toBe(true);
    // In the bundle import.meta.url names each module's twin in build/server (worker entries resolve there).
    const entry = readFileSync('build/cli/cli.js', 'utf8');
    expect(entry).toContain('new URL("../server/cli.js",import.meta.url)');
    expect(entry).not.toMatch(/from\s*"\.\.?\/[^"]*\.ts"/);
  });

  it('runs the commands without other packages from the light bundle (build/cli/light.cjs) with a V8 code cache', () => {
    const listed = JSON.parse(readFileSync('build/cli/light-commands.json', 'utf8')) as { words: string[]; stubbedModules: string[] };
    // airtime and coverage import no package outside the bundle; token issue opens the database (Prisma, PGlite).
    expect(listed.words).toEqual(expect.arrayContaining(['airtime', 'coverage']));
    expect(listed.words).not.toContain('token issue');
    expect(listed.stubbedModules).toContain('server/cli/admin.ts');
    // A vm.Script has no loader for import(): the light bundle holds none.
    expect(readFileSync('build/cli/light.cjs', 'utf8')).not.toMatch(/\bimport\(/);
    const args = ['battery', '--help'];
    const first = compiled(args);
    expect(first.status, first.stderr).toBe(0);
    // The first run of a command leaves its code cache; the next run reads it and answers the same.
    expect(existsSync('build/cli/.code-cache/battery.v8')).toBe(true);
    const second = compiled(args);
    expect(second.status, second.stderr).toBe(0);
    expect(second.stdout).toBe(first.stdout);
    expect(first.stdout).toBe(fromSources(args).stdout);
  });

  it('a compiled los run on an uncompressed tiled DEM writes the same file as the sources, byte for byte', () => {
    const size = 300;
    const dem = makeSyntheticDem(size, size, 30, 7, 1.2);
    const demPath = join(dir, 'dem-plain.tif');
    writeFileSync(demPath, writeGeoTiff({ widthPx: size, heightPx: size, data: dem.elevationM, geoTransform: [500_000, 30, 0, 4_100_000, 0, -30], epsg: 32633, noData: -9999, tiled: { tileSizePx: 64 } }));
    // Site near the middle of the DEM (UTM 33N 504 500 E, 4 095 500 N), radius reaching past the corners of the circle's box.
    const common = ['coverage', '--terrain', demPath, '--site', '37.00565,15.05058', '--height-m', '15', '--radius-km', '4', '--mode', 'los', '--json'];
    const a = compiled([...common, '--out', join(dir, 'los-a.tif')]);
    const b = fromSources([...common, '--out', join(dir, 'los-b.tif')]);
    expect(a.status, a.stderr).toBe(0);
    expect(b.status, b.stderr).toBe(0);
    const strip = (text: string) => {
      const { seconds: _seconds, out: _out, ...rest } = JSON.parse(text) as Record<string, unknown>;
      return rest;
    };
    expect(strip(a.stdout)).toEqual(strip(b.stdout));
    expect((JSON.parse(a.stdout) as { cells: number }).cells).toBeGreaterThan(10_000);
    expect(spawnSync('cmp', [join(dir, 'los-a.tif'), join(dir, 'los-b.tif')]).status).toBe(0);
  });

  it('a source newer than the build is recompiled (bundle included) before the command runs', () => {
    const before = statSync('build/cli/cli.js').mtimeMs;
    const source = 'server/cli/radio.ts';
    const now = new Date();
    utimesSync(source, now, now);
    const a = compiled(['airtime', '--sf', '7', '--bw-khz', '125', '--payload-bytes', '10', '--json']);
    expect(a.status, a.stderr).toBe(0);
    expect(statSync('build/cli/cli.js').mtimeMs).toBeGreaterThan(before);
    expect(readFileSync('build/.built-from', 'utf8')).toContain(`${source}:${statSync(source).size}:${Math.round(statSync(source).mtimeMs)}`);
  });

  it('the compiled CLI prints the same airtime document as the sources', () => {
    const args = ['airtime', '--sf', '10', '--bw-khz', '125', '--payload-bytes', '24', '--json'];
    const a = compiled(args);
    const b = fromSources(args);
    expect(a.status, a.stderr).toBe(0);
    expect(b.status, b.stderr).toBe(0);
    expect(JSON.parse(a.stdout)).toEqual(JSON.parse(b.stdout));
  });

  it('a compiled coverage run on two worker threads matches the sources cell for cell', () => {
    const common = ['coverage', '--terrain', 'terrain-samples/demo-valley.tif', '--site', '44.3258,-118.15', '--height-m', '12', '--radius-km', '2', '--mode', 'fast', '--workers', '2', '--json'];
    const a = compiled([...common, '--out', join(dir, 'a.tif')]);
    const b = fromSources([...common, '--out', join(dir, 'b.tif')]);
    expect(a.status, a.stderr).toBe(0);
    expect(b.status, b.stderr).toBe(0);
    const strip = (text: string) => {
      const { seconds: _seconds, out: _out, ...rest } = JSON.parse(text) as Record<string, unknown>;
      return rest;
    };
    expect(strip(a.stdout)).toEqual(strip(b.stdout));
    const cmp = spawnSync('cmp', [join(dir, 'a.tif'), join(dir, 'b.tif')]);
    expect(cmp.status).toBe(0);
  });

  it('a usage error exits 2 with one line on stderr, as from the sources', () => {
    const a = compiled(['airtime', '--sf', '10', '--json']);
    expect(a.status).toBe(2);
    expect(a.stderr.trim().split('\n')).toHaveLength(1);
  });
});
