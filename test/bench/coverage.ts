// Coverage benchmarks (`npm run bench -- coverage`), all measured side by side in one run:
// 1. los vs gdal_viewshed (GDAL) on the same synthetic 30 m DEM, observer and radius: time ratio, agreement;
// 2. growth with radius (5, 10, 20 km) for los, fast (30 m DEM) and full (P.1812, 90 m DEM), one thread;
// 3. fast and full cells/s/core, and the 1 → 2 worker speed-up on a warm pool;
// 4. a fleet of 10 gateways over a 30 × 30 km 30 m synthetic DEM in fast mode on 2 workers.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../server/terrain/raster.ts';
import { loadTerrainWindow, writeOnRasterGrid } from '../../server/coverage/terrain-window.ts';
import { predictArea, type AreaRequest } from '../../server/coverage/area.ts';
import { BYTE_NODATA } from '../../server/coverage/rasterise.ts';
import { viewshedWavefront } from '../../server/coverage/wavefront.ts';
import { runArea } from '../../server/jobs/area-runner.ts';
import { createAreaPool } from '../../server/jobs/area-runner.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const UTM33_X0 = 500_000;
const UTM33_Y0 = 4_100_000;

function demFile(dir: string, name: string, sizePx: number, cellM: number): string {
  const dem = makeSyntheticDem(sizePx, sizePx, cellM, 21, 1.2);
  const path = join(dir, name);
  writeFileSync(path, writeGeoTiff({ widthPx: sizePx, heightPx: sizePx, data: dem.elevationM, geoTransform: [UTM33_X0, cellM, 0, UTM33_Y0, 0, -cellM], epsg: 32633, noData: -9999, tiled: { tileSizePx: 256 } }));
  return path;
}

function best(times: number[]): number {
  return Math.min(...times);
}

export async function run(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'earshot-bench-coverage-'));
  const log = (line: string) => console.log(line);
  log(`machine: ${cpus().length} cores (${cpus()[0]?.model ?? '?'}), load average ${loadavg().map((l) => l.toFixed(1)).join(' ')} (other work on the machine inflates every figure)`);
  try {
    // Terrain: 1400 × 1400 cells of 30 m (42 km) and 470 × 470 of 90 m, synthetic.
    const dem30 = demFile(dir, 'dem30.tif', 1400, 30);
    const dem90 = demFile(dir, 'dem90.tif', 470, 90);
    const raster30 = await openGeoRaster(dem30);
    const raster90 = await openGeoRaster(dem90);
    const centre = (raster: typeof raster30) => raster.pixelToLonLat(raster.widthPx / 2 + 0.5, raster.heightPx / 2 + 0.5);
    const site30 = centre(raster30);
    const site90 = centre(raster90);
    const base = { heightAglM: 20, targetHeightAglM: 1.5, kFactor: 4 / 3, frequencyMhz: 915 };

    // 1. los vs gdal_viewshed, 20 km, observer 20 m: both read the DEM and write a GeoTIFF.
    if (spawnSync('which', ['gdal_viewshed']).status === 0) {
      const g = raster30.geoTransform;
      const ox = g[0] + (700 + 0.5) * g[1];
      const oy = g[3] + (700 + 0.5) * g[5];
      const [lon, lat] = raster30.transform.inverse(ox, oy);
      // Variants measured in the same loop as GDAL: the earlier plan (half-cell rays and steps, deflated
      // output) and the current defaults (plain output), so before/after are side by side.
      // Variants measured in the same loop as GDAL: the earlier path (ray sweep with half-cell rays and
      // steps, deflated output) and the CLI's current one (wavefront.ts, plain output), side by side.
      const variants: { name: string; wavefront: boolean; compression: 'none' | 'deflate' }[] = [
        { name: 'before (ray sweep, rays and steps 0.5 cell, deflate)', wavefront: false, compression: 'deflate' },
        { name: 'now (wavefront, uncompressed)', wavefront: true, compression: 'none' },
      ];
      const gdalTimes: number[] = [];
      const gdalCpu: number[] = [];
      const stats = variants.map(() => ({ times: [] as number[], cpu: [] as number[], phases: { readMs: 0, computeMs: 0, writeMs: 0 }, agree: 0, total: 0 }));
      for (let repeat = 0; repeat < 3; repeat++) {
        // One GDAL run per repeat, timed on the wall clock and (user + sys) by /usr/bin/time, as the machine may be shared.
        // (An earlier version timed two GDAL runs here, which doubled GDAL's wall time.)
        const t0 = performance.now();
        const timed = spawnSync('/usr/bin/time', ['-f', '%U %S', 'gdal_viewshed', '-q', '-oz', '20', '-tz', '1.5', '-md', '20000', '-cc', '0.75', '-vv', '1', '-iv', '0', '-ov', '100', '-ox', String(ox), '-oy', String(oy), dem30, join(dir, 'gdal.tif')], { encoding: 'utf8' });
        gdalTimes.push(performance.now() - t0);
        if (timed.status !== 0) throw new Error(`gdal_viewshed failed: ${timed.stderr}`);
        const [user, sys] = timed.stderr.trim().split(/\s+/).slice(-2).map(Number);
        gdalCpu.push((user + sys) * 1000);
        for (let v = 0; v < variants.length; v++) {
          const t1 = performance.now();
          const cpu0 = process.cpuUsage();
          const loaded = await loadTerrainWindow(raster30, { lat, lon, radiusM: 20_000, allowClip: true });
          const t2 = performance.now();
          const request: AreaRequest = { mode: 'los', radiusM: 20_000, ...base, raySpacingCells: 0.5, sampleStepCells: 0.5 };
          const result = (variants[v].wavefront ? viewshedWavefront(loaded.terrain, request, 20_000) : null) ?? predictArea(loaded.terrain, request);
          const t3 = performance.now();
          writeOnRasterGrid(join(dir, `ours${v}.tif`), raster30, loaded.placement, result.visible!, 'uint8', BYTE_NODATA, variants[v].compression);
          const t4 = performance.now();
          const cpu = process.cpuUsage(cpu0);
          stats[v].cpu.push((cpu.user + cpu.system) / 1000);
          stats[v].times.push(t4 - t1);
          if (repeat === 2) Object.assign(stats[v].phases, { readMs: t2 - t1, computeMs: t3 - t2, writeMs: t4 - t3 });
        }
      }
      const gdal = await openGeoRaster(join(dir, 'gdal.tif'));
      const B = await gdal.readWindow(0, 0, gdal.widthPx, gdal.heightPx);
      const dx = Math.round((gdal.geoTransform[0] - g[0]) / g[1]);
      const dy = Math.round((gdal.geoTransform[3] - g[3]) / g[5]);
      for (let v = 0; v < variants.length; v++) {
        const ours = await openGeoRaster(join(dir, `ours${v}.tif`));
        const A = await ours.readWindow(0, 0, ours.widthPx, ours.heightPx);
        const st = stats[v];
        for (let y = 0; y < gdal.heightPx; y++) {
          for (let x = 0; x < gdal.widthPx; x++) {
            const gv = B[y * gdal.widthPx + x];
            const ov = A[(y + dy) * ours.widthPx + x + dx];
            if (gv === 100 || ov !== ov) continue;
            st.total++;
            if (gv === ov) st.agree++;
          }
        }
        await ours.close();
        const p = st.phases;
        log(`los vs gdal_viewshed, earshot ${variants[v].name} (30 m DEM, R = 20 km, ${st.total} cells, best of 3, each reading the DEM and writing a GeoTIFF): gdal ${best(gdalTimes).toFixed(0)} ms, earshot ${best(st.times).toFixed(0)} ms → earshot/gdal wall-time ratio ${(best(st.times) / best(gdalTimes)).toFixed(2)}; CPU time gdal ${best(gdalCpu).toFixed(0)} ms, earshot ${best(st.cpu).toFixed(0)} ms → CPU ratio ${(best(st.cpu) / best(gdalCpu)).toFixed(2)} (earshot: read ${p.readMs.toFixed(0)} ms, compute ${p.computeMs.toFixed(0)} ms, write ${p.writeMs.toFixed(0)} ms); cells agreeing ${((100 * st.agree) / st.total).toFixed(2)} %`);
      }
      await gdal.close();
    } else {
      log('los vs gdal_viewshed: SKIPPED (gdal_viewshed not installed)');
    }

    // COVERAGE_BENCH=los: only the GDAL comparison above.
    if (process.env.COVERAGE_BENCH === 'los') {
      await raster30.close();
      await raster90.close();
      return;
    }

    // 2. Growth with radius, one thread, engine only (window already in memory).
    const growth = async (mode: AreaRequest['mode'], raster: typeof raster30, site: { lat: number; lon: number }, radiiKm: number[]) => {
      const rows: string[] = [];
      let previous: { r: number; ms: number } | null = null;
      for (const rKm of radiiKm) {
        const loaded = await loadTerrainWindow(raster, { ...site, radiusM: rKm * 1000, allowClip: true });
        const request: AreaRequest = { mode, radiusM: rKm * 1000, ...base, p1812: { siteLatDeg: site.lat } };
        const times: number[] = [];
        let cells = 0;
        for (let repeat = 0; repeat < (mode === 'full' ? 1 : 2); repeat++) {
          const t0 = performance.now();
          const result = predictArea(loaded.terrain, request);
          times.push(performance.now() - t0);
          cells = 0;
          const values = result.visible ?? result.lossDb!;
          for (let i = 0; i < values.length; i++) if (result.visible ? values[i] !== BYTE_NODATA : values[i] === values[i]) cells++;
        }
        const ms = best(times);
        const exponent = previous ? Math.log(ms / previous.ms) / Math.log(rKm / previous.r) : null;
        rows.push(`R ${rKm} km: ${cells} cells, ${ms.toFixed(0)} ms, ${((cells / ms) * 1000).toFixed(0)} cells/s/core${exponent !== null ? `, time ∝ R^${exponent.toFixed(2)} from the previous radius` : ''}`);
        previous = { r: rKm, ms };
      }
      return rows;
    };
    for (const line of await growth('los', raster30, site30, [5, 10, 20])) log(`growth los (30 m): ${line}`);
    for (const line of await growth('fast', raster30, site30, [5, 10, 20])) log(`growth fast (30 m): ${line}`);
    for (const line of await growth('full', raster90, site90, [5, 10, 20])) log(`growth full P.1812 (90 m): ${line}`);

    // 3. 1 → 2 workers on a warm pool, fast at 20 km (30 m) and full at 10 km (90 m).
    const pool2 = createAreaPool(2);
    const pool1 = createAreaPool(1);
    try {
      for (const [mode, raster, site, rKm] of [['fast', raster30, site30, 20], ['full', raster90, site90, 10]] as const) {
        const loaded = await loadTerrainWindow(raster, { ...site, radiusM: rKm * 1000, allowClip: true });
        const request: AreaRequest = { mode, radiusM: rKm * 1000, ...base, p1812: { siteLatDeg: site.lat } };
        await runArea(loaded.terrain, { ...request, radiusM: 1000 }, { pool: pool1 }); // warm-up (thread start, module load)
        await runArea(loaded.terrain, { ...request, radiusM: 1000 }, { pool: pool2 });
        const one: number[] = [];
        const two: number[] = [];
        // Alternated, best of 3 each, so both see the same machine load.
        for (let repeat = 0; repeat < 3; repeat++) {
          let t0 = performance.now();
          await runArea(loaded.terrain, request, { pool: pool1 });
          one.push(performance.now() - t0);
          t0 = performance.now();
          await runArea(loaded.terrain, request, { pool: pool2 });
          two.push(performance.now() - t0);
        }
        log(`workers ${mode} R ${rKm} km: 1 worker ${best(one).toFixed(0)} ms, 2 workers ${best(two).toFixed(0)} ms → 1→2 worker speed-up ${(best(one) / best(two)).toFixed(2)}× (all runs: 1 worker ${one.map((t) => t.toFixed(0)).join('/')} ms, 2 workers ${two.map((t) => t.toFixed(0)).join('/')} ms; load average now ${loadavg()[0].toFixed(1)})`);
      }

      // 4. Fleet: 10 gateways over a 30 × 30 km, 30 m DEM (1000 × 1000 cells), fast, R = 10 km each, 2 workers.
      const fleetDem = demFile(dir, 'fleet.tif', 1000, 30);
      const fleet = await openGeoRaster(fleetDem);
      const t0 = performance.now();
      let cells = 0;
      for (let i = 0; i < 10; i++) {
        const col = 150 + (i % 5) * 175;
        const row = 250 + Math.floor(i / 5) * 500;
        const site = fleet.pixelToLonLat(col + 0.5, row + 0.5);
        const loaded = await loadTerrainWindow(fleet, { ...site, radiusM: 10_000, allowClip: true });
        const result = await runArea(loaded.terrain, { mode: 'fast', radiusM: 10_000, ...base }, { pool: pool2 });
        for (let k = 0; k < result.lossDb!.length; k++) if (result.lossDb![k] === result.lossDb![k]) cells++;
      }
      log(`fleet: 10 gateways, fast, R 10 km each, 30 × 30 km 30 m DEM, 2 workers: ${((performance.now() - t0) / 1000).toFixed(2)} s for ${cells} gateway-cells (window reads included)`);
      await fleet.close();
    } finally {
      await pool1.close();
      await pool2.close();
    }
    await raster30.close();
    await raster90.close();
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
