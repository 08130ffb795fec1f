// Coverage runs through the API on both engines: start (202), lifecycle to
// done, summary, cross-team 404, roles, limits (radius beyond the terrain,
// gateway outside it, cell ceiling), cancel, map tiles (PNG decoded here)
// and the GeoTIFF export read back with geotiff.js and gdalinfo.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inflateSync } from 'node:zlib';
import proj4 from 'proj4';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../server/terrain/raster.ts';
import { resultDir } from '../../server/db/files.ts';
import { MARGIN_CLASSES } from '../../server/coverage/tiles.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const ORIGIN_X = 500_000;
const ORIGIN_Y = 4_100_000;
const CELL_M = 30;
const SIZE = 300;

function demBytes(): Buffer {
  const dem = makeSyntheticDem(SIZE, SIZE, CELL_M, 9, 1);
  return Buffer.from(writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data: dem.elevationM, geoTransform: [ORIGIN_X, CELL_M, 0, ORIGIN_Y, 0, -CELL_M], epsg: 32633, noData: -9999 }));
}

function lonLatOf(col: number, row: number): { lat: number; lon: number } {
  const [lon, lat] = proj4(UTM33, 'WGS84', [ORIGIN_X + (col + 0.5) * CELL_M, ORIGIN_Y - (row + 0.5) * CELL_M]) as [number, number];
  return { lat, lon };
}

/** Decodes an RGBA PNG (filters 0–4) to its pixels. */
function decodePng(bytes: Buffer): { width: number; height: number; rgba: Uint8Array } {
  expect(bytes.subarray(0, 8).toString('hex')).toBe('89504e470d0a1a0a');
  let offset = 8;
  let width = 0;
  let height = 0;
  const idat: Buffer[] = [];
  while (offset < bytes.length) {
    const length = bytes.readUInt32BE(offset);
    const type = bytes.subarray(offset + 4, offset + 8).toString('ascii');
    const data = bytes.subarray(offset + 8, offset + 8 + length);
    if (type === 'IHDR') {
      width = data.readUInt32BE(0);
      height = data.readUInt32BE(4);
      expect(data[8]).toBe(8);
      expect(data[9]).toBe(6);
    }
    if (type === 'IDAT') idat.push(data);
    offset += 12 + length;
  }
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * 4;
  const out = new Uint8Array(stride * height);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    for (let i = 0; i < stride; i++) {
      const x = raw[y * (stride + 1) + 1 + i];
      const a = i >= 4 ? out[y * stride + i - 4] : 0;
      const b = y > 0 ? out[(y - 1) * stride + i] : 0;
      const c = i >= 4 && y > 0 ? out[(y - 1) * stride + i - 4] : 0;
      let value = x;
      if (filter === 1) value = x + a;
      else if (filter === 2) value = x + b;
      else if (filter === 3) value = x + ((a + b) >> 1);
      else if (filter === 4) {
        const p = a + b - c;
        const pa = Math.abs(p - a);
        const pb = Math.abs(p - b);
        const pc = Math.abs(p - c);
        value = x + (pa <= pb && pa <= pc ? a : pb <= pc ? b : c);
      }
      out[y * stride + i] = value & 0xff;
    }
  }
  return { width, height, rgba: out };
}

function tileOf(lat: number, lon: number, z: number): { x: number; y: number } {
  const n = 2 ** z;
  const x = Math.floor(((lon + 180) / 360) * n);
  const latRad = (lat * Math.PI) / 180;
  const y = Math.floor(((1 - Math.log(Math.tan(latRad) + 1 / Math.cos(latRad)) / Math.PI) / 2) * n);
  return { x, y };
}

describeEngines('coverage API', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  let planId = '';
  let gatewayId = '';
  const dir = mkdtempSync(join(tmpdir(), 'earshot-cov-api-'));
  const as = (who: keyof TestApp['tokens']) => bearer(t.tokens[who]);

  async function waitFor(runId: string, statuses: string[], timeoutMs = 90_000) {
    const started = Date.now();
    for (;;) {
      const got = await http.get(`/api/v1/plans/${planId}/coverage/${runId}`).set(as('viewer'));
      expect(got.status).toBe(200);
      if (statuses.includes(got.body.status)) return got.body;
      if (Date.now() - started > timeoutMs) throw new Error(`run ${runId} still ${got.body.status}`);
      await new Promise((resolve) => setTimeout(resolve, 200));
    }
  }

  beforeAll(async () => {
    t = await createTestApp(engine, { env: { EARSHOT_WORKERS: '1' } });
    http = request(t.app.server);
    const plan = await http.post('/api/v1/plans').set(as('planner')).send({ name: 'Coverage test plan (synthetic terrain)' });
    expect(plan.status).toBe(201);
    planId = plan.body.id;
    const upload = await http.post(`/api/v1/plans/${planId}/terrain`).set(as('planner')).set('Content-Type', 'image/tiff').send(demBytes());
    expect(upload.status, JSON.stringify(upload.body)).toBe(201);
    const centre = lonLatOf(150, 150);
    const gateway = await http.post(`/api/v1/plans/${planId}/gateways`).set(as('planner')).send({ name: 'Ridge mast', ...centre, antennaHeightAglM: 15 });
    expect(gateway.status, JSON.stringify(gateway.body)).toBe(201);
    gatewayId = gateway.body.id;
    for (const [name, col, row] of [['Probe near', 160, 150], ['Probe mid', 150, 200], ['Probe beyond the radius', 150, 262]] as const) {
      const node = await http.post(`/api/v1/plans/${planId}/nodes`).set(as('planner')).send({ name, deviceType: 'soil-probe', ...lonLatOf(col, row) });
      expect(node.status, JSON.stringify(node.body)).toBe(201);
    }
  });
  afterAll(async () => {
    await t?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('runs a fast coverage to done: 202 queued, then progress, summary with shares, node classes and per-gateway load', async () => {
    const denied = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('installer')).send({ radiusKm: 3 });
    expect(denied.status).toBe(403);
    const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 3, mode: 'fast', sf: 9 });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    expect(['queued', 'running', 'done']).toContain(started.body.status);
    const done = await waitFor(started.body.id, ['done', 'failed']);
    expect(done.status, done.error).toBe('done');
    expect(done.progress).toBe(1);
    const s = done.summary;
    expect(s.cells).toBeGreaterThan(25_000);
    expect(s.served.share + s.marginal.share + s.unserved.share).toBeCloseTo(1, 6);
    // π·3² ≈ 28.3 km² of 30 m cells inside the radius.
    expect(s.areaKm2).toBeGreaterThan(27);
    expect(s.areaKm2).toBeLessThan(29.5);
    expect(s.nodes.total).toBe(3);
    expect(s.nodes.served + s.nodes.marginal + s.nodes.unserved + s.nodes.outside).toBe(3);
    expect(s.nodes.outside).toBe(1); // 112 cells × 30 m = 3.36 km from the mast, beyond 3 km
    expect(s.nodes.served).toBeGreaterThanOrEqual(1); // 300 m from a 15 m mast
    expect(s.gateways[0].nodes).toBe(s.nodes.served + s.nodes.marginal);
    expect(s.gateways[0].gatewayId).toBe(gatewayId);
    // Server-sent events of a finished run: its last progress event, then the end event.
    const events = await http.get(`/api/v1/plans/${planId}/coverage/${started.body.id}/events`).set(as('viewer')).buffer(true).parse((res, cb) => {
      let text = '';
      res.on('data', (c: Buffer) => (text += c.toString('utf8')));
      res.on('end', () => cb(null, text));
    });
    expect(events.status).toBe(200);
    expect(events.headers['content-type']).toMatch(/text\/event-stream/);
    expect(events.body as string).toMatch(/event: progress\ndata: \{"status":"done","progress":1/);
    expect(events.body as string).toMatch(/event: end/);
    const list = await http.get(`/api/v1/plans/${planId}/coverage`).set(as('viewer'));
    expect(list.status).toBe(200);
    expect(list.body.items.some((item: { id: string }) => item.id === started.body.id)).toBe(true);

    // Another team's planner sees neither the plan nor the run.
    for (const path of [`/api/v1/plans/${planId}/coverage`, `/api/v1/plans/${planId}/coverage/${started.body.id}`, `/api/v1/plans/${planId}/coverage/${started.body.id}.tif`, `/api/v1/plans/${planId}/coverage/${started.body.id}/tiles/13/0/0.png`]) {
      const other = await http.get(path).set(as('otherTeamPlanner'));
      expect(other.status, path).toBe(404);
    }
    const otherStart = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('otherTeamPlanner')).send({ radiusKm: 3 });
    expect(otherStart.status).toBe(404);

    // GeoTIFF export: Float32 margin on the DEM's grid, NoData −9999, georeferenced in EPSG:32633.
    const tif = await http.get(`/api/v1/plans/${planId}/coverage/${started.body.id}.tif`).set(as('viewer')).buffer(true).parse((res, cb) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expect(tif.status).toBe(200);
    expect(tif.headers['content-type']).toBe('image/tiff');
    const tifPath = join(dir, 'margin.tif');
    writeFileSync(tifPath, tif.body as Buffer);
    const raster = await openGeoRaster(tifPath);
    expect(raster.crs.epsg).toBe(32633);
    expect(raster.sampleFormat).toBe('float32');
    expect(raster.noData).toBe(-9999);
    expect(Math.abs(raster.geoTransform[1])).toBe(CELL_M);
    // The grid is aligned with the DEM's cells.
    expect(((raster.geoTransform[0] - ORIGIN_X) / CELL_M) % 1).toBe(0);
    const all = await raster.readWindow(0, 0, raster.widthPx, raster.heightPx);
    const centre = raster.lonLatToPixel(lonLatOf(150, 150).lon, lonLatOf(150, 150).lat);
    const marginAtMast = all[Math.floor(centre.y) * raster.widthPx + Math.floor(centre.x)];
    expect(marginAtMast).toBeGreaterThan(20);
    expect(Number.isNaN(all[0])).toBe(true); // the corner lies outside the 3 km circle
    await raster.close();
    if (spawnSync('which', ['gdalinfo']).status === 0) {
      const info = JSON.parse(execFileSync('gdalinfo', ['-json', tifPath], { encoding: 'utf8' })) as { bands: Array<{ noDataValue: number; type: string }>; coordinateSystem: { wkt: string } };
      expect(info.bands[0].type).toBe('Float32');
      expect(info.bands[0].noDataValue).toBe(-9999);
      expect(info.coordinateSystem.wkt).toMatch(/UTM zone 33N/);
    }

    // A tile over the mast is a 256 × 256 PNG with the strongest class's colour near the mast.
    const { lat, lon } = lonLatOf(150, 150);
    const z = 14;
    const { x, y } = tileOf(lat, lon, z);
    const tile = await http.get(`/api/v1/plans/${planId}/coverage/${started.body.id}/tiles/${z}/${x}/${y}.png`).set(as('viewer')).buffer(true).parse((res, cb) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expect(tile.status).toBe(200);
    expect(tile.headers['content-type']).toBe('image/png');
    const png = decodePng(tile.body as Buffer);
    expect(png.width).toBe(256);
    const colours = new Set<string>();
    for (let i = 0; i < png.rgba.length; i += 4) if (png.rgba[i + 3] > 0) colours.add(`${png.rgba[i]},${png.rgba[i + 1]},${png.rgba[i + 2]}`);
    expect(colours.size).toBeGreaterThan(0);
    const palette = new Set(MARGIN_CLASSES.map((c) => c.rgba.slice(0, 3).join(',')));
    for (const colour of colours) expect(palette.has(colour), colour).toBe(true);
    expect(colours.has(MARGIN_CLASSES[0].rgba.slice(0, 3).join(','))).toBe(true);
    const legend = await http.get('/api/v1/coverage/legend').set(as('viewer'));
    expect(legend.status).toBe(200);
    expect(legend.body.classes).toHaveLength(MARGIN_CLASSES.length);
  });

  it('a radius past the terrain is clipped: the run succeeds, cells without terrain are NoData, the summary gives the share of the disc with terrain', async () => {
    // The DEM is 9 km square around a mast at its centre: a 6 km disc reaches 1.5 km past every edge.
    const far = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 6, mode: 'fast', gatewayIds: [gatewayId] });
    expect(far.status, JSON.stringify(far.body)).toBe(202);
    const done = await waitFor(far.body.id, ['done', 'failed']);
    expect(done.status, done.error).toBe('done');
    // Disc of 6 km (113.1 km²) on a 9 km square centred on it: minus four circle segments beyond the edges,
    // each r²·acos(d/r) − d·√(r² − d²) = 36·acos(0.75) − 4.5·√15.75 = 8.16 km² → 80.5 km², a share of 0.71.
    expect(done.summary.terrain.discShare).toBeGreaterThan(0.66);
    expect(done.summary.terrain.discShare).toBeLessThan(0.76);
    expect(done.summary.terrain.note).toMatch(/reaches past the terrain/);
    const raster = await openGeoRaster(join(resultDir(t.config, far.body.id), 'margin.tif'));
    expect(raster.widthPx).toBeLessThanOrEqual(SIZE);
    await raster.close();
  });

  it('refuses a gateway outside the terrain and a grid above the cell ceiling, with clear 4xx', async () => {
    const before = process.env.EARSHOT_MAX_COVERAGE_CELLS;
    process.env.EARSHOT_MAX_COVERAGE_CELLS = '1000';
    try {
      const big = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 3 });
      expect(big.status).toBe(413);
      expect(big.body.error.code).toBe('too_many_cells');
    } finally {
      if (before === undefined) delete process.env.EARSHOT_MAX_COVERAGE_CELLS;
      else process.env.EARSHOT_MAX_COVERAGE_CELLS = before;
    }
    const outside = await http.post(`/api/v1/plans/${planId}/gateways`).set(as('planner')).send({ name: 'Elsewhere', lat: 10, lon: 10 });
    expect(outside.status).toBe(201);
    const refused = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 1, gatewayIds: [outside.body.id] });
    expect(refused.status).toBe(422);
    expect(refused.body.error.code).toBe('site_outside_terrain');
    const bad = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: -1 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/radiusKm/);
    await http.delete(`/api/v1/plans/${planId}/gateways/${outside.body.id}`).set(as('planner'));
  });

  it('cancel: a queued or running run ends cancelled, stays cancelled, and leaves no result', async () => {
    const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 4, gatewayIds: [gatewayId] });
    expect(started.status).toBe(202);
    const cancelled = await http.post(`/api/v1/plans/${planId}/coverage/${started.body.id}/cancel`).set(as('planner'));
    expect(cancelled.status).toBe(200);
    expect(cancelled.body.status).toBe('cancelled');
    await new Promise((resolve) => setTimeout(resolve, 3000));
    const after = await waitFor(started.body.id, ['cancelled', 'done', 'failed']);
    expect(after.status).toBe('cancelled');
    expect(existsSync(resultDir(t.config, started.body.id))).toBe(false);
    const again = await http.post(`/api/v1/plans/${planId}/coverage/${started.body.id}/cancel`).set(as('planner'));
    expect(again.status).toBe(409);
  });

  it('a refused progress write neither fails the run nor escapes as an unhandled rejection: the run still ends done', async () => {
    // Refuse only the progress updates of a running row (status stays running, progress below 1);
    // the claim (queued → running) and the final write (→ done) pass.
    await t.db.raw.exec(`CREATE OR REPLACE FUNCTION earshot_test_refuse_progress() RETURNS trigger AS $$ BEGIN RAISE EXCEPTION 'forced progress write failure'; END $$ LANGUAGE plpgsql`);
    await t.db.raw.exec(`CREATE TRIGGER earshot_test_refuse_progress BEFORE UPDATE ON "CoverageRun" FOR EACH ROW WHEN (OLD.status = 'running' AND NEW.status = 'running') EXECUTE FUNCTION earshot_test_refuse_progress()`);
    const unhandled: unknown[] = [];
    const onUnhandled = (reason: unknown) => unhandled.push(reason);
    process.on('unhandledRejection', onUnhandled);
    try {
      const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 3, mode: 'fast', gatewayIds: [gatewayId] });
      expect(started.status, JSON.stringify(started.body)).toBe(202);
      const done = await waitFor(started.body.id, ['done', 'failed']);
      expect(done.status, done.error).toBe('done');
      expect(done.progress).toBe(1);
      await new Promise((resolve) => setTimeout(resolve, 100));
      expect(unhandled).toEqual([]);
    } finally {
      process.off('unhandledRejection', onUnhandled);
      await t.db.raw.exec('DROP TRIGGER IF EXISTS earshot_test_refuse_progress ON "CoverageRun"');
    }
  });

  it('uses the plan\'s clutter layer: a cell behind a dense-urban block loses margin (more than one over open land); the summary names the layer', async () => {
    // Clutter on the DEM's own grid, earshot's class codes (2 open/rural, 6 dense urban):
    // a dense-urban block 15–25 cells east of the mast, open land elsewhere.
    const codes = new Uint8Array(SIZE * SIZE).fill(2);
    for (let row = 140; row <= 160; row++) for (let col = 165; col <= 175; col++) codes[row * SIZE + col] = 6;
    const clutterTif = Buffer.from(writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data: codes, geoTransform: [ORIGIN_X, CELL_M, 0, ORIGIN_Y, 0, -CELL_M], epsg: 32633, noData: 0 }));
    const upload = await http.post(`/api/v1/plans/${planId}/terrain?kind=clutter&name=Synthetic%20town%20block`).set(as('planner')).set('Content-Type', 'image/tiff').send(clutterTif);
    expect(upload.status, JSON.stringify(upload.body)).toBe(201);
    const runWith = async (useClutter: boolean) => {
      const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as('planner')).send({ radiusKm: 2, mode: 'fast', gatewayIds: [gatewayId], useClutter });
      expect(started.status, JSON.stringify(started.body)).toBe(202);
      const done = await waitFor(started.body.id, ['done', 'failed']);
      expect(done.status, done.error).toBe('done');
      const raster = await openGeoRaster(join(resultDir(t.config, started.body.id), 'margin.tif'));
      const all = await raster.readWindow(0, 0, raster.widthPx, raster.heightPx);
      const at = (col: number, row: number) => {
        const { lat, lon } = lonLatOf(col, row);
        const p = raster.lonLatToPixel(lon, lat);
        return all[Math.floor(p.y) * raster.widthPx + Math.floor(p.x)];
      };
      // Row 150 through the mast: cells behind the block (east) and over open land (west).
      const behindRow = Array.from({ length: 25 }, (_, i) => at(176 + i, 150));
      const openRow = Array.from({ length: 25 }, (_, i) => at(100 + i, 150));
      const margins = { behind: at(200, 150), open: at(100, 150), behindRow, openRow };
      await raster.close();
      return { summary: done.summary, margins };
    };
    const bare = await runWith(false);
    const cluttered = await runWith(true);
    expect(bare.summary.clutter.layerId).toBeNull();
    expect(bare.summary.clutter.note).toMatch(/no clutter layer/);
    expect(cluttered.summary.clutter.layerId).toBe(upload.body.id);
    expect(cluttered.summary.clutter.name).toBe('Synthetic town block');
    // Representative heights: P.1812-8 Table 2 (dense urban 20 m, open/rural 0 m) without plan overrides.
    expect(cluttered.summary.clutter.heightsM.dense_urban).toBe(20);
    expect(cluttered.summary.clutter.heightsM.open).toBe(0);
    expect(Number.isFinite(bare.margins.behind)).toBe(true);
    // Behind the 20 m block at 450–750 m east: the block adds diffraction loss (P.1812-8 §3.2 heights on
    // intermediate points) to the cells it shadows, by more than 1 dB at the deepest.
    const behindLoss = bare.margins.behindRow.map((m, i) => m - cluttered.margins.behindRow[i]);
    expect(Math.max(...behindLoss)).toBeGreaterThan(1);
    // Open land (R = 0 m, Table 2) to the west adds no clutter: every cell within 0.5 dB of the run without the layer.
    const openLoss = bare.margins.openRow.map((m, i) => m - cluttered.margins.openRow[i]);
    expect(Math.max(...openLoss.map(Math.abs))).toBeLessThanOrEqual(0.5);
  });
});
