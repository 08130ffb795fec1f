// Benchmark of the plan report (`npm run bench -- report`): a 5,000-node plan
// with 3 gateways on a 30 km synthetic DEM (ours, 30 m cells) and a finished
// coverage run (a synthetic margin raster), target ≤ 20 s and ≤ 300 MB peak.
//  1. the fleet from a cold link cache (the link engine's work, shown for scale;
//     a planner's fleet table has normally computed it before a report is asked);
//  2. GET /report.pdf with the fleet cached (REPORT_BENCH_ROUNDS rounds, default 2):
//     wall time, PDF size and pages, and the process's peak RSS during the report
//     (sampled every 10 ms) next to the RSS before it;
//  3. GET /export.geojson and /export.csv beside it.
//  2b. (PostgreSQL) the same report in a fresh process running the compiled server
//      (build/, no tsx) with the environment `npm start` sets (MALLOC_ARENA_MAX), then with
//      glibc's defaults: each one's baseline RSS and its peak RSS during the report.
// REPORT_BENCH_OUT=<file> keeps the last PDF for a look.
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { createTestApp, postgresAvailable, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { RESULT_FILES, resultDir } from '../../server/db/files.ts';

const CENTRE = { lat: 44.5, lon: -110.2 };
const CELL_M = 30;
const SIZE_PX = 1000;
const NODES = 5000;

function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = Math.imul(a ^ (a >>> 15), a | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function grid(fill: (u: number, v: number) => number) {
  const data = new Float32Array(SIZE_PX * SIZE_PX);
  for (let y = 0; y < SIZE_PX; y++) for (let x = 0; x < SIZE_PX; x++) data[y * SIZE_PX + x] = fill(x / SIZE_PX, y / SIZE_PX);
  return data;
}

const mb = (bytes: number) => `${(bytes / 1024 / 1024).toFixed(0)} MB`;

/** The bench plan: a synthetic DEM layer, 3 gateways, 5,000 nodes and a finished coverage run. */
export async function makeBenchPlan(t: TestApp, dir: string): Promise<{ planId: string; auth: { authorization: string } }> {
  const dLat = CELL_M / 111_320;
  const dLon = CELL_M / (111_320 * Math.cos((CENTRE.lat * Math.PI) / 180));
  const west = CENTRE.lon - (SIZE_PX / 2) * dLon;
  const north = CENTRE.lat + (SIZE_PX / 2) * dLat;
  const geoTransform: [number, number, number, number, number, number] = [west, dLon, 0, north, 0, -dLat];
  const demPath = join(dir, 'dem.tif');
  const dem = writeGeoTiff({ widthPx: SIZE_PX, heightPx: SIZE_PX, data: grid((u, v) => 1200 + 180 * Math.sin(6.1 * u + 1.3) * Math.cos(4.3 * v) + 90 * Math.sin(17 * (u + 0.4 * v))), geoTransform, epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 256 }, overviews: [2, 4, 8] });
  writeFileSync(demPath, dem);
  const auth = { authorization: `Bearer ${t.tokens.planner}` };
  const plan = await t.app.inject({ method: 'POST', url: '/api/v1/plans', headers: auth, payload: { name: 'Report bench', propagationMethod: 'p1812' } });
  const planId = (plan.json() as { id: string }).id;
  await t.db.prisma.terrainLayer.create({
    data: { planId, kind: 'elevation', name: 'bench DEM (synthetic)', filePath: demPath, fileBytes: BigInt(dem.length), widthPx: SIZE_PX, heightPx: SIZE_PX, epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', geoTransform, west, south: north - SIZE_PX * dLat, east: west + SIZE_PX * dLon, north, resolutionM: CELL_M },
  });
  const kmLat = 1 / 111.32;
  const kmLon = 1 / (111.32 * Math.cos((CENTRE.lat * Math.PI) / 180));
  const gatewayIds: string[] = [];
  for (const [i, [dx, dy]] of [[0, 0], [8, 7], [-9, -8]].entries()) {
    const res = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/gateways`, headers: auth, payload: { name: `GW ${i + 1}`, lat: CENTRE.lat + dy * kmLat, lon: CENTRE.lon + dx * kmLon, antennaHeightAglM: 15 } });
    gatewayIds.push((res.json() as { id: string }).id);
  }
  const rand = random(7);
  const rows = [];
  for (let i = 0; i < NODES; i++) {
    rows.push({ planId, name: `Node ${String(i + 1).padStart(4, '0')}`, lat: CENTRE.lat + (rand() - 0.5) * 26 * kmLat, lon: CENTRE.lon + (rand() - 0.5) * 26 * kmLon, deviceType: 'probe', antennaDesignId: 'helical-stub', antennaHeightAglM: 1 + rand() * 3, environment: rand() < 0.15 ? ('indoor' as const) : ('outdoor' as const) });
  }
  // Awaited statements of 1,000 rows: one createMany of 5,000 rows is over PostgreSQL's bind
  // parameter limit, so Prisma split it into chunks it sent at once on one transaction's
  // connection (pg: "Calling client.query() when the client is already executing a query").
  for (let i = 0; i < rows.length; i += 1000) await t.db.prisma.node.createMany({ data: rows.slice(i, i + 1000) });
  // A finished coverage run with a synthetic margin raster (falls off with distance from the centre).
  const run = await t.db.prisma.coverageRun.create({ data: { planId, gatewayIds, params: { mode: 'fast', radiusKm: 15, sf: 9, targetHeightM: 2, targetMarginDb: 10 }, status: 'done', progress: 1, finishedAt: new Date(), resultPath: '' } });
  mkdirSync(resultDir(t.config, run.id), { recursive: true });
  writeFileSync(join(resultDir(t.config, run.id), RESULT_FILES.margin), writeGeoTiff({ widthPx: SIZE_PX, heightPx: SIZE_PX, data: grid((u, v) => 35 - 60 * Math.hypot(u - 0.5, v - 0.5) + 6 * Math.sin(20 * u)), geoTransform, epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 256 }, overviews: [2, 4] }));

  return { planId, auth };
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'earshot-bench-report-'));
  // PostgreSQL when it answers (as a team install runs): an in-memory PGlite would hold the
  // whole database in this process and blur the report's own memory figure.
  const engine = postgresAvailable ? 'postgres' : 'pglite';
  const t = await createTestApp(engine);
  console.log(`database: ${engine}`);
  try {
    const { planId, auth } = await makeBenchPlan(t, dir);
    console.log(`load average before: ${loadavg().map((v) => v.toFixed(2)).join(' ')}; link workers ${t.config.workerCount}`);
    let start = performance.now();
    const cold = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/links?limit=1`, headers: auth });
    if (cold.statusCode !== 200) throw new Error(`fleet answered ${cold.statusCode}: ${cold.body.slice(0, 200)}`);
    const counts = (cold.json() as { counts: Record<string, number> }).counts;
    console.log(`1. fleet, cold link cache (${NODES} nodes × 3 gateways, P.1812): ${((performance.now() - start) / 1000).toFixed(1)} s; counts ${JSON.stringify(counts)}`);

    const rounds = Number(process.env.REPORT_BENCH_ROUNDS ?? 2);
    for (let r = 0; r < rounds; r++) {
      global.gc?.();
      const before = process.memoryUsage().rss;
      let peak = before;
      const timer = setInterval(() => {
        peak = Math.max(peak, process.memoryUsage().rss);
      }, 10);
      start = performance.now();
      const res = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/report.pdf`, headers: auth });
      const ms = performance.now() - start;
      clearInterval(timer);
      peak = Math.max(peak, process.memoryUsage().rss);
      if (res.statusCode !== 200) throw new Error(`report answered ${res.statusCode}: ${res.body.slice(0, 200)}`);
      const pdf = res.rawPayload;
      const pages = (pdf.toString('latin1').match(/\/Type \/Page\b/g) ?? []).length;
      console.log(`2. report.pdf round ${r + 1}: ${(ms / 1000).toFixed(2)} s (target ≤ 20 s), ${(pdf.length / 1024 / 1024).toFixed(2)} MB, ${pages} pages; process RSS ${mb(before)} before, peak ${mb(peak)} during (+${mb(peak - before)}; target ≤ 300 MB peak)`);
      writeFileSync(process.env.REPORT_BENCH_OUT ?? join(dir, 'report.pdf'), pdf);
    }
    if (engine === 'postgres') {
      // The same report in a fresh process on the same database, running the compiled server
      // (build/, scripts/build-server.mjs, as `npm start` runs it: no tsx in that process). It
      // prints its baseline (Node, Prisma, the database, every server module the report uses,
      // the plan's context) and its peak RSS while making the report, side by side.
      const built = spawnSync(process.execPath, ['scripts/build-server.mjs', '--quiet'], { encoding: 'utf8' });
      if (built.status !== 0) throw new Error(`build-server failed: ${built.stderr.slice(-400)}`);
      const buildDir = join(process.cwd(), 'build');
      // The process environment `npm start` gives the server (package.json: MALLOC_ARENA_MAX), so
      // the child is measured as the server runs; then glibc's default arenas beside it, for scale.
      const startScript = (JSON.parse(readFileSync(join(process.cwd(), 'package.json'), 'utf8')) as { scripts: Record<string, string> }).scripts.start;
      const arenas = /\bMALLOC_ARENA_MAX=(\d+)/.exec(startScript)?.[1];
      const { MALLOC_ARENA_MAX: _inherited, ...inherited } = process.env;
      const variants: Array<[string, NodeJS.ProcessEnv]> = [[arenas ? `as npm start runs it, MALLOC_ARENA_MAX=${arenas}` : 'as npm start runs it', arenas ? { MALLOC_ARENA_MAX: arenas } : {}]];
      if (arenas) variants.push(["glibc's default arenas, for scale", {}]);
      for (const [label, extra] of variants) {
        const child = spawnSync(process.execPath, ['test/bench/_report-child.mjs'], {
          env: { ...inherited, ...extra, DATABASE_URL: t.config.databaseUrl, EARSHOT_DATA_DIR: t.config.dataDir, BENCH_FILES_DIR: t.config.filesDir, BENCH_PLAN_ID: planId, BENCH_BUILD_DIR: buildDir },
          encoding: 'utf8',
          timeout: 300_000,
        });
        const line = child.stdout.trim().split('\n').pop() ?? '';
        if (child.status !== 0 || !line.startsWith('{')) console.log(`2b. fresh-process report (${label}) failed: ${child.stderr.slice(-400)}`);
        else {
          const r = JSON.parse(line) as { ms: number; bytes: number; baselineRssMb: number; peakRssMb: number };
          console.log(`2b. report.pdf in a fresh compiled-JS process (${label}; warm link cache, in-thread paths): ${(r.ms / 1000).toFixed(2)} s; RSS baseline ${r.baselineRssMb.toFixed(0)} MB → peak ${r.peakRssMb.toFixed(0)} MB (report's own increment +${(r.peakRssMb - r.baselineRssMb).toFixed(0)} MB; peak/baseline ${(r.peakRssMb / r.baselineRssMb).toFixed(2)}×; target ≤ 20 s, ≤ 300 MB peak); load ${loadavg()[0].toFixed(2)}`);
        }
      }
    }
    for (const file of ['export.geojson', 'export.csv']) {
      start = performance.now();
      const res = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/${file}`, headers: auth });
      console.log(`3. ${file}: ${((performance.now() - start) / 1000).toFixed(2)} s, ${(res.rawPayload.length / 1024 / 1024).toFixed(2)} MB`);
    }
    console.log(`load average after: ${loadavg().map((v) => v.toFixed(2)).join(' ')}; process max RSS over the whole run ${mb(process.resourceUsage().maxRSS * 1024)}`);
  } finally {
    await t.close();
    rmSync(dir, { recursive: true, force: true });
  }
}
