// `npm run bench -- upload`: server memory while a 20 000 × 20 000 DEM is uploaded (issue 17:
// target ≤ 300 MB above idle, done when peak RSS ≤ 1.5 GB, goal ≤ 500 MB).
// Each file is uploaded in a fresh child process (the server as `npm start` runs it: startServer,
// embedded PGlite in a temporary data folder, listening on loopback) so the figures are that server's own: idle RSS after start-up, then the peak RSS
// (Linux VmHWM, reset to the current RSS through /proc/self/clear_refs just before the upload)
// during (1) the upload (stream to disk, TIFF structure walk, block table, sampled decode, row),
// and (2) what the map asks next: views of 6 × 4 hillshade tiles fetched at once, at zooms 8–13 over the
// layer's centre (the peak of the worst view is shown).
// Files: the GDAL default layout (`gdal_create`: deflate, one row per strip, 1.4 MB for a
// constant DEM, like the review's 1.7 MB file), and our writer's hills in one-row strips, in
// 256 px tiles, and in 256 px tiles with six overviews (all deflate). Loopback only; the child's upload client streams from disk.
// BENCH_UPLOAD_FILES=gdal-strips,strips,tiled,cog and BENCH_UPLOAD_ENGINES=pglite limit the run
// (PostgreSQL: EARSHOT_TEST_DATABASE_URL, default 127.0.0.1:5432, when it answers).
import { execFileSync, spawnSync } from 'node:child_process';
import { createReadStream, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { request as httpRequest } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeGeoTiffFile } from '../../server/terrain/geotiff-writer.ts';
import { adminQuery, postgresAdminUrl, postgresAvailable, withDatabase } from '../helpers/test-app.ts';

const here = fileURLToPath(import.meta.url);
const SIZE = 20000;
// UTM 32N, 10 m cells: 200 km square west of the zone's central meridian.
const GT: [number, number, number, number, number, number] = [300000, 10, 0, 5600000, 0, -10];

function hills(x0: number, y0: number, w: number, h: number, scale: number): Int16Array {
  const out = new Int16Array(w * h);
  const col = new Float64Array(w);
  for (let c = 0; c < w; c++) col[c] = 150 * Math.sin(((x0 + c) * scale) / 97);
  for (let r = 0; r < h; r++) {
    const rowTerm = 400 + 120 * Math.cos(((y0 + r) * scale) / 131);
    for (let c = 0; c < w; c++) out[r * w + c] = Math.round(rowTerm + col[c]);
  }
  return out;
}

interface Case {
  name: string;
  path: string;
  make(): void;
}

function cases(dir: string): Case[] {
  const gdal = join(dir, 'gdal-strips.tif');
  const tiled = join(dir, 'tiled.tif');
  const cog = join(dir, 'cog.tif');
  const strips = join(dir, 'strips.tif');
  return [
    {
      name: 'gdal-strips',
      path: gdal,
      make: () =>
        execFileSync('gdal_create', ['-q', '-of', 'GTiff', '-outsize', String(SIZE), String(SIZE), '-bands', '1', '-ot', 'Int16', '-burn', '250', '-a_srs', 'EPSG:32632', '-a_ullr', String(GT[0]), String(GT[3]), String(GT[0] + SIZE * GT[1]), String(GT[3] + SIZE * GT[5]), '-a_nodata', '-32768', '-co', 'COMPRESS=DEFLATE', gdal]),
    },
    {
      name: 'strips',
      path: strips,
      make: () => writeGeoTiffFile(strips, { widthPx: SIZE, heightPx: SIZE, sampleType: 'int16', geoTransform: GT, epsg: 32632, noData: -32768, rowsPerStrip: 1, compression: 'deflate', readBlock: (_l, x0, y0, w, h) => hills(x0, y0, w, h, 1) }),
    },
    {
      name: 'tiled',
      path: tiled,
      make: () => writeGeoTiffFile(tiled, { widthPx: SIZE, heightPx: SIZE, sampleType: 'int16', geoTransform: GT, epsg: 32632, noData: -32768, tiled: { tileSizePx: 256 }, compression: 'deflate', readBlock: (_l, x0, y0, w, h) => hills(x0, y0, w, h, 1) }),
    },
    {
      name: 'cog',
      path: cog,
      make: () => {
        const factors = [2, 4, 8, 16, 32, 64];
        writeGeoTiffFile(cog, { widthPx: SIZE, heightPx: SIZE, sampleType: 'int16', geoTransform: GT, epsg: 32632, noData: -32768, tiled: { tileSizePx: 256 }, compression: 'deflate', overviewFactors: factors, readBlock: (level, x0, y0, w, h) => hills(x0, y0, w, h, level === 0 ? 1 : factors[level - 1]) });
      },
    },
  ];
}

interface ChildResult {
  status: number;
  idleMb: number;
  uploadPeakMb: number;
  uploadSeconds: number;
  tilesPeakMb: number;
  tilesPeakZoom: number;
  tileStatuses: Record<string, number>;
  layer: { widthPx: number; heightPx: number; resolutionM: number } | null;
}

export async function run(): Promise<void> {
  const dir = join(tmpdir(), `earshot-upload-bench-${process.pid}`);
  mkdirSync(dir, { recursive: true });
  const only = (process.env.BENCH_UPLOAD_FILES ?? '').split(',').filter(Boolean);
  const engines = postgresAvailable && process.env.BENCH_UPLOAD_ENGINES !== 'pglite' ? ['pglite', 'postgres'] : ['pglite'];
  try {
    console.log(`20 000 × 20 000 Int16 DEM uploads, one fresh server process each (node ${process.version}); RSS = VmRSS/VmHWM, MB = 10^6 bytes`);
    console.log('| file | on disk (MB) | database | status | idle RSS | peak RSS, upload | above idle | upload (s) | peak RSS, map views of 24 tiles z8–13 (zoom of the peak) | tiles |');
    console.log('|---|---|---|---|---|---|---|---|---|---|');
    for (const c of cases(dir)) {
      if (only.length > 0 && !only.includes(c.name)) continue;
      c.make();
      const sizeMb = statSync(c.path).size / 1e6;
      for (const engine of engines) {
        const child = spawnSync(process.execPath, ['--expose-gc', '--import', 'tsx', here, '--upload-child', c.path, engine], { encoding: 'utf8', cwd: join(here, '../../..'), maxBuffer: 64 * 1024 * 1024 });
        if (child.status !== 0) throw new Error(`upload child failed: ${child.stderr}`);
        const r = JSON.parse(child.stdout.trim().split('\n').at(-1) ?? '{}') as ChildResult;
        const tiles = Object.entries(r.tileStatuses).map(([k, v]) => `${v}× ${k}`).join(', ');
        console.log(`| ${c.name} | ${sizeMb.toFixed(1)} | ${engine} | ${r.status} | ${r.idleMb.toFixed(0)} | ${r.uploadPeakMb.toFixed(0)} | ${(r.uploadPeakMb - r.idleMb).toFixed(0)} | ${r.uploadSeconds.toFixed(1)} | ${r.tilesPeakMb.toFixed(0)} (z${r.tilesPeakZoom}) | ${tiles} |`);
      }
      rmSync(c.path, { force: true });
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

function memory(): { rssMb: number; hwmMb: number } {
  const status = readFileSync('/proc/self/status', 'utf8');
  const kb = (name: string) => Number(new RegExp(`${name}:\\s+(\\d+)`).exec(status)?.[1] ?? Number.NaN);
  return { rssMb: (kb('VmRSS') * 1024) / 1e6, hwmMb: (kb('VmHWM') * 1024) / 1e6 };
}

function resetPeak(): void {
  (globalThis as { gc?: () => void }).gc?.();
  writeFileSync('/proc/self/clear_refs', '5');
}

function send(port: number, path: string, headers: Record<string, string>, file?: string, json?: string): Promise<{ status: number; body: string }> {
  return new Promise((resolve, reject) => {
    const req = httpRequest({ host: '127.0.0.1', port, path, method: file || json ? 'POST' : 'GET', headers }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (chunk: Buffer) => {
        if (chunks.length < 16) chunks.push(chunk);
      });
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8') }));
    });
    req.on('error', reject);
    if (file) createReadStream(file).pipe(req);
    else req.end(json);
  });
}

function tileOf(lon: number, lat: number, zoom: number): { x: number; y: number } {
  const n = 2 ** zoom;
  const rad = (lat * Math.PI) / 180;
  return { x: Math.floor(((lon + 180) / 360) * n), y: Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n) };
}

async function uploadChild(file: string, engine: string): Promise<void> {
  // The server as `npm start` runs it (no demo), on loopback: embedded PGlite in a data folder, or
  // a fresh database on the local PostgreSQL.
  const { startServer } = await import('../../server/main.ts');
  const { loadConfig } = await import('../../server/config.ts');
  const { createTeam, createUser, issueToken } = await import('../../server/db/repositories/accounts.ts');
  const dataDir = mkdtempSync(join(tmpdir(), 'earshot-upload-bench-data-'));
  let databaseUrl: string | undefined;
  const database = `earshot_upload_bench_${process.pid}`;
  if (engine === 'postgres') {
    await adminQuery(`CREATE DATABASE "${database}"`);
    databaseUrl = withDatabase(postgresAdminUrl, database);
  }
  const server = await startServer({ ...loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off', HOST: '127.0.0.1', ...(databaseUrl ? { DATABASE_URL: databaseUrl } : {}) }), port: 0 }, { logger: false });
  try {
    const team = await createTeam(server.db, { slug: 'bench', name: 'Bench' });
    const user = await createUser(server.db, { teamId: team.id, name: 'planner', role: 'planner' });
    const auth = { authorization: `Bearer ${(await issueToken(server.db, { userId: user.id, label: 'bench' })).token}` };
    const port = (server.app.server.address() as AddressInfo).port;
    const plan = await send(port, '/api/v1/plans', { ...auth, 'content-type': 'application/json' }, undefined, JSON.stringify({ name: 'Upload bench' }));
    const planId = (JSON.parse(plan.body) as { id: string }).id;
    // Warm the route once (a tiny refused body) so lazy module loading is not counted.
    await send(port, `/api/v1/plans/${planId}/terrain/tiles/0/0/0.png`, auth);
    await new Promise((resolve) => setTimeout(resolve, 500));
    resetPeak();
    const idle = memory();
    const started = performance.now();
    const answer = await send(port, `/api/v1/plans/${planId}/terrain`, { ...auth, 'content-type': 'image/tiff', 'content-length': String(statSync(file).size) }, file);
    const uploadSeconds = (performance.now() - started) / 1000;
    const uploadPeakMb = memory().hwmMb;
    let layer: ChildResult['layer'] = null;
    const tileStatuses: Record<string, number> = {};
    let tilesPeakMb = 0;
    let tilesPeakZoom = -1;
    if (answer.status === 201) {
      layer = JSON.parse(answer.body) as ChildResult['layer'] & { extent: { west: number; south: number; east: number; north: number } };
      const extent = (layer as unknown as { extent: { west: number; south: number; east: number; north: number } }).extent;
      const centre = { lon: (extent.west + extent.east) / 2, lat: (extent.south + extent.north) / 2 };
      // A map view: 6 × 4 tiles fetched at once (as a browser does), at each zoom 8–13 in turn.
      for (let zoom = 8; zoom <= 13; zoom++) {
        resetPeak();
        const { x, y } = tileOf(centre.lon, centre.lat, zoom);
        const urls: string[] = [];
        for (let dy = -2; dy < 2; dy++) for (let dx = -3; dx < 3; dx++) urls.push(`/api/v1/plans/${planId}/terrain/tiles/${zoom}/${x + dx}/${y + dy}.png`);
        const results = await Promise.all(urls.map((url) => send(port, url, auth)));
        for (const r of results) tileStatuses[r.status] = (tileStatuses[r.status] ?? 0) + 1;
        const peak = memory().hwmMb;
        if (peak > tilesPeakMb) {
          tilesPeakMb = peak;
          tilesPeakZoom = zoom;
        }
      }
    }
    console.log(JSON.stringify({ status: answer.status, idleMb: idle.rssMb, uploadPeakMb, uploadSeconds, tilesPeakMb, tilesPeakZoom, tileStatuses, layer: layer && { widthPx: layer.widthPx, heightPx: layer.heightPx, resolutionM: layer.resolutionM }, body: answer.status === 201 ? undefined : answer.body } satisfies ChildResult & { body?: string }));
  } finally {
    await server.stop();
    rmSync(dataDir, { recursive: true, force: true });
    if (databaseUrl) await adminQuery(`DROP DATABASE IF EXISTS "${database}" WITH (FORCE)`);
  }
}

if (process.argv[2] === '--upload-child') {
  await uploadChild(process.argv[3], process.argv[4]);
  process.exit(0);
}
