// `npm run bench -- crowd`: the API under a crowd, on PGlite and on PostgreSQL side by side.
//  1. 200 concurrent connections doing warm link checks (GET .../nodes/:nodeId/links with a
//     valid bearer token), once through an app without the change-feed read memos (as before)
//     and once with them, twice each, alternating; each
//     a bounded 2 000 requests over loopback (autocannon, in this process): p50/p95/p99
//     (target p95 ≤ 1 s);
//  2. failed authentication: an unknown lookupId against a wrong secret for a known one,
//     sequential and alternating, median time of each and their ratio (target within 2×);
//  3. the throttle: 300 wrong bearer tokens from one address, 40 at a time: how many were
//     verified (401) and how many refused at once (429), and how long the burst took.
// Loopback only; every request count and duration is bounded. CROWD_ENGINES=pglite limits the run.
import { randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import autocannon from 'autocannon';
import { buildApp } from '../../server/api/app.ts';
import { memoryThrottle } from '../../server/api/auth-throttle.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { createTestApp, postgresAvailable, type Engine } from '../helpers/test-app.ts';

const CENTRE = { lat: 44.5, lon: -110.2 };
const SIZE_PX = 400;
const CELL_M = 30;

function percentile(sorted: number[], p: number): number {
  return sorted.length === 0 ? Number.NaN : sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))];
}

function syntheticDem(path: string) {
  const dLat = CELL_M / 111_320;
  const dLon = CELL_M / (111_320 * Math.cos((CENTRE.lat * Math.PI) / 180));
  const west = CENTRE.lon - (SIZE_PX / 2) * dLon;
  const north = CENTRE.lat + (SIZE_PX / 2) * dLat;
  const data = new Float32Array(SIZE_PX * SIZE_PX);
  for (let y = 0; y < SIZE_PX; y++) for (let x = 0; x < SIZE_PX; x++) data[y * SIZE_PX + x] = 900 + 120 * Math.sin(x / 37) * Math.cos(y / 29) + 30 * Math.sin(x / 7 + y / 11);
  const bytes = writeGeoTiff({ widthPx: SIZE_PX, heightPx: SIZE_PX, data, geoTransform: [west, dLon, 0, north, 0, -dLat], epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 256 } });
  writeFileSync(path, bytes);
  return { bytes: bytes.length, west, north, east: west + SIZE_PX * dLon, south: north - SIZE_PX * dLat, dLat, dLon };
}

async function crowd(url: string, token: string, connections: number, amount: number): Promise<{ latencies: number[]; statuses: Record<number, number>; seconds: number }> {
  const latencies: number[] = [];
  const statuses: Record<number, number> = {};
  const started = performance.now();
  const instance = autocannon({ url, connections, amount, timeout: 30, headers: { authorization: `Bearer ${token}` } });
  instance.on('response', (_client: unknown, statusCode: number, _bytes: number, responseTimeMs: number) => {
    latencies.push(responseTimeMs);
    statuses[statusCode] = (statuses[statusCode] ?? 0) + 1;
  });
  await instance;
  latencies.sort((a, b) => a - b);
  return { latencies, statuses, seconds: (performance.now() - started) / 1000 };
}

async function timed(fn: () => Promise<unknown>): Promise<number> {
  const start = performance.now();
  await fn();
  return performance.now() - start;
}

async function runEngine(engine: Engine, demPath: string, dem: ReturnType<typeof syntheticDem>): Promise<void> {
  const t = await createTestApp(engine);
  try {
    const auth = { authorization: `Bearer ${t.tokens.planner}` };
    const plan = await t.app.inject({ method: 'POST', url: '/api/v1/plans', headers: auth, payload: { name: 'Crowd bench', propagationMethod: 'p1812' } });
    const planId = (plan.json() as { id: string }).id;
    await t.db.prisma.terrainLayer.create({
      data: { planId, kind: 'elevation', name: 'bench', filePath: demPath, fileBytes: BigInt(dem.bytes), widthPx: SIZE_PX, heightPx: SIZE_PX, epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', geoTransform: [dem.west, dem.dLon, 0, dem.north, 0, -dem.dLat], west: dem.west, south: dem.south, east: dem.east, north: dem.north, resolutionM: CELL_M },
    });
    await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/gateways`, headers: auth, payload: { name: 'GW', lat: CENTRE.lat, lon: CENTRE.lon, antennaHeightAglM: 15 } });
    const node = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/nodes`, headers: auth, payload: { name: 'N', lat: CENTRE.lat - 0.03, lon: CENTRE.lon - 0.03, deviceType: 'probe', antennaHeightAglM: 2 } });
    const nodeId = (node.json() as { id: string }).id;
    await t.app.listen({ port: 0, host: '127.0.0.1' });
    const port = (t.app.server.address() as AddressInfo).port;
    const linkUrl = `http://127.0.0.1:${port}/api/v1/plans/${planId}/nodes/${nodeId}/links`;
    const warm = await fetch(linkUrl, { headers: auth });
    if (warm.status !== 200) throw new Error(`warm-up link check answered ${warm.status}`);
    await t.app.linkEngine.workersReady();

    // 1. The crowd, side by side: the same database through an app whose Database has no change
    //    feed (every warm request reads plan, calibration and fingerprint, as before the read
    //    memos) and through the normal app (those reads once per change-feed generation).
    const unmemoised = await buildApp({ db: { ...t.db, changes: undefined }, config: t.config, logger: false });
    await unmemoised.listen({ port: 0, host: '127.0.0.1' });
    try {
      const plainUrl = `http://127.0.0.1:${(unmemoised.server.address() as AddressInfo).port}/api/v1/plans/${planId}/nodes/${nodeId}/links`;
      if ((await fetch(plainUrl, { headers: auth })).status !== 200) throw new Error('warm-up of the app without memos failed');
      for (const [label, target] of [
        ['without read memos (as before)', plainUrl],
        ['with read memos', linkUrl],
        ['without read memos (again)', plainUrl],
        ['with read memos (again)', linkUrl],
      ] as const) {
        const single = await crowd(target, t.tokens.planner, 1, 50);
        const many = await crowd(target, t.tokens.planner, 200, 2000);
        console.log(
          `[${engine}] warm link check ${label}: 1 connection × 50 p50 ${percentile(single.latencies, 50).toFixed(0)} ms p95 ${percentile(single.latencies, 95).toFixed(0)} ms; 200 concurrent, 2000 requests in ${many.seconds.toFixed(1)} s: p50 ${percentile(many.latencies, 50).toFixed(0)} ms  p95 ${percentile(many.latencies, 95).toFixed(0)} ms  p99 ${percentile(many.latencies, 99).toFixed(0)} ms  statuses ${JSON.stringify(many.statuses)}  load ${loadavg()[0].toFixed(2)}  (target p95 ≤ 1000 ms)`,
        );
      }
    } finally {
      await unmemoised.close();
    }

    // 2. Failure timing (a separate app with a throttle high enough not to interfere).
    const open = await buildApp({ db: t.db, config: t.config, logger: false, authThrottle: memoryThrottle({ maxFailures: 1_000_000, windowMs: 60_000 }) });
    await open.listen({ port: 0, host: '127.0.0.1' });
    try {
      const openPort = (open.server.address() as AddressInfo).port;
      const known = t.tokens.viewer.slice(0, 'esk_'.length + 16);
      const unknownMs: number[] = [];
      const wrongMs: number[] = [];
      const probe = (token: string) => timed(() => fetch(`http://127.0.0.1:${openPort}/api/v1/plans`, { headers: { authorization: `Bearer ${token}` } }).then((r) => r.arrayBuffer()));
      for (let i = 0; i < 20; i++) {
        unknownMs.push(await probe(`esk_${randomBytes(8).toString('hex')}_${randomBytes(32).toString('base64url')}`));
        wrongMs.push(await probe(`${known}_${randomBytes(32).toString('base64url')}`));
      }
      unknownMs.sort((a, b) => a - b);
      wrongMs.sort((a, b) => a - b);
      const u = percentile(unknownMs, 50);
      const w = percentile(wrongMs, 50);
      console.log(`[${engine}] failed authentication, 20 each, alternating: unknown lookupId median ${u.toFixed(1)} ms, wrong secret for a known lookupId median ${w.toFixed(1)} ms, ratio ${(Math.max(u, w) / Math.min(u, w)).toFixed(2)} (target ≤ 2)`);
    } finally {
      await open.close();
    }

    // 3. The throttle, with its defaults (30 failures per address per minute).
    const guarded = await buildApp({ db: t.db, config: t.config, logger: false });
    await guarded.listen({ port: 0, host: '127.0.0.1' });
    try {
      const guardedPort = (guarded.server.address() as AddressInfo).port;
      const started = performance.now();
      const statuses: Record<number, number> = {};
      for (let batch = 0; batch < 300 / 40; batch++) {
        const answers = await Promise.all(
          Array.from({ length: Math.min(40, 300 - batch * 40) }, () => fetch(`http://127.0.0.1:${guardedPort}/api/v1/plans`, { headers: { authorization: `Bearer esk_${randomBytes(8).toString('hex')}_${randomBytes(32).toString('base64url')}` } }).then(async (r) => (await r.arrayBuffer(), r.status))),
        );
        for (const status of answers) statuses[status] = (statuses[status] ?? 0) + 1;
      }
      console.log(`[${engine}] throttle: 300 wrong bearer tokens, 40 at a time, from one address in ${((performance.now() - started) / 1000).toFixed(1)} s: ${JSON.stringify(statuses)} (401 = verified and refused, 429 = refused without verification)`);
    } finally {
      await guarded.close();
    }
  } finally {
    await t.close();
  }
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'earshot-bench-crowd-'));
  try {
    const demPath = join(dir, 'dem.tif');
    const dem = syntheticDem(demPath);
    console.log(`load average at start: ${loadavg().map((l) => l.toFixed(2)).join(' ')}`);
    const engines: Engine[] = (process.env.CROWD_ENGINES ?? 'pglite,postgres').split(',').filter((e): e is Engine => e === 'pglite' || e === 'postgres');
    for (const engine of engines) {
      if (engine === 'postgres' && !postgresAvailable) {
        console.log('[postgres] skipped: no PostgreSQL at 127.0.0.1:5432');
        continue;
      }
      await runEngine(engine, demPath, dem);
    }
    console.log(`load average at end: ${loadavg().map((l) => l.toFixed(2)).join(' ')}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
