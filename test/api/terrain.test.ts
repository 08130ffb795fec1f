// Terrain upload API on both engines: raw and multipart uploads, list with extent/CRS/resolution/size,
// delete, roles (403), team isolation (404), each bad upload refused with its status and nothing
// half-stored (no row without a file, no file without a row), and hillshade tiles.
import { existsSync, mkdirSync, readdirSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, beforeEach, expect, it } from 'vitest';
import request from 'supertest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { patchTag } from '../unit/terrain/tiff-patch.ts';
import { sweepOrphanFiles } from '../../server/db/files.ts';

// A 120 × 100 UTM 32N DEM at 30 m around 49.79° N, 6.1° E (synthetic hills), tiled 32 px, deflate.
const W = 120;
const H = 100;
const ORIGIN: [number, number] = [289500, 5521500];
function dem(options: { width?: number; height?: number; epsg?: number; origin?: [number, number]; compression?: 'none' | 'deflate' } = {}): Buffer {
  const width = options.width ?? W;
  const height = options.height ?? H;
  const data = new Int16Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) data[r * width + c] = Math.round(300 + 40 * Math.sin(c / 9) * Math.cos(r / 7) + c);
  const [x0, y0] = options.origin ?? ORIGIN;
  return Buffer.from(writeGeoTiff({ widthPx: width, heightPx: height, data, geoTransform: [x0, 30, 0, y0, 0, -30], epsg: options.epsg ?? 32632, noData: -32768, tiled: { tileSizePx: 32 }, compression: options.compression ?? 'deflate' }));
}

describeEngines('terrain layers API', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  beforeAll(async () => {
    // Small limits so the 413 cases need small files: 1 MB uploads, 200 000 cells.
    t = await createTestApp(engine, { env: { EARSHOT_MAX_UPLOAD_MB: '1', EARSHOT_MAX_RASTER_CELLS: '200000' } });
    http = request(t.app.server);
  });
  afterAll(async () => t?.close());
  beforeEach(async () => t.reset());

  const as = (who: keyof TestApp['tokens']) => bearer(t.tokens[who]);
  async function planWithSite(lat = 49.8, lon = 6.1) {
    const plan = await http.post('/api/v1/plans').set(as('planner')).send({ name: 'Hollow Creek meters' });
    expect(plan.status).toBe(201);
    const site = await http.post(`/api/v1/plans/${plan.body.id}/sites`).set(as('planner')).send({ name: 'Water tower', lat, lon });
    expect(site.status).toBe(201);
    return plan.body.id as string;
  }
  const upload = (planId: string, body: Buffer, query = '', who: keyof TestApp['tokens'] = 'planner') =>
    http.post(`/api/v1/plans/${planId}/terrain${query}`).set(as(who)).set('Content-Type', 'image/tiff').send(body);

  async function expectNothingStored(planId: string) {
    expect(await t.db.prisma.terrainLayer.count({ where: { planId } })).toBe(0);
    const dir = join(t.config.filesDir, 'terrain', planId);
    expect(existsSync(dir) ? readdirSync(dir) : []).toEqual([]);
  }

  it('raw image/tiff upload → 201 with extent, CRS, resolution and size; the file is stored; GET lists it', async () => {
    const planId = await planWithSite();
    const response = await upload(planId, dem(), '?name=Creek%20DEM%2030%20m');
    expect(response.status, JSON.stringify(response.body)).toBe(201);
    expect(response.body).toMatchObject({ kind: 'elevation', name: 'Creek DEM 30 m', widthPx: W, heightPx: H, cells: W * H, crs: { epsg: 32632, name: 'WGS 84 / UTM zone 32N' }, resolutionM: 30, noData: -32768 });
    expect(response.body.geoTransform).toEqual([...ORIGIN.slice(0, 1), 30, 0, ORIGIN[1], 0, -30]);
    expect(response.body.extent.west).toBeGreaterThan(6.0);
    expect(response.body.extent.east).toBeLessThan(6.2);
    expect(response.body.fileBytes).toBe(dem().length);
    const row = await t.db.prisma.terrainLayer.findFirstOrThrow({ where: { id: response.body.id } });
    expect(existsSync(join(t.config.filesDir, row.filePath))).toBe(true);
    const list = await http.get(`/api/v1/plans/${planId}/terrain`).set(as('viewer'));
    expect(list.status).toBe(200);
    expect(list.body.total).toBe(1);
    expect(list.body.items[0]).toMatchObject({ id: response.body.id, crs: { epsg: 32632 }, resolutionM: 30, widthPx: W, heightPx: H });
    const audit = await t.db.prisma.auditEntry.findFirst({ where: { entity: 'terrain_layer', entityId: response.body.id } });
    expect(audit?.action).toBe('create');
  });

  it('multipart upload with kind=clutter and a name field → 201 clutter layer', async () => {
    const planId = await planWithSite();
    const response = await http.post(`/api/v1/plans/${planId}/terrain`).set(as('planner')).field('kind', 'clutter').field('name', 'Land cover').attach('file', dem(), { filename: 'cover.tif', contentType: 'image/tiff' });
    expect(response.status, JSON.stringify(response.body)).toBe(201);
    expect(response.body).toMatchObject({ kind: 'clutter', name: 'Land cover' });
  });

  it('DELETE removes the row and the file (204), then 404', async () => {
    const planId = await planWithSite();
    const created = await upload(planId, dem());
    const row = await t.db.prisma.terrainLayer.findFirstOrThrow({ where: { id: created.body.id } });
    const gone = await http.delete(`/api/v1/plans/${planId}/terrain/${created.body.id}`).set(as('planner'));
    expect(gone.status).toBe(204);
    expect(existsSync(join(t.config.filesDir, row.filePath))).toBe(false);
    await expectNothingStored(planId);
    const again = await http.delete(`/api/v1/plans/${planId}/terrain/${created.body.id}`).set(as('planner'));
    expect(again.status).toBe(404);
  });

  it('roles and teams: a viewer cannot upload or delete (403); another team sees 404 everywhere', async () => {
    const planId = await planWithSite();
    expect((await upload(planId, dem(), '', 'viewer')).status).toBe(403);
    const created = await upload(planId, dem());
    expect(created.status).toBe(201);
    expect((await http.delete(`/api/v1/plans/${planId}/terrain/${created.body.id}`).set(as('installer'))).status).toBe(403);
    const other = [
      await upload(planId, dem(), '', 'otherTeamPlanner'),
      await http.get(`/api/v1/plans/${planId}/terrain`).set(as('otherTeamPlanner')),
      await http.delete(`/api/v1/plans/${planId}/terrain/${created.body.id}`).set(as('otherTeamPlanner')),
      await http.get(`/api/v1/plans/${planId}/terrain/tiles/14/8469/5600.png`).set(as('otherTeamPlanner')),
    ];
    for (const response of other) {
      expect(response.status).toBe(404);
      expect(response.body.error.code).toBe('not_found');
    }
    expect(await t.db.prisma.terrainLayer.count({ where: { planId } })).toBe(1);
    expect((await http.get(`/api/v1/plans/${planId}/terrain`)).status).toBe(401);
  });

  it('each bad upload gets its status and a clear message, and nothing is stored', async () => {
    const planId = await planWithSite();
    const good = dem();
    const noGeo = patchTag(patchTag(good, 33550, { newTag: 33551 }), 33922, { newTag: 33923 });
    const truncated = good.subarray(0, good.length - 3000);
    const garbled = Buffer.from(good);
    for (let i = good.length - 2500; i < good.length - 2000; i++) garbled[i] = 0xa5;
    const tooBig = Buffer.concat([Buffer.from([0x49, 0x49, 42, 0]), Buffer.alloc(1024 * 1024 + 100, 7)]);
    const cases: { name: string; send: () => request.Test; status: number; code: string; message: RegExp }[] = [
      { name: 'not a TIFF', send: () => upload(planId, Buffer.from('just some text, not an image')), status: 415, code: 'not_tiff', message: /not a TIFF/ },
      { name: 'empty body', send: () => upload(planId, Buffer.alloc(0)), status: 400, code: 'empty_upload', message: /empty/ },
      { name: 'JSON instead of a file', send: () => http.post(`/api/v1/plans/${planId}/terrain`).set(as('planner')).send({ tiff: 'no' }), status: 415, code: 'unsupported_media_type', message: /image\/tiff/ },
      { name: 'no georeferencing', send: () => upload(planId, Buffer.from(noGeo)), status: 422, code: 'no_georeferencing', message: /no georeferencing/ },
      { name: 'unsupported compression (JPEG)', send: () => upload(planId, Buffer.from(patchTag(good, 259, { shortValue: 7 }))), status: 415, code: 'unsupported_compression', message: /unsupported compression JPEG/ },
      { name: 'unsupported CRS', send: () => upload(planId, Buffer.from(writeGeoTiff({ widthPx: 8, heightPx: 8, data: new Int16Array(64), geoTransform: [3500000, 30, 0, 5500000, 0, -30], epsg: 31467, crsKind: 'projected' }))), status: 422, code: 'unsupported_crs', message: /EPSG:31467/ },
      { name: 'more cells than EARSHOT_MAX_RASTER_CELLS', send: () => upload(planId, dem({ width: 500, height: 500, compression: 'deflate' })), status: 413, code: 'raster_too_large', message: /500 × 500 = 250000 cells; the limit is 200000/ },
      { name: 'larger than EARSHOT_MAX_UPLOAD_MB', send: () => upload(planId, tooBig), status: 413, code: 'payload_too_large', message: /upload limit of 1 MB/ },
      { name: 'truncated tiles', send: () => upload(planId, Buffer.from(truncated)), status: 422, code: 'corrupt_raster', message: /truncated/ },
      { name: 'garbled tile data', send: () => upload(planId, garbled), status: 422, code: 'corrupt_raster', message: /cannot be decoded/ },
      { name: 'no overlap with the plan', send: () => upload(planId, dem({ origin: [500000, 4000000] })), status: 422, code: 'no_overlap', message: /does not overlap the plan/ },
      { name: 'bad kind', send: () => upload(planId, good, '?kind=lidar'), status: 400, code: 'invalid_input', message: /kind: must be elevation or clutter/ },
    ];
    for (const c of cases) {
      const response = await c.send();
      expect(response.status, `${c.name}: ${JSON.stringify(response.body)}`).toBe(c.status);
      expect(response.body.error.code, c.name).toBe(c.code);
      expect(response.body.error.message, c.name).toMatch(c.message);
      expect(JSON.stringify(response.body), c.name).not.toMatch(/at .*\.ts:\d+/);
      await expectNothingStored(planId);
    }
  });

  it('the start-up sweep removes hour-old files no row references (deleted plans, crashed uploads) and keeps the rest', async () => {
    const planId = await planWithSite();
    const created = await upload(planId, dem());
    const row = await t.db.prisma.terrainLayer.findFirstOrThrow({ where: { id: created.body.id } });
    const dir = join(t.config.filesDir, 'terrain', planId);
    const goneDir = join(t.config.filesDir, 'terrain', 'deleted-plan');
    mkdirSync(goneDir, { recursive: true });
    const old = new Date(Date.now() - 2 * 60 * 60 * 1000);
    const stale = [join(dir, '.incoming-crashed.tif'), join(goneDir, 'abc.tif')];
    for (const path of stale) {
      writeFileSync(path, 'x');
      utimesSync(path, old, old);
    }
    const fresh = join(dir, '.incoming-in-progress.tif');
    writeFileSync(fresh, 'x');
    utimesSync(join(t.config.filesDir, row.filePath), old, old);
    const removed = await sweepOrphanFiles(t.db, join(t.config.filesDir, 'terrain'), 60 * 60 * 1000);
    expect(removed.sort()).toEqual(stale.sort());
    expect(existsSync(fresh)).toBe(true);
    expect(existsSync(join(t.config.filesDir, row.filePath))).toBe(true);
  });

  it('a plan with no sites, gateways or nodes accepts any layer (nothing to overlap yet)', async () => {
    const plan = await http.post('/api/v1/plans').set(as('planner')).send({ name: 'Empty plan' });
    expect((await upload(plan.body.id, dem({ origin: [500000, 4000000] }))).status).toBe(201);
  });

  it('hillshade tiles: PNG over the data, cached with an ETag, transparent and flagged outside, 400 for bad tiles, 404 without terrain', async () => {
    const planId = await planWithSite();
    const noTerrain = await http.get(`/api/v1/plans/${planId}/terrain/tiles/12/2117/1400.png`).set(as('viewer'));
    expect(noTerrain.status).toBe(404);
    expect(noTerrain.body.error.code).toBe('no_terrain');
    expect((await upload(planId, dem())).status).toBe(201);
    // The DEM's centre (≈ 49.8° N, 6.1° E) at zoom 14: x = floor((6.1 + 180) / 360 · 2^14), y from the Mercator formula.
    const z = 14;
    const lat = 49.8 + 0.0; // inside the DEM
    const xTile = Math.floor(((6.1 + 180) / 360) * 2 ** z);
    const yTile = Math.floor(((1 - Math.log(Math.tan((lat * Math.PI) / 180) + 1 / Math.cos((lat * Math.PI) / 180)) / Math.PI) / 2) * 2 ** z);
    const path = `/api/v1/plans/${planId}/terrain/tiles/${z}/${xTile}/${yTile}.png`;
    const first = await http.get(path).set(as('viewer')).buffer(true).parse((res, done) => {
      const chunks: Buffer[] = [];
      res.on('data', (chunk: Buffer) => chunks.push(chunk));
      res.on('end', () => done(null, Buffer.concat(chunks)));
    });
    expect(first.status).toBe(200);
    expect(first.headers['content-type']).toBe('image/png');
    expect(first.headers['x-earshot-tile']).toBeUndefined();
    const png = first.body as Buffer;
    expect(png.subarray(0, 8)).toEqual(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]));
    expect(png.readUInt32BE(16)).toBe(256);
    expect(png.readUInt32BE(20)).toBe(256);
    const etag = first.headers.etag;
    expect((await http.get(path).set(as('viewer')).set('If-None-Match', etag)).status).toBe(304);
    const far = await http.get(`/api/v1/plans/${planId}/terrain/tiles/14/100/100.png`).set(as('viewer'));
    expect(far.status).toBe(200);
    expect(far.headers['x-earshot-tile']).toBe('empty');
    const bad = await http.get(`/api/v1/plans/${planId}/terrain/tiles/3/9/1.png`).set(as('viewer'));
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/does not exist at zoom 3/);
    const badZoom = await http.get(`/api/v1/plans/${planId}/terrain/tiles/30/1/1.png`).set(as('viewer'));
    expect(badZoom.status).toBe(400);
    expect(badZoom.body.error.message).toMatch(/^z: must be 0–24/);
  });
});
