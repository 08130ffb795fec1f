// Terrain layers of a plan: upload (raw image/tiff body or multipart), list, delete, and the
// hillshade basemap tiles rendered from the plan's elevation layers (offline map).
// Uploads are streamed to a temporary file, validated (TIFF, georeferencing, compression,
// size, tile table, a few decoded tiles, overlap with the plan), then the row is inserted
// its audit entry written and the file renamed into place inside one transaction: nothing is
// ever half-stored (a failed transaction removes the renamed file).
import { createHash, randomUUID } from 'node:crypto';
import { createWriteStream } from 'node:fs';
import { mkdir, rename, rm } from 'node:fs/promises';
import { join } from 'node:path';
import type { Readable } from 'node:stream';
import multipart from '@fastify/multipart';
import type { FastifyInstance, FastifyRequest } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { writeWithAudit, type AuditPrincipal } from '../../db/repositories/audit.ts';
import type { Database } from '../../db/client.ts';
import { removeTerrainFileIfUnused, resolveStoredFile, sweepIncomingFiles, sweepOrphanFiles, terrainDir } from '../../db/files.ts';
import { allTerrainLayers, createTerrainLayerWith, deleteTerrainLayer, listTerrainLayers, planExtent, type TerrainLayerRow } from '../../db/repositories/terrain-layers.ts';
import { findPlanById } from '../../db/repositories/links.ts';
import { crsForEpsg } from '../../terrain/crs.ts';
import { openGeoRaster, RasterError, type GeoRaster } from '../../terrain/raster.ts';
import { renderHillshadeTile, validTile } from '../../terrain/tiles.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { assertCleanText } from '../input-guard.ts';
import { dateTime, errorResponses, id, name, pageOf, pageQuery, planParams } from '../schemas.ts';

const uploadQuery = z.strictObject({
  kind: z.enum(['elevation', 'clutter'], { error: 'must be elevation or clutter' }).optional(),
  name: name().optional(),
});
const layerParams = z.strictObject({ planId: id(), layerId: id() });
const tileParams = z.strictObject({
  planId: id(),
  z: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(0, 'must be 0–24').max(24, 'must be 0–24'),
  x: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(0, 'must be ≥ 0'),
  y: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(0, 'must be ≥ 0'),
});

/** HTTP status for each reason a raster is refused. */
const STATUS_FOR: Record<RasterError['code'], number> = {
  not_tiff: 415,
  unsupported_compression: 415,
  no_georeferencing: 422,
  unsupported_crs: 422,
  unsupported_layout: 422,
  corrupt: 422,
};

const box = z.object({ west: z.number(), south: z.number(), east: z.number(), north: z.number() }).describe('degrees WGS84');
/** A terrain layer as the API answers it (terrainLayerDto). */
export const terrainLayerResponse = z
  .object({
    id: z.string(),
    planId: z.string(),
    kind: z.enum(['elevation', 'clutter']),
    name: z.string(),
    widthPx: z.number().int(),
    heightPx: z.number().int(),
    cells: z.number().int(),
    fileBytes: z.number().int(),
    sha256: z.string().nullable(),
    crs: z.object({ epsg: z.number().int().nullable(), name: z.string().nullable(), proj4: z.string() }),
    geoTransform: z.array(z.number()).describe('GDAL order: x0, pixel width, row rotation, y0, column rotation, pixel height (CRS units)'),
    extent: box,
    resolutionM: z.number().describe('m per pixel (the finer axis)'),
    noData: z.number().nullable(),
    priority: z.number().int(),
    createdAt: dateTime,
  });

/** The layer as the API shows it. */
export function terrainLayerDto(row: TerrainLayerRow) {
  let crsName: string | null = null;
  if (row.epsg !== null) {
    try {
      crsName = crsForEpsg(row.epsg).name;
    } catch {
      crsName = null;
    }
  }
  return {
    id: row.id,
    planId: row.planId,
    kind: row.kind,
    name: row.name,
    widthPx: row.widthPx,
    heightPx: row.heightPx,
    cells: row.widthPx * row.heightPx,
    fileBytes: Number(row.fileBytes),
    sha256: row.sha256,
    crs: { epsg: row.epsg, name: crsName, proj4: row.proj4 },
    // Always the six numbers the upload stored.
    geoTransform: row.geoTransform as number[],
    extent: { west: row.west, south: row.south, east: row.east, north: row.north },
    resolutionM: row.resolutionM,
    noData: row.noData,
    priority: row.priority,
    createdAt: row.createdAt,
  };
}

interface Received {
  path: string;
  bytes: number;
  sha256: string;
  head: Buffer;
}

/** Streams an upload to `path`, counting bytes and hashing; beyond `limit` it stops writing, drains a little, and fails with 413. */
async function receive(stream: Readable, path: string, limit: number): Promise<Received> {
  const hash = createHash('sha256');
  const out = createWriteStream(path, { flags: 'wx' });
  let bytes = 0;
  let head = Buffer.alloc(0);
  let tooLarge = false;
  try {
    for await (const chunk of stream) {
      const buffer = chunk as Buffer;
      bytes += buffer.length;
      if (bytes > limit) {
        tooLarge = true;
        // Drain a bounded amount so the client reads our answer; then give up on the connection.
        if (bytes > limit + 64 * 1024 * 1024) {
          stream.destroy();
          break;
        }
        continue;
      }
      if (head.length < 16) head = Buffer.concat([head, buffer.subarray(0, 16 - head.length)]);
      hash.update(buffer);
      if (!out.write(buffer)) await new Promise<void>((resolve) => out.once('drain', () => resolve()));
    }
  } finally {
    await new Promise<void>((resolve, reject) => out.end((error?: Error | null) => (error ? reject(error) : resolve())));
  }
  if (tooLarge) throw new ApiError(413, 'payload_too_large', `file: larger than the upload limit of ${formatBytes(limit)} (EARSHOT_MAX_UPLOAD_MB)`);
  return { path, bytes, sha256: hash.digest('hex'), head };
}

function formatBytes(bytes: number): string {
  return bytes >= 1024 * 1024 ? `${(bytes / (1024 * 1024)).toFixed(bytes % (1024 * 1024) === 0 ? 0 : 1)} MB` : `${Math.round(bytes / 1024)} KB`;
}

function looksLikeTiff(head: Buffer): boolean {
  if (head.length < 4) return false;
  const ii = head[0] === 0x49 && head[1] === 0x49 && (head[2] === 42 || head[2] === 43) && head[3] === 0;
  const mm = head[0] === 0x4d && head[1] === 0x4d && head[2] === 0 && (head[3] === 42 || head[3] === 43);
  return ii || mm;
}

/**
 * Decodes blocks to catch corrupt pixel data before anything is stored: every block when the raster decodes to
 * at most 64 MB, otherwise the first, the last and 30 spread evenly between.
 */
async function sampleBlocks(raster: GeoRaster): Promise<void> {
  const { blocksAcross, blocksDown, blockWidthPx, blockHeightPx } = raster.blockLayout;
  const total = blocksAcross * blocksDown;
  const decodedBytes = total * blockWidthPx * blockHeightPx * 4;
  const picks = new Set<number>();
  if (decodedBytes <= 64 * 1024 * 1024) {
    for (let i = 0; i < total; i++) picks.add(i);
  } else {
    picks.add(0).add(total - 1);
    for (let k = 1; k <= 30; k++) picks.add(Math.floor((k * total) / 31));
  }
  for (const index of picks) {
    try {
      await raster.readBlock(index % blocksAcross, Math.floor(index / blocksAcross));
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      throw new ApiError(422, 'corrupt_raster', `file: pixel data cannot be decoded (${message})`);
    }
  }
}

function intersects(a: { west: number; south: number; east: number; north: number }, b: { west: number; south: number; east: number; north: number }): boolean {
  return a.west <= b.east && a.east >= b.west && a.south <= b.north && a.north >= b.south;
}

const fmt = (box: { west: number; south: number; east: number; north: number }) =>
  `${box.south.toFixed(4)}…${box.north.toFixed(4)}° N, ${box.west.toFixed(4)}…${box.east.toFixed(4)}° E`;

export default async function terrainRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const tags = ['terrain'];
  const filesDir = config.filesDir;

  await app.register(multipart, { limits: { fileSize: config.maxUploadBytes, files: 1, fields: 10 }, throwFileSizeLimit: false });
  // Raw GeoTIFF bodies are handed to the route as a stream (never buffered in memory).
  app.addContentTypeParser(['image/tiff', 'image/geotiff', 'application/octet-stream'], (_request, payload, done) => done(null, payload));

  const resolveFile = (filePath: string) => resolveStoredFile(config, filePath);

  // Open rasters per plan for tiles (bounded) and rendered tiles (bounded by bytes).
  const rasterSets = new Map<string, { signature: string; rasters: Promise<GeoRaster[]> }>();
  const tileCache = new Map<string, Buffer>();
  const tileCacheLimit = Math.max(4 * 1024 * 1024, Math.floor(config.tileCacheBytes / 4));
  let tileCacheBytes = 0;

  const dropRasters = (planId: string) => {
    const entry = rasterSets.get(planId);
    if (!entry) return;
    rasterSets.delete(planId);
    void entry.rasters.then((rasters) => Promise.all(rasters.map((r) => r.close()))).catch(() => undefined);
  };
  // Files without a row (a plan deleted with its rows, a crash mid-upload) are removed once they are an hour old,
  // so an upload in progress on another instance sharing the data folder is never touched.
  app.addHook('onReady', async () => {
    try {
      await sweepOrphanFiles(db, terrainDir(config), 60 * 60 * 1000);
      // Uploads interrupted by a crash: gone at once (one still being written elsewhere keeps a fresh mtime).
      await sweepIncomingFiles(terrainDir(config), 2 * 60 * 1000);
    } catch (error) {
      app.log.warn({ err: error }, 'terrain file sweep failed');
    }
  });
  app.addHook('onClose', async () => {
    for (const planId of [...rasterSets.keys()]) dropRasters(planId);
    tileCache.clear();
  });

  const rastersFor = async (planId: string, rows: TerrainLayerRow[]): Promise<{ signature: string; rasters: GeoRaster[] }> => {
    const signature = rows.map((row) => `${row.id}:${row.sha256 ?? ''}`).join(',');
    const existing = rasterSets.get(planId);
    if (existing && existing.signature === signature) return { signature, rasters: await existing.rasters };
    dropRasters(planId);
    const opening = (async () => {
      const opened: GeoRaster[] = [];
      try {
        for (const row of rows) opened.push(await openGeoRaster(resolveFile(row.filePath)));
      } catch (error) {
        await Promise.all(opened.map((r) => r.close()));
        throw error;
      }
      return opened;
    })();
    rasterSets.set(planId, { signature, rasters: opening });
    if (rasterSets.size > 8) dropRasters(rasterSets.keys().next().value as string);
    try {
      return { signature, rasters: await opening };
    } catch (error) {
      rasterSets.delete(planId);
      throw new ApiError(422, 'terrain_unreadable', `the plan's terrain could not be opened: ${error instanceof Error ? error.message : String(error)}`);
    }
  };

  api.get('/plans/:planId/terrain', { schema: { summary: 'Terrain layers of a plan (extent, CRS, resolution, size)', tags, params: planParams, querystring: pageQuery, response: { 200: pageOf(terrainLayerResponse), ...errorResponses } } }, async (request) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const page = await listTerrainLayers(db, plan.id, request.query);
    return { ...page, items: page.items.map(terrainLayerDto) };
  });

  api.post(
    '/plans/:planId/terrain',
    {
      schema: {
        summary: 'Upload a GeoTIFF terrain layer (raw image/tiff body or multipart/form-data with one file; kind=elevation|clutter, name)',
        tags,
        params: planParams,
        querystring: uploadQuery,
        response: { 201: terrainLayerResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
      const row = await storeTerrainUpload({ db, filesDir, maxUploadBytes: config.maxUploadBytes, maxRasterCells: config.maxRasterCells }, request, request.query, plan.id, principal);
      dropRasters(plan.id);
      return reply.status(201).send(terrainLayerDto(row));
    },
  );

  api.delete('/plans/:planId/terrain/:layerId', { schema: { summary: 'Delete a terrain layer and its file (204)', tags, params: layerParams } }, async (request, reply) => {
    const principal = requireRole(request, 'planner');
    const plan = await loadPlanForPrincipal(db, principal, request.params.planId);
    const row = await writeWithAudit(
      db,
      async (tx) => {
        const deleted = await deleteTerrainLayer(tx, plan.id, request.params.layerId);
        if (!deleted) throw new ApiError(404, 'not_found', 'terrain layer not found');
        return deleted;
      },
      (deleted) => ({ principal, action: 'delete', entity: 'terrain_layer', entityId: deleted.id, detail: { planId: plan.id, name: deleted.name } }),
    );
    // Only after the commit: a rolled-back delete keeps its file, and a file a copied plan's layer still uses stays.
    dropRasters(plan.id);
    await removeTerrainFileIfUnused(db, config, row.filePath);
    return reply.status(204).send();
  });

  api.get('/plans/:planId/terrain/tiles/:z/:x/:y.png', { schema: { summary: 'Hillshade basemap tile (Web Mercator XYZ, 256 px PNG) from the plan\'s elevation layers', tags, params: tileParams } }, async (request, reply) => {
    const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
    const { z: zoom, x, y } = request.params;
    if (!validTile(zoom, x, y)) throw new ApiError(400, 'invalid_input', `x, y: tile ${x}/${y} does not exist at zoom ${zoom} (0 ≤ x, y < ${2 ** zoom})`);
    const rows = (await allTerrainLayers(db, plan.id)).filter((row) => row.kind === 'elevation');
    if (rows.length === 0) throw new ApiError(404, 'no_terrain', 'this plan has no elevation layer to shade');
    const { signature, rasters } = await rastersFor(plan.id, rows);
    const etag = `"${createHash('sha1').update(`${signature}|${zoom}/${x}/${y}|v1`).digest('hex').slice(0, 20)}"`;
    reply.header('cache-control', 'private, max-age=600').header('etag', etag);
    if (request.headers['if-none-match'] === etag) return reply.status(304).send();
    const key = `${plan.id}|${etag}`;
    let png = tileCache.get(key);
    if (png) {
      tileCache.delete(key);
      tileCache.set(key, png);
    } else {
      const tile = await app.tileRenders(() => renderHillshadeTile(rasters, zoom, x, y));
      png = Buffer.from(tile.png.buffer, tile.png.byteOffset, tile.png.byteLength);
      if (!tile.hasData) reply.header('x-earshot-tile', tile.tooCoarse ? 'too-coarse' : 'empty');
      tileCache.set(key, png);
      tileCacheBytes += png.length;
      while (tileCacheBytes > tileCacheLimit && tileCache.size > 0) {
        const [oldKey, old] = tileCache.entries().next().value as [string, Buffer];
        tileCache.delete(oldKey);
        tileCacheBytes -= old.length;
      }
    }
    return reply.type('image/png').send(png);
  });
}

const adminUploadQuery = z.strictObject({
  plan: id(),
  kind: z.enum(['elevation', 'clutter'], { error: 'must be elevation or clutter' }).optional(),
  name: name().optional(),
});

/**
 * Loopback admin route for `earshot terrain upload` (server/cli/terrain.ts) while this server
 * holds the data folder, registered inside server/api/routes/admin.ts (its loopback + local
 * secret check guards it): POST /_admin/terrain-upload?plan=ID[&kind=][&name=] with the raw
 * GeoTIFF body, stored exactly as the API route stores it; audited as done from the CLI.
 */
export async function terrainAdminRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  app.addContentTypeParser(['image/tiff', 'image/geotiff', 'application/octet-stream'], (_request, payload, done) => done(null, payload));
  api.post('/terrain-upload', { schema: { hide: true, querystring: adminUploadQuery } }, async (request, reply) => {
    const plan = await findPlanById(db, request.query.plan);
    if (!plan) throw new ApiError(404, 'not_found', `--plan: no plan "${request.query.plan}" (earshot plans lists them)`);
    const { kind, name: layerName } = request.query;
    const row = await storeTerrainUpload(
      { db, filesDir: config.filesDir, maxUploadBytes: config.maxUploadBytes, maxRasterCells: config.maxRasterCells },
      request,
      { ...(kind ? { kind } : {}), ...(layerName ? { name: layerName } : {}) },
      plan.id,
      { teamId: plan.teamId, userId: null, tokenId: null },
    );
    return reply.status(201).send(terrainLayerDto(row));
  });
}

interface UploadTarget {
  db: Database;
  filesDir: string;
  maxUploadBytes: number;
  maxRasterCells: number;
}

/**
 * Receives, checks and stores one GeoTIFF for a plan (the API route and the CLI's loopback
 * route, `earshot terrain upload`): streamed to a temporary file, validated (TIFF,
 * georeferencing, compression, size, tile table, a few decoded tiles, overlap with the plan),
 * then row, audit entry and file move in one transaction. `query` holds kind and name.
 */
async function storeTerrainUpload(target: UploadTarget, request: FastifyRequest, query: unknown, planId: string, principal: AuditPrincipal): Promise<TerrainLayerRow> {
  const { db, filesDir } = target;
  const plan = { id: planId };
  const config = target;
  const planDir = join(filesDir, 'terrain', plan.id);
  await mkdir(planDir, { recursive: true });
  const tempPath = join(planDir, `.incoming-${randomUUID()}.tif`);
  const layerId = randomUUID().replace(/-/g, '');
  const relativePath = join('terrain', plan.id, `${layerId}.tif`);
  const finalPath = join(filesDir, relativePath);
  let raster: GeoRaster | null = null;
  let renamed = false;
  try {
    const { received, fields } = await receiveUpload(request, tempPath, config.maxUploadBytes);
    const options = uploadQuery.safeParse({ ...(query as Record<string, unknown>), ...fields });
    if (!options.success) {
      const issue = options.error.issues[0];
      throw new ApiError(400, 'invalid_input', `${issue.path.join('.') || 'field'}: ${issue.message}`);
    }
    const kind = options.data.kind ?? 'elevation';
    if (received.bytes === 0) throw new ApiError(400, 'empty_upload', 'file: the upload is empty; send a GeoTIFF');
    if (!looksLikeTiff(received.head)) throw new ApiError(415, 'not_tiff', 'file: not a TIFF file (GeoTIFF expected: it starts with II*\\0 or MM\\0*)');
    try {
      raster = await openGeoRaster(tempPath);
    } catch (error) {
      if (error instanceof RasterError) throw new ApiError(STATUS_FOR[error.code], error.code, `file: ${error.message}`);
      throw error;
    }
    const cells = raster.widthPx * raster.heightPx;
    if (cells > config.maxRasterCells) {
      throw new ApiError(413, 'raster_too_large', `file: the raster is ${raster.widthPx} × ${raster.heightPx} = ${cells} cells; the limit is ${config.maxRasterCells} cells (EARSHOT_MAX_RASTER_CELLS)`);
    }
    const box = raster.boundsLonLat;
    if (!(box.west >= -180.5 && box.east <= 180.5 && box.south >= -90.5 && box.north <= 90.5 && box.west < box.east && box.south < box.north)) {
      throw new ApiError(422, 'bad_georeferencing', `file: the georeferencing places the raster outside the Earth (${fmt(box)})`);
    }
    if (!(raster.resolutionM.x > 0.01 && raster.resolutionM.y > 0.01 && raster.resolutionM.x < 100_000 && raster.resolutionM.y < 100_000)) {
      throw new ApiError(422, 'bad_georeferencing', `file: implausible pixel size ${raster.resolutionM.x.toFixed(3)} × ${raster.resolutionM.y.toFixed(3)} m`);
    }
    try {
      await raster.verifyBlockExtents();
    } catch (error) {
      if (error instanceof RasterError) throw new ApiError(422, 'corrupt_raster', `file: ${error.message}`);
      throw error;
    }
    await sampleBlocks(raster);
    const extent = await planExtent(db, plan.id);
    if (extent && !intersects(box, extent)) {
      throw new ApiError(422, 'no_overlap', `file: the layer (${fmt(box)}) does not overlap the plan's sites, gateways and nodes (${fmt(extent)})`);
    }
    const info = raster;
    const { row } = await createTerrainLayerWith(
      db,
      plan.id,
      {
        id: layerId,
        kind,
        name: options.data.name ?? `${kind === 'clutter' ? 'clutter' : 'elevation'} ${info.widthPx}×${info.heightPx}`,
        filePath: relativePath,
        fileBytes: BigInt(received.bytes),
        sha256: received.sha256,
        widthPx: info.widthPx,
        heightPx: info.heightPx,
        epsg: info.crs.epsg,
        proj4: info.crs.proj4,
        geoTransform: [...info.geoTransform],
        west: box.west,
        south: box.south,
        east: box.east,
        north: box.north,
        resolutionM: Math.min(info.resolutionM.x, info.resolutionM.y),
        noData: info.noData === null || Number.isNaN(info.noData) ? null : info.noData,
        createdById: principal.userId ?? null,
      },
      (created) => ({ principal, action: 'create', entity: 'terrain_layer', entityId: created.id, detail: { planId: plan.id, kind, name: created.name, fileBytes: received.bytes, sha256: received.sha256 } }),
      async () => {
        await info.close();
        raster = null;
        await rename(tempPath, finalPath);
        renamed = true;
      },
    );
    return row;
  } catch (error) {
    if (renamed) await rm(finalPath, { force: true });
    throw error;
  } finally {
    if (raster) await (raster as GeoRaster).close();
    await rm(tempPath, { force: true });
  }
}

/** Reads the upload (raw body or multipart with one file part) into `tempPath`; returns form fields too. */
async function receiveUpload(request: FastifyRequest, tempPath: string, limit: number): Promise<{ received: Received; fields: Record<string, string> }> {
  const fields: Record<string, string> = {};
  // The CLI's loopback route sends a raw body and has no multipart parser registered.
  if (typeof request.isMultipart === 'function' && request.isMultipart()) {
    let received: Received | null = null;
    for await (const part of request.parts()) {
      if (part.type === 'file') {
        if (received) {
          part.file.resume();
          throw new ApiError(400, 'invalid_input', 'file: send exactly one file');
        }
        received = await receive(part.file, tempPath, limit);
        if (part.file.truncated) throw new ApiError(413, 'payload_too_large', `file: larger than the upload limit of ${formatBytes(limit)} (EARSHOT_MAX_UPLOAD_MB)`);
      } else if (typeof part.value === 'string') {
        assertCleanText(`${part.fieldname} (form field name)`, part.fieldname, { singleLine: true });
        assertCleanText(part.fieldname, part.value);
        fields[part.fieldname] = part.value;
      }
    }
    if (!received) throw new ApiError(400, 'invalid_input', 'file: the multipart form has no file part');
    return { received, fields };
  }
  const body = request.body as Readable | undefined;
  if (!body || typeof (body as Readable).pipe !== 'function') {
    throw new ApiError(415, 'unsupported_media_type', `send the GeoTIFF as the body with Content-Type: image/tiff, or as multipart/form-data (got ${request.headers['content-type'] ?? 'no content type'})`);
  }
  return { received: await receive(body, tempPath, limit), fields };
}

