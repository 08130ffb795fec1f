// The `predict-path` command: input validation (one line naming the field) and the output contract.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { propagationCommands } from '../../../server/cli/propagation.ts';
import type { CliContext } from '../../../server/cli/framework.ts';
import type { PathPrediction } from '../../../server/propagation/path-prediction.ts';
import { extractProfile } from '../../../server/terrain/profile.ts';
import { openTerrainStore } from '../../../server/terrain/store.ts';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
const command = propagationCommands.find((c) => c.words === 'predict-path');
if (!command) throw new Error('predict-path is not registered');

function context(stdin: string): CliContext {
  return { readStdin: async () => stdin, progress: () => {} };
}

function request(overrides: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    method: 'p1812',
    frequencyMhz: 868,
    timePercent: 50,
    tx: { lat: 45, lon: 7, heightAglM: 15 },
    rx: { lat: 45.05, lon: 7.01, heightAglM: 1.5 },
    profile: [
      { distanceKm: 0, groundM: 300 },
      { distanceKm: 1.5, groundM: 330, clutterM: 12, zone: 'inland' },
      { distanceKm: 3, groundM: 310 },
      { distanceKm: 5.8, groundM: 290 },
    ],
    ...overrides,
  };
}

async function run(body: unknown): Promise<PathPrediction> {
  return (await command!.run({ input: '-' }, context(JSON.stringify(body)))) as PathPrediction;
}

async function failure(body: unknown): Promise<string> {
  try {
    await run(body);
  } catch (error) {
    return (error as Error).message;
  }
  throw new Error('expected the command to fail');
}

describe('predict-path input validation', () => {
  it('frequency outside 30–6000 MHz for p1812 names frequencyMhz', async () => {
    expect(await failure(request({ frequencyMhz: 20 }))).toMatch(/^frequencyMhz: must be within 30–6000 MHz/);
    expect(await failure(request({ frequencyMhz: 6500 }))).toMatch(/^frequencyMhz:/);
  });
  it('time percent outside 1–50 names timePercent', async () => {
    expect(await failure(request({ timePercent: 0.5 }))).toMatch(/^timePercent: must be within 1–50 %/);
    expect(await failure(request({ timePercent: 60 }))).toMatch(/^timePercent:/);
  });
  it('non-increasing distances name the point', async () => {
    const body = request();
    (body.profile as { distanceKm: number }[])[2].distanceKm = 1.5;
    expect(await failure(body)).toMatch(/^profile\[2\]\.distanceKm: must be greater than/);
  });
  it('fewer than 3 points', async () => {
    expect(await failure(request({ profile: [{ distanceKm: 0, groundM: 1 }, { distanceKm: 1, groundM: 1 }] }))).toMatch(
      /^profile: needs at least 3 points/,
    );
  });
  it('null and NoData heights name the point', async () => {
    const withNull = request();
    (withNull.profile as { groundM: unknown }[])[1].groundM = null;
    expect(await failure(withNull)).toMatch(/^profile\[1\]\.groundM:/);
    const withNoData = request();
    (withNoData.profile as { groundM: unknown }[])[3].groundM = -32768;
    expect(await failure(withNoData)).toMatch(/^profile\[3\]\.groundM: is a NoData value/);
  });
  it('unknown zone, method and polarisation are refused', async () => {
    const body = request();
    (body.profile as { zone: unknown }[])[0].zone = 'forest';
    expect(await failure(body)).toMatch(/^profile\[0\]\.zone:/);
    expect(await failure(request({ method: 'okumura' }))).toMatch(/^method: must be one of/);
    expect(await failure(request({ polarization: 'circular' }))).toMatch(/^polarization:/);
  });
  it('zones may be given as the SG3 codes 1/3/4 and mean the same as their names', async () => {
    const named = request();
    const coded = request();
    const zones = ['sea', 'coastal', 'inland', 'inland'] as const;
    const codes = [1, 3, 4, 4];
    (named.profile as { zone: string }[]).forEach((p, i) => (p.zone = zones[i]));
    (coded.profile as { zone: number }[]).forEach((p, i) => (p.zone = codes[i]));
    expect((await run(coded)).basicLossDb).toBe((await run(named)).basicLossDb);
    (coded.profile as { zone: number }[])[1].zone = 2;
    expect(await failure(coded)).toMatch(/^profile\[1\]\.zone:/);
  });
  it('bad JSON and unreadable files are one-line --input errors', async () => {
    await expect(command!.run({ input: '-' }, context('{ nope'))).rejects.toThrow(/^--input: not valid JSON/);
    await expect(command!.run({ input: '/nonexistent/path.json' }, context(''))).rejects.toThrow(/^--input: cannot read/);
  });
});

describe('predict-path output contract', () => {
  it('p1812 maps Lbfs, Ld50, Ldp, Lbs, Lba, Lb onto the contract fields', async () => {
    const out = await run(request());
    expect(out.method).toBe('p1812');
    expect(out.basicLossDb).toBe(out.p1812?.lbDb);
    expect(out.terms.freeSpaceDb).toBe(out.p1812?.lbfsDb);
    expect(out.terms.diffractionMedianDb).toBe(out.p1812?.ld50Db);
    expect(out.terms.diffractionDb).toBe(out.p1812?.ldpDb);
    expect(out.terms.troposcatterDb).toBe(out.p1812?.lbsDb);
    expect(out.terms.ductingDb).toBe(out.p1812?.lbaDb);
    expect(typeof out.lineOfSight).toBe('boolean');
    expect(Number.isFinite(out.fresnelClearanceRatio)).toBe(true);
    expect(Array.isArray(out.warnings)).toBe(true);
    // Eq. (70) for 1 kW e.r.p. (the default)
    expect(out.fieldStrengthDbuvm).toBeCloseTo(199.36 + 20 * Math.log10(0.868) - out.basicLossDb, 9);
  });
  it('each fast method answers, never below free space, and free space warns when the ray is blocked', async () => {
    const blocked = request({
      profile: [
        { distanceKm: 0, groundM: 300 },
        { distanceKm: 2, groundM: 400 },
        { distanceKm: 4, groundM: 300 },
      ],
    });
    const fs = await run({ ...blocked, method: 'free-space' });
    for (const method of ['bullington', 'knife-edge', 'deygout'] as const) {
      const out = await run({ ...blocked, method });
      expect(out.method).toBe(method);
      expect(out.basicLossDb).toBeGreaterThan(fs.basicLossDb + 10);
      expect(out.lineOfSight).toBe(false);
    }
    expect(fs.warnings.join(' ')).toMatch(/blocked/);
    expect(fs.terms.diffractionDb).toBeNull();
  });
  it('a failing run exits non-zero with exactly one line on stderr and nothing on stdout', () => {
    const proc = spawnSync(process.execPath, ['--import', 'tsx', 'server/cli.ts', 'predict-path', '--input', '-', '--json'], {
      cwd: repoRoot,
      input: JSON.stringify(request({ timePercent: 75 })),
      encoding: 'utf8',
    });
    expect(proc.status).not.toBe(0);
    expect(proc.stdout).toBe('');
    expect(proc.stderr.trim().split('\n')).toHaveLength(1);
    expect(proc.stderr).toMatch(/timePercent/);
  });
});

describe('predict-path with "terrain" (profile extracted by the terrain engine)', () => {
  // terrain-samples/elev.tif: a small real DEM (SRTM-derived, see terrain-samples/README.md).
  const dem = path.join(repoRoot, 'terrain-samples/elev.tif');
  const ends = { tx: { lat: 49.8, lon: 6.0, heightAglM: 20 }, rx: { lat: 49.6, lon: 6.3, heightAglM: 1.5 } };
  it('gives the same answer as the extracted profile passed as points', async () => {
    const viaTerrain = await run({ ...request(), ...ends, profile: undefined, terrain: [dem] });
    const store = await openTerrainStore([{ path: dem }]);
    const extracted = await extractProfile(store, ends.tx, ends.rx);
    await store.close();
    const points = Array.from(extracted.distanceM, (m, i) => ({ distanceKm: m / 1000, groundM: extracted.groundM[i] }));
    const viaPoints = await run({ ...request(), ...ends, profile: points });
    expect(viaTerrain.distanceKm).toBeCloseTo(extracted.lengthM / 1000, 9);
    expect(viaTerrain.basicLossDb).toBeCloseTo(viaPoints.basicLossDb, 9);
    expect(viaTerrain.warnings.join(' ')).toMatch(/extracted from terrain/);
  });
  it('a path leaving the raster is refused, naming terrain', async () => {
    expect(await failure({ ...request(), ...ends, rx: { lat: 49.0, lon: 6.3, heightAglM: 1.5 }, profile: undefined, terrain: [dem] })).toMatch(
      /^terrain: \d+ of \d+ profile points have no elevation data/,
    );
    expect(await failure({ ...request(), ...ends, profile: undefined, terrain: ['/nonexistent.tif'] })).toMatch(/^terrain:/);
  });
});

describe('predict-path over flat ground with a land-cover layer (ITU-R P.1812-8 Table 2 clutter heights)', () => {
  // 3 km due north over flat 100 m ground at 915 MHz, gateway 15 m (tx), node 1.5 m (rx).
  // With P.1812-8 Table 2 open/rural and water/sea carry R = 0 m, so a layer of either must
  // not add a clutter wall; suburban carries R = 10 m, well above a 1.5 m node.
  const dir = mkdtempSync(path.join(tmpdir(), 'earshot-landcover-'));
  const west = 6.99;
  const north = 45.04;
  const cell = 0.0005;
  const widthPx = 40;
  const heightPx = 100;
  const write = (name: string, value: number) => {
    const file = path.join(dir, name);
    writeFileSync(file, writeGeoTiff({ widthPx, heightPx, data: new Float32Array(widthPx * heightPx).fill(value), geoTransform: [west, cell, 0, north, 0, -cell], epsg: 4326 }));
    return file;
  };
  const dem = write('flat.tif', 100);
  // earshot's class codes: 1 water, 2 open/rural, 3 suburban.
  const water = write('water.tif', 1);
  const open = write('open.tif', 2);
  const suburban = write('suburban.tif', 3);
  const ends = { tx: { lat: 45.027, lon: 7.0, heightAglM: 15 }, rx: { lat: 45.027 - 3 / 111.13, lon: 7.0, heightAglM: 1.5 } };
  const body = (layers: unknown[]) => ({ ...request({ frequencyMhz: 915 }), ...ends, profile: undefined, terrain: layers });

  it('open land and water within 0.5 dB of no layer; suburban at least 3 dB more', async () => {
    const bare = await run(body([dem]));
    const withOpen = await run(body([dem, { path: open, kind: 'clutter' }]));
    const withWater = await run(body([dem, { path: water, kind: 'clutter' }]));
    const withSuburban = await run(body([dem, { path: suburban, kind: 'clutter' }]));
    expect(bare.distanceKm).toBeCloseTo(3, 1);
    expect(Math.abs(withOpen.basicLossDb - bare.basicLossDb)).toBeLessThanOrEqual(0.5);
    expect(Math.abs(withWater.basicLossDb - bare.basicLossDb)).toBeLessThanOrEqual(0.5);
    expect(withSuburban.basicLossDb - bare.basicLossDb).toBeGreaterThanOrEqual(3);
  });
});
