// Benchmarks of the links room (`npm run bench -- links`):
//  1. one link check through the API (GET .../nodes/:nodeId/links, in-process
//     inject) for a 15 km path on 30 m terrain with P.1812, warm cache:
//     p50/p95/p99 (target p95 < 20 ms); the installer's /check view beside it;
//  2. the full fleet table, 500 nodes × 5 gateways, from a cold cache
//     (target < 10 s on 2 cores): in-thread and on the worker-thread pool side
//     by side (LINKS_BENCH_ROUNDS rounds, default 2), then warm.
// Terrain: a synthetic DEM (ridges and valleys of our own making, 30 m cells).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { createTestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { buildApp } from '../../server/api/app.ts';

const CENTRE = { lat: 44.5, lon: -110.2 };
const CELL_M = 30;
const SIZE_PX = 1000; // 30 km × 30 km

function syntheticDem(path: string) {
  const dLat = CELL_M / 111_320;
  const dLon = CELL_M / (111_320 * Math.cos((CENTRE.lat * Math.PI) / 180));
  const west = CENTRE.lon - (SIZE_PX / 2) * dLon;
  const north = CENTRE.lat + (SIZE_PX / 2) * dLat;
  const data = new Float32Array(SIZE_PX * SIZE_PX);
  for (let y = 0; y < SIZE_PX; y++) {
    for (let x = 0; x < SIZE_PX; x++) {
      // Rolling valley floor, a few ridges across it, and small bumps (synthetic).
      const u = x / SIZE_PX;
      const v = y / SIZE_PX;
      data[y * SIZE_PX + x] = 1200 + 180 * Math.sin(6.1 * u + 1.3) * Math.cos(4.3 * v) + 90 * Math.sin(17 * (u + 0.4 * v)) + 25 * Math.sin(53 * u) * Math.sin(41 * v);
    }
  }
  const bytes = writeGeoTiff({ widthPx: SIZE_PX, heightPx: SIZE_PX, data, geoTransform: [west, dLon, 0, north, 0, -dLat], epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 256 } });
  writeFileSync(path, bytes);
  return { bytes: bytes.length, west, north, east: west + SIZE_PX * dLon, south: north - SIZE_PX * dLat, dLat, dLon };
}

function percentile(sorted: number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))];
}

/** Deterministic pseudo-random numbers (mulberry32). */
function random(seed: number): () => number {
  let a = seed;
  return () => {
    a = (a + 0x6d2b79f5) | 0;
    let t = Math.imul(a ^ (a >>> 15), 1 | a);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'earshot-bench-links-'));
  const demPath = join(dir, 'bench-dem.tif');
  const dem = syntheticDem(demPath);
  const t = await createTestApp('pglite');
  try {
    const auth = { authorization: `Bearer ${t.tokens.planner}` };
    const plan = await t.app.inject({ method: 'POST', url: '/api/v1/plans', headers: auth, payload: { name: 'Bench', propagationMethod: 'p1812' } });
    const planId = (plan.json() as { id: string }).id;
    await t.db.prisma.terrainLayer.create({
      data: { planId, kind: 'elevation', name: 'bench', filePath: demPath, fileBytes: BigInt(dem.bytes), widthPx: SIZE_PX, heightPx: SIZE_PX, epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', geoTransform: [dem.west, dem.dLon, 0, dem.north, 0, -dem.dLat], west: dem.west, south: dem.south, east: dem.east, north: dem.north, resolutionM: CELL_M },
    });
    // 1. A 15 km path: gateway at the centre, node 15 km to the south-west.
    const kmLat = 1 / 111.32;
    const kmLon = 1 / (111.32 * Math.cos((CENTRE.lat * Math.PI) / 180));
    const gatewayAt = (dxKm: number, dyKm: number) => ({ lat: CENTRE.lat + dyKm * kmLat, lon: CENTRE.lon + dxKm * kmLon });
    const gw0 = gatewayAt(0, 0);
    const gatewayIds: string[] = [];
    for (const [i, offset] of [[0, 0], [9, 8], [-10, 9], [10, -9], [-9, -10]].entries()) {
      const p = gatewayAt(offset[0], offset[1]);
      const res = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/gateways`, headers: auth, payload: { name: `GW ${i + 1}`, lat: p.lat, lon: p.lon, antennaHeightAglM: 15 } });
      gatewayIds.push((res.json() as { id: string }).id);
    }
    const d = 15 / Math.SQRT2;
    const nodeRes = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/nodes`, headers: auth, payload: { name: 'Bench node', lat: gw0.lat - d * kmLat, lon: gw0.lon - d * kmLon, deviceType: 'probe', antennaHeightAglM: 2 } });
    const nodeId = (nodeRes.json() as { id: string }).id;
    const linkUrl = `/api/v1/plans/${planId}/nodes/${nodeId}/links`;
    const first = await t.app.inject({ method: 'GET', url: linkUrl, headers: auth });
    const firstBody = first.json() as { links: Array<{ gatewayId: string; distanceM: number }> };
    const the15km = firstBody.links.find((l) => l.gatewayId === gatewayIds[0]);
    // The first plan a process touches starts the link worker threads (for cold fleets);
    // loading them takes both cores for a second or more. Steady state is measured after.
    const startupBegin = performance.now();
    await t.app.linkEngine.workersReady();
    console.log(`link worker threads (${t.app.linkEngine.workerCount}) ready ${(performance.now() - startupBegin).toFixed(0)} ms after the first request (start-up, not counted below)`);
    const timings: number[] = [];
    for (let i = 0; i < 300; i++) {
      const start = performance.now();
      const res = await t.app.inject({ method: 'GET', url: linkUrl, headers: auth });
      timings.push(performance.now() - start);
      if (res.statusCode !== 200) throw new Error(`link check answered ${res.statusCode}`);
    }
    timings.sort((a, b) => a - b);
    const baseline: number[] = [];
    for (let i = 0; i < 100; i++) {
      const start = performance.now();
      await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}`, headers: auth });
      baseline.push(performance.now() - start);
    }
    baseline.sort((a, b) => a - b);
    console.log(`baseline GET /plans/:planId (auth + one plan read, same run): p50 ${percentile(baseline, 50).toFixed(2)} ms  p95 ${percentile(baseline, 95).toFixed(2)} ms`);
    console.log(`link check (GET .../nodes/:nodeId/links, P.1812, ${((the15km?.distanceM ?? 0) / 1000).toFixed(1)} km path to GW 1 + 4 more gateways, 30 m terrain, warm cache, 300 requests):`);
    console.log(`  p50 ${percentile(timings, 50).toFixed(2)} ms  p95 ${percentile(timings, 95).toFixed(2)} ms  p99 ${percentile(timings, 99).toFixed(2)} ms  (target p95 < 20 ms)`);
    const checkTimings: number[] = [];
    for (let i = 0; i < 20; i++) {
      const start = performance.now();
      await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/nodes/${nodeId}/check`, headers: auth });
      checkTimings.push(performance.now() - start);
    }
    checkTimings.sort((a, b) => a - b);
    console.log(`installer check view (GET .../check: profile, Fresnel, recommendation over the catalog), 20 requests: p50 ${percentile(checkTimings, 50).toFixed(1)} ms  p95 ${percentile(checkTimings, 95).toFixed(1)} ms`);

    if (process.env.LINKS_BENCH_SKIP_FLEET === '1') return;
    // 2. Fleet: 500 nodes spread over the DEM (seeded), 5 gateways, cold cache.
    const rand = random(42);
    const rows = [];
    for (let i = 0; i < 499; i++) {
      rows.push({ planId, name: `N${i}`, lat: CENTRE.lat + (rand() - 0.5) * 26 * kmLat, lon: CENTRE.lon + (rand() - 0.5) * 26 * kmLon, deviceType: 'probe', antennaDesignId: 'helical-stub', antennaHeightAglM: 1 + rand() * 4, environment: rand() < 0.1 ? ('indoor' as const) : ('outdoor' as const) });
    }
    await t.db.prisma.node.createMany({ data: rows });
    // Cold cache, side by side in one run: the fleet paths in-thread (EARSHOT_WORKERS=1,
    // the old behaviour) and spread over the worker-thread pool (every core by default).
    // Two apps over the same database; each cold run starts from an empty Link table.
    const poolWorkers = t.config.workerCount;
    const inThreadApp = await buildApp({ db: t.db, config: { ...t.config, workerCount: 1 }, logger: false });
    const poolApp = await buildApp({ db: t.db, config: { ...t.config, workerCount: Math.max(2, poolWorkers) }, logger: false });
    type FleetBody = { items: Array<{ nodeId: string; bestMarginDb: number | null; status: string }>; total: number; counts: Record<string, number>; cache: { computed: number; cached: number } };
    const fleetUrl = `/api/v1/plans/${planId}/links?limit=1000`;
    const coldRun = async (app: typeof inThreadApp) => {
      await t.db.prisma.link.deleteMany({ where: { planId } });
      const start = performance.now();
      const res = await app.inject({ method: 'GET', url: fleetUrl, headers: auth });
      const ms = performance.now() - start;
      if (res.statusCode !== 200) throw new Error(`fleet table answered ${res.statusCode}`);
      return { ms, body: res.json() as FleetBody };
    };
    try {
      // Each app opens the plan once first, as a running server has (its link pool starts
      // its workers with the first plan context; they are loaded by the pool's first turn).
      for (const app of [inThreadApp, poolApp]) await app.inject({ method: 'GET', url: linkUrl, headers: auth });
      const rounds = Number(process.env.LINKS_BENCH_ROUNDS ?? 2);
      const single: number[] = [];
      const pooled: number[] = [];
      let maxDiffDb = 0;
      let sameStatus = true;
      let last: FleetBody | null = null;
      for (let round = 0; round < rounds; round++) {
        const a = await coldRun(inThreadApp);
        const b = await coldRun(poolApp);
        single.push(a.ms);
        pooled.push(b.ms);
        const byNode = new Map(a.body.items.map((item) => [item.nodeId, item]));
        for (const item of b.body.items) {
          const other = byNode.get(item.nodeId);
          if (!other || other.status !== item.status) sameStatus = false;
          if (other && item.bestMarginDb !== null && other.bestMarginDb !== null) maxDiffDb = Math.max(maxDiffDb, Math.abs(item.bestMarginDb - other.bestMarginDb));
        }
        console.log(`  round ${round + 1}: in-thread ${(a.ms / 1000).toFixed(2)} s, pool (${Math.max(2, poolWorkers)} workers) ${(b.ms / 1000).toFixed(2)} s  (${b.body.cache.computed} links computed)`);
        last = b.body;
      }
      const warmStart = performance.now();
      const warm = await t.app.inject({ method: 'GET', url: fleetUrl, headers: auth });
      const warmMs = performance.now() - warmStart;
      const warmBody = warm.json() as FleetBody;
      const best = (list: number[]) => Math.min(...list);
      console.log(`fleet table 500 nodes × 5 gateways (GET /plans/:planId/links), P.1812 on 30 m terrain, cold cache (target < 10 s on 2 cores):`);
      console.log(`  in-thread best ${(best(single) / 1000).toFixed(2)} s  pool best ${(best(pooled) / 1000).toFixed(2)} s  ratio in-thread/pool ${(best(single) / best(pooled)).toFixed(2)} (best of ${rounds}; mean ratio ${(single.reduce((x, y) => x + y, 0) / pooled.reduce((x, y) => x + y, 0)).toFixed(2)})`);
      console.log(`  same numbers: status equal for every node ${sameStatus ? 'yes' : 'NO'}, max |Δ best margin| ${maxDiffDb.toFixed(6)} dB`);
      console.log(`  warm ${(warmMs / 1000).toFixed(2)} s (${warmBody.cache.cached} cached)  counts ${JSON.stringify(last?.counts ?? {})}`);
    } finally {
      await inThreadApp.close();
      await poolApp.close();
    }
  } finally {
    await t.close();
    rmSync(dir, { recursive: true, force: true });
  }
}
