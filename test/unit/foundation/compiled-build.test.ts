// npm start, the CLI and the queue workers run the compiled tree (scripts/build-server.mjs →
// build/server, started through scripts/launch.mjs) rather than tsx. The compiled programs
// must answer exactly as the sources do, worker threads included (they load compiled .js
// entries without the TypeScript loader).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

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
