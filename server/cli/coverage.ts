// `earshot coverage`: area prediction for one gateway on a DEM GeoTIFF.
// In los mode OUT.tif is on the DEM's own grid: 1 visible, 0 hidden, 255
// outside the radius (or NoData), so it compares cell by cell with other
// viewshed tools. In fast/full mode OUT.tif holds the basic transmission
// loss in dB (Float32, −9999 outside the radius).
import { performance } from 'node:perf_hooks';
import { z } from 'zod';
import { CliUsageError, defineCommand, integerOption, latLonOption, numberOption, stringOption, type CommandDefinition } from './framework.ts';
import { openGeoRaster, RasterError } from '../terrain/raster.ts';
import { CoverageInputError, loadTerrainWindow, writeOnRasterGrid } from '../coverage/terrain-window.ts';
import { LOSS_NODATA } from '../coverage/outputs.ts';
import { BYTE_NODATA } from '../coverage/rasterise.ts';
import { viewshedWavefront } from '../coverage/wavefront.ts';

const options = z.object({
  terrain: stringOption(),
  site: latLonOption(),
  'height-m': numberOption().refine((v) => v >= 0 && v <= 1000, { message: 'must be between 0 and 1000 m above ground' }),
  'target-height-m': numberOption().refine((v) => v >= 0 && v <= 1000, { message: 'must be between 0 and 1000 m above ground' }).optional(),
  'radius-km': numberOption().refine((v) => v > 0 && v <= 300, { message: 'must be above 0 and at most 300 km' }),
  mode: z.enum(['los', 'fast', 'full'], { error: 'must be one of los, fast, full' }),
  'frequency-mhz': numberOption().refine((v) => v >= 30 && v <= 6000, { message: 'must be between 30 and 6000 MHz (range of ITU-R P.1812)' }).optional(),
  'k-factor': numberOption().refine((v) => v >= 0.3 && v <= 100, { message: 'must be between 0.3 and 100' }).optional(),
  workers: integerOption().refine((v) => v >= 1 && v <= 256, { message: 'must be between 1 and 256' }).optional(),
  out: stringOption(),
});

export const coverageCommands: CommandDefinition[] = [
  defineCommand({
    words: 'coverage',
    options,
    run: async (o, context) => {
      const started = performance.now();
      let raster;
      try {
        raster = await openGeoRaster(o.terrain);
      } catch (error) {
        if (error instanceof RasterError) throw new CliUsageError(`--terrain: ${error.message}`);
        throw error;
      }
      try {
        const radiusM = o['radius-km'] * 1000;
        let loaded;
        try {
          // The CLI clips the circle at the raster edge (cells beyond it are simply not computed).
          loaded = await loadTerrainWindow(raster, { lat: o.site.lat, lon: o.site.lon, radiusM, allowClip: true });
        } catch (error) {
          if (error instanceof CoverageInputError) throw new CliUsageError(`--site: ${error.message}`);
          throw error;
        }
        const request = {
          mode: o.mode,
          radiusM,
          heightAglM: o['height-m'],
          targetHeightAglM: o['target-height-m'] ?? 1.5,
          kFactor: o['k-factor'] ?? 4 / 3,
          frequencyMhz: o['frequency-mhz'] ?? 915,
          p1812: { siteLatDeg: o.site.lat },
        };
        // los on a projected DEM: one pass over the cells (wavefront.ts), in this thread; otherwise the ray
        // sweeps on the worker pool (imported only then: the los run does not load the pool and the models).
        const wavefront = o.mode === 'los' ? viewshedWavefront(loaded.terrain, request, radiusM) : null;
        let workers = 1;
        let result;
        if (wavefront) result = { ...wavefront, plan: null };
        else {
          const [{ runArea }, { defaultWorkerCount }] = await Promise.all([import('../jobs/area-runner.ts'), import('../jobs/pool.ts')]);
          // Default: every core for big windows; small ones finish before threads would have started.
          const cells = loaded.terrain.frame.widthPx * loaded.terrain.frame.heightPx;
          workers = o.workers ?? (cells > 1_000_000 || o.mode === 'full' ? defaultWorkerCount() : 1);
          result = await runArea(loaded.terrain, request, { workers, onProgress: (fraction) => context.progress(fraction, o.mode) });
        }
        let inside = 0;
        if (result.visible) {
          if (wavefront) inside = wavefront.insideCells;
          else for (let i = 0; i < result.visible.length; i++) if (result.visible[i] !== BYTE_NODATA) inside++;
          writeOnRasterGrid(o.out, raster, loaded.placement, result.visible, 'uint8', BYTE_NODATA, 'none');
        } else if ('lossDb' in result && result.lossDb) {
          for (let i = 0; i < result.lossDb.length; i++) if (result.lossDb[i] === result.lossDb[i]) inside++;
          writeOnRasterGrid(o.out, raster, loaded.placement, result.lossDb, 'float32', LOSS_NODATA);
        }
        const seconds = Number(((performance.now() - started) / 1000).toFixed(3));
        return {
          mode: o.mode,
          cells: inside,
          seconds,
          workers,
          method: wavefront ? 'wavefront' : 'rays',
          visibleCells: result.visibleCells ?? null,
          rays: result.plan?.rayCount ?? null,
          samplesPerRay: result.plan?.sampleCount ?? null,
          out: o.out,
        };
      } finally {
        await raster.close();
      }
    },
    formatText: (result) => {
      const r = result as { mode: string; cells: number; seconds: number; visibleCells: number | null; out: string };
      const visible = r.visibleCells !== null ? `, ${r.visibleCells} visible (${((100 * r.visibleCells) / Math.max(1, r.cells)).toFixed(1)} %)` : '';
      return `${r.mode}: ${r.cells} cells${visible} in ${r.seconds} s → ${r.out}`;
    },
  }),
];
