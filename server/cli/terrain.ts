// Commands of the terrain room: `earshot profile`, and `earshot terrain upload` (through the running server).
import { existsSync } from 'node:fs';
import { z } from 'zod';
import { CliUsageError, defineCommand, latLonOption, numberOption, stringOption, type CommandDefinition } from './framework.ts';
import { clutterClassName, extractProfile } from '../terrain/profile.ts';
import { RasterError } from '../terrain/raster.ts';
import { openTerrainStore, type TerrainFile } from '../terrain/store.ts';
import { loadConfig } from '../config.ts';
import { readRunningServer, sendFileToRunningServer } from './running-server.ts';

interface ProfilePoint {
  distanceM: number;
  lat: number;
  lon: number;
  groundM: number | null;
  clutterClass?: string | null;
  clutterHeightM?: number | null;
}

interface ProfileResult {
  lengthM: number;
  stepM: number;
  interpolation: string;
  noDataPoints: number;
  points: ProfilePoint[];
}

const round = (value: number, digits: number) => Number(value.toFixed(digits));

const profileCommand = defineCommand({
  words: 'profile',
  options: z.object({
    terrain: stringOption().transform((value) => value.split(',').map((part) => part.trim()).filter((part) => part.length > 0)),
    from: latLonOption(),
    to: latLonOption(),
    'step-m': numberOption().refine((value) => value > 0, { message: 'must be a positive number of metres' }).optional(),
    interpolation: z.enum(['bilinear', 'nearest'], { error: 'must be bilinear or nearest' }).optional(),
    clutter: stringOption().optional(),
  }),
  run: async (options): Promise<ProfileResult> => {
    if (options.terrain.length === 0) throw new CliUsageError('--terrain: needs at least one GeoTIFF file');
    const files: TerrainFile[] = options.terrain.map((path) => ({ path, kind: 'elevation' }));
    if (options.clutter) files.push({ path: options.clutter, kind: 'clutter' });
    for (const file of files) {
      if (!existsSync(file.path)) throw new CliUsageError(`--${file.kind === 'clutter' ? 'clutter' : 'terrain'}: file not found: ${file.path}`);
    }
    let store;
    try {
      store = await openTerrainStore(files, { cacheBytes: 256 * 1024 * 1024 });
    } catch (error) {
      if (error instanceof RasterError) throw new CliUsageError(`--terrain: ${error.message}`);
      throw error;
    }
    try {
      const interpolation = options.interpolation ?? 'bilinear';
      let profile;
      try {
        profile = await extractProfile(store, options.from, options.to, { stepM: options['step-m'], interpolation });
      } catch (error) {
        if (error instanceof RangeError) throw new CliUsageError(error.message);
        throw error;
      }
      const points: ProfilePoint[] = [];
      for (let i = 0; i < profile.distanceM.length; i++) {
        const ground = profile.groundM[i];
        const point: ProfilePoint = {
          distanceM: round(profile.distanceM[i], 3),
          lat: round(profile.lat[i], 8),
          lon: round(profile.lon[i], 8),
          groundM: Number.isNaN(ground) ? null : round(ground, 3),
        };
        if (profile.clutterClass && profile.clutterHeightM) {
          point.clutterClass = clutterClassName(profile.clutterClass[i]);
          point.clutterHeightM = Number.isNaN(profile.clutterHeightM[i]) ? null : profile.clutterHeightM[i];
        }
        points.push(point);
      }
      return { lengthM: round(profile.lengthM, 3), stepM: round(profile.stepM, 4), interpolation, noDataPoints: profile.noDataPoints, points };
    } finally {
      await store.close();
    }
  },
  formatText: (result) => {
    const r = result as ProfileResult;
    const lines = [`profile: ${r.points.length} points over ${(r.lengthM / 1000).toFixed(3)} km, step ${r.stepM.toFixed(2)} m, ${r.interpolation}; ${r.noDataPoints} without terrain data`];
    lines.push('distance (m)   lat          lon           ground (m)');
    for (const p of r.points) {
      lines.push(`${p.distanceM.toFixed(1).padStart(12)}   ${p.lat.toFixed(6).padStart(10)}   ${p.lon.toFixed(6).padStart(11)}   ${p.groundM === null ? 'no data' : p.groundM.toFixed(1)}`);
    }
    return lines.join('\n');
  },
});

interface UploadedLayer {
  id: string;
  name: string;
  kind: string;
  widthPx: number;
  heightPx: number;
  resolutionM: number;
  extent: { west: number; south: number; east: number; north: number };
}

/**
 * `earshot terrain upload --plan ID --file F.tif`: the GeoTIFF goes to the running server
 * (POST /_admin/terrain-upload, the same checks and storage as the API's upload), like `link`.
 * The checks and storage live with the API route, so without a running server it says so.
 */
const uploadCommand = defineCommand({
  words: 'terrain upload',
  options: z.strictObject({
    plan: stringOption(),
    file: stringOption(),
    kind: z.enum(['elevation', 'clutter'], { error: 'must be elevation or clutter' }).optional(),
    name: stringOption().optional(),
  }),
  run: async (options): Promise<UploadedLayer> => {
    if (!existsSync(options.file)) throw new CliUsageError(`--file: file not found: ${options.file}`);
    const config = loadConfig(process.env);
    const server = readRunningServer(config);
    const query: Record<string, string> = { plan: options.plan };
    if (options.kind) query.kind = options.kind;
    if (options.name) query.name = options.name;
    const answer = server ? await sendFileToRunningServer(server, 'terrain-upload', query, options.file, 'image/tiff', 600_000) : null;
    if (answer === null) throw new CliUsageError(`no earshot server answers for the data folder ${config.dataDir}: start it (npm start), then run the upload again`);
    return answer as UploadedLayer;
  },
  formatText: (result) => {
    const l = result as UploadedLayer;
    const e = l.extent;
    return `uploaded ${l.kind} layer “${l.name}” (${l.id}): ${l.widthPx} × ${l.heightPx} px, ${l.resolutionM.toFixed(1)} m per pixel, ${e.south.toFixed(4)}…${e.north.toFixed(4)}° N, ${e.west.toFixed(4)}…${e.east.toFixed(4)}° E`;
  },
});

export const terrainCommands: CommandDefinition[] = [profileCommand, uploadCommand];
