// Terrain benchmarks (`npm run bench -- terrain`):
// 1. 50 km profiles at 30 m steps from a tiled DEM with a warm cache: sampled points per second on one core
//    (target ≥ 2 M/s), for a geographic and a UTM DEM, nearest and bilinear.
// 2. Peak RSS while sampling profiles all over a 20 000 × 20 000 synthetic COG (Int16, 256 px tiles, deflate,
//    overviews) that is far larger than the cache; the COG is generated to /tmp by our streaming writer and
//    sampled in a child process so the figure is the sampler's own peak (getrusage maxRSS).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeGeoTiffFile, type GeoTransform } from '../../server/terrain/geotiff-writer.ts';
import { extractProfile } from '../../server/terrain/profile.ts';
import { openTerrainStore } from '../../server/terrain/store.ts';

const here = fileURLToPath(import.meta.url);

/** Smooth synthetic hills, separable so generation is cheap: z = 400 + 150·sin(c/97) + 120·cos(r/131) + ripples. */
function hillsBlock(scale: number) {
  return (x0: number, y0: number, w: number, h: number): Int16Array => {
    const out = new Int16Array(w * h);
    const colTerm = new Float64Array(w);
    for (let c = 0; c < w; c++) {
      const col = (x0 + c) * scale;
      colTerm[c] = 150 * Math.sin(col / 97) + 20 * Math.sin(col / 7.3);
    }
    for (let r = 0; r < h; r++) {
      const row = (y0 + r) * scale;
      const rowTerm = 400 + 120 * Math.cos(row / 131) + 15 * Math.cos(row / 5.1);
      const base = r * w;
      for (let c = 0; c < w; c++) out[base + c] = Math.round(rowTerm + colTerm[c]);
    }
    return out;
  };
}

function makeDem(path: string, widthPx: number, heightPx: number, geoTransform: GeoTransform, epsg: number, overviewFactors: number[] = []): number {
  const started = performance.now();
  writeGeoTiffFile(path, {
    widthPx,
    heightPx,
    sampleType: 'int16',
    geoTransform,
    epsg,
    noData: -32768,
    tiled: { tileSizePx: 256 },
    compression: 'deflate',
    overviewFactors,
    readBlock: (level, x0, y0, w, h) => hillsBlock(level === 0 ? 1 : overviewFactors[level - 1])(x0, y0, w, h),
  });
  return (performance.now() - started) / 1000;
}

async function profileThroughput(dir: string): Promise<void> {
  // 3000 × 3000 cells of 30 m (90 km square) in UTM 32N, and 1 arc-second (≈ 31 × 20 m at 50° N) in EPSG:4326.
  const utm = join(dir, 'utm-30m.tif');
  const geo = join(dir, 'geo-1as.tif');
  makeDem(utm, 3000, 3000, [300000, 30, 0, 5600000, 0, -30], 32632);
  makeDem(geo, 5000, 3000, [5.5, 1 / 3600, 0, 50.4, 0, -1 / 3600], 4326);
  const cases = [
    { name: 'UTM 30 m', path: utm, from: { lat: 50.35, lon: 6.25 }, to: { lat: 49.98, lon: 6.78 } },
    { name: 'EPSG:4326 1″', path: geo, from: { lat: 50.35, lon: 5.6 }, to: { lat: 49.7, lon: 6.3 } },
  ];
  console.log('| DEM | interpolation | path (km) | points | ms per profile (median of 200) | M points/s/core |');
  console.log('|---|---|---|---|---|---|');
  for (const c of cases) {
    const store = await openTerrainStore([{ path: c.path }], { cacheBytes: 256 * 1024 * 1024 });
    for (const interpolation of ['nearest', 'bilinear'] as const) {
      // Find the end point 50 km away along the same direction.
      const probe = await extractProfile(store, c.from, c.to, { stepM: 1000, interpolation });
      const fraction = 50000 / probe.lengthM;
      const to = { lat: c.from.lat + (c.to.lat - c.from.lat) * fraction, lon: c.from.lon + (c.to.lon - c.from.lon) * fraction };
      const warm = await extractProfile(store, c.from, to, { stepM: 30, interpolation });
      if (warm.noDataPoints > 0) throw new Error(`bench path leaves the DEM (${warm.noDataPoints} NoData points)`);
      const times: number[] = [];
      for (let i = 0; i < 200; i++) {
        const t0 = performance.now();
        await extractProfile(store, c.from, to, { stepM: 30, interpolation });
        times.push(performance.now() - t0);
      }
      times.sort((a, b) => a - b);
      const median = times[times.length >> 1];
      const points = warm.distanceM.length;
      console.log(`| ${c.name} | ${interpolation} | ${(warm.lengthM / 1000).toFixed(1)} | ${points} | ${median.toFixed(3)} | ${(points / median / 1000).toFixed(2)} |`);
    }
    await store.close();
  }
}

async function boundedMemory(dir: string): Promise<void> {
  const cog = join(dir, 'cog-20000.tif');
  const seconds = makeDem(cog, 20000, 20000, [200000, 10, 0, 5700000, 0, -10], 32632, [2, 4, 8, 16, 32, 64]);
  const sizeMb = statSync(cog).size / 1e6;
  console.log(`\n20 000 × 20 000 Int16 COG (256 px tiles, deflate, 6 overviews): ${sizeMb.toFixed(0)} MB on disk, ${(20000 * 20000 * 4) / 1e6} MB as decoded Float32; written in ${seconds.toFixed(1)} s`);
  console.log('| cache ceiling (MB) | profiles | points | peak RSS of the sampler (MB) | RSS after opening, before sampling (MB) | blocks loaded | evictions |');
  console.log('|---|---|---|---|---|---|---|');
  for (const cacheMb of [32, 128]) {
    const child = spawnSync(process.execPath, ['node_modules/tsx/dist/cli.mjs', here, '--rss-child', cog, String(cacheMb)], { encoding: 'utf8', cwd: join(dirname(here), '../..') });
    if (child.status !== 0) throw new Error(`sampler failed: ${child.stderr}`);
    const r = JSON.parse(child.stdout.trim().split('\n').at(-1) ?? '{}') as { profiles: number; points: number; peakRssMb: number; baseRssMb: number; loads: number; evictions: number };
    console.log(`| ${cacheMb} | ${r.profiles} | ${r.points} | ${r.peakRssMb.toFixed(0)} | ${r.baseRssMb.toFixed(0)} | ${r.loads} | ${r.evictions} |`);
  }
}

function dirname(path: string): string {
  return path.slice(0, path.lastIndexOf('/'));
}

/** Child: random 50 km profiles at 10 m steps all over the COG with a given cache ceiling; prints one JSON line. */
async function rssChild(path: string, cacheMb: number): Promise<void> {
  const store = await openTerrainStore([{ path }], { cacheBytes: cacheMb * 1024 * 1024 });
  const raster = store.elevationLayers[0].raster;
  const baseRssMb = process.memoryUsage().rss / 1e6;
  let state = 12345;
  const random = () => {
    state = (state * 1103515245 + 12345) % 2147483648;
    return state / 2147483648;
  };
  let points = 0;
  const profiles = 120;
  for (let i = 0; i < profiles; i++) {
    const a = raster.pixelToLonLat(500 + random() * 19000, 500 + random() * 19000);
    const b = raster.pixelToLonLat(500 + random() * 19000, 500 + random() * 19000);
    const p = await extractProfile(store, { lat: a.lat, lon: a.lon }, { lat: b.lat, lon: b.lon }, { stepM: 10, interpolation: 'bilinear' });
    points += p.distanceM.length;
  }
  const stats = store.cacheStats();
  await store.close();
  const peakRssMb = (process.resourceUsage().maxRSS * 1024) / 1e6;
  console.log(JSON.stringify({ profiles, points, peakRssMb, baseRssMb, loads: stats.loads, evictions: stats.evictions }));
}

export async function run(): Promise<void> {
  const dir = join(tmpdir(), `earshot-terrain-bench-${process.pid}`);
  if (!existsSync(dir)) mkdirSync(dir, { recursive: true });
  try {
    console.log('Profiles, warm cache (one core, this process):');
    await profileThroughput(dir);
    await boundedMemory(dir);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[2] === '--rss-child') {
  await rssChild(process.argv[3], Number(process.argv[4]));
}
