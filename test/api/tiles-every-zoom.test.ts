// Hillshade and coverage tiles at every zoom 0–22 (issue 17), over a UTM 33N DEM and over a
// geographic (EPSG:4326) one: the tile over the DEM's centre, its east and south neighbours and, at
// zooms 0–2, every tile of the world. The rule: a valid tile address always answers 200 with a
// 256 × 256 PNG (transparent where there is no data; hillshade marks it `x-earshot-tile:
// empty | too-coarse`), never a 5xx; tiles over the centre carry data from the zoom where the
// raster is worth reading; addresses outside 0 … 2^z − 1 answer 400.
import { afterAll, beforeAll, expect, it } from 'vitest';
import proj4 from 'proj4';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { decodePng } from '../../server/terrain/png.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const SIZE = 200;
const CELL_M = 30;
const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';

interface DemCase {
  name: string;
  bytes: Buffer;
  centre: { lat: number; lon: number };
}

function utmDem(): DemCase {
  const dem = makeSyntheticDem(SIZE, SIZE, CELL_M, 5, 3);
  const [x0, y0] = [500_000, 4_100_000];
  const [lon, lat] = proj4(UTM33, 'WGS84', [x0 + (SIZE / 2) * CELL_M, y0 - (SIZE / 2) * CELL_M]) as [number, number];
  return { name: 'UTM 33N', bytes: Buffer.from(writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data: dem.elevationM, geoTransform: [x0, CELL_M, 0, y0, 0, -CELL_M], epsg: 32633, noData: -9999, tiled: { tileSizePx: 64 }, compression: 'deflate' })), centre: { lat, lon } };
}

function geographicDem(): DemCase {
  const dem = makeSyntheticDem(SIZE, SIZE, CELL_M, 5, 4);
  // 1 arc-second cells (≈ 31 × 22 m at 45.5° N): the raster spans 200″ × 200″.
  const step = 1 / 3600;
  const west = -71.1;
  const north = 45.55;
  return { name: 'EPSG:4326', bytes: Buffer.from(writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data: dem.elevationM, geoTransform: [west, step, 0, north, 0, -step], epsg: 4326, noData: -9999 })), centre: { lat: north - (SIZE / 2) * step, lon: west + (SIZE / 2) * step } };
}

function tileOf(lat: number, lon: number, z: number): { x: number; y: number } {
  const n = 2 ** z;
  const rad = (lat * Math.PI) / 180;
  return { x: Math.floor(((lon + 180) / 360) * n), y: Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n) };
}

/** The tiles asked at zoom z: all of them at zooms 0–2, else the centre's tile and its east and south neighbours. */
function tilesAt(z: number, centre: { lat: number; lon: number }): Array<{ x: number; y: number; centre: boolean }> {
  const n = 2 ** z;
  const c = tileOf(centre.lat, centre.lon, z);
  const out: Array<{ x: number; y: number; centre: boolean }> = [];
  if (z <= 2) {
    for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) out.push({ x, y, centre: x === c.x && y === c.y });
    return out;
  }
  for (let dy = 0; dy <= 1; dy++) {
    for (let dx = 0; dx <= 1; dx++) {
      if (dx === 1 && dy === 1) continue;
      const x = c.x + dx;
      const y = c.y + dy;
      if (x >= 0 && y >= 0 && x < n && y < n) out.push({ x, y, centre: dx === 0 && dy === 0 });
    }
  }
  return out;
}

function opaquePixels(png: Buffer): number {
  const decoded = decodePng(png);
  expect(decoded.widthPx).toBe(256);
  expect(decoded.heightPx).toBe(256);
  const channels = decoded.colour === 'rgba' ? 4 : decoded.colour === 'grey-alpha' ? 2 : 0;
  expect(channels, `PNG colour ${decoded.colour}`).toBeGreaterThan(0);
  let opaque = 0;
  for (let i = channels - 1; i < decoded.pixels.length; i += channels) if (decoded.pixels[i] > 0) opaque++;
  return opaque;
}

describeEngines('tiles at every zoom 0–22', (engine) => {
  let t: TestApp;
  const auth = () => bearer(t.tokens.planner);
  const plans: Array<DemCase & { planId: string; runId: string }> = [];

  beforeAll(async () => {
    t = await createTestApp(engine, { env: { EARSHOT_WORKERS: '1' } });
    for (const dem of [utmDem(), geographicDem()]) {
      const plan = await t.app.inject({ method: 'POST', url: '/api/v1/plans', headers: auth(), payload: { name: `Tiles ${dem.name}` } });
      const planId = (plan.json() as { id: string }).id;
      const upload = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/terrain`, headers: { ...auth(), 'content-type': 'image/tiff' }, payload: dem.bytes });
      expect(upload.statusCode, upload.body).toBe(201);
      const gateway = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/gateways`, headers: auth(), payload: { name: 'Mast', ...dem.centre, antennaHeightAglM: 15 } });
      expect(gateway.statusCode, gateway.body).toBe(201);
      const run = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/coverage`, headers: auth(), payload: { radiusKm: 2, mode: 'fast', sf: 9 } });
      expect(run.statusCode, run.body).toBe(202);
      const runId = (run.json() as { id: string }).id;
      const started = Date.now();
      for (;;) {
        const got = (await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/coverage/${runId}`, headers: auth() })).json() as { status: string; error?: string };
        if (got.status === 'done') break;
        if (got.status === 'failed' || Date.now() - started > 90_000) throw new Error(`coverage run ${got.status}: ${got.error ?? ''}`);
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
      plans.push({ ...dem, planId, runId });
    }
  }, 180_000);
  afterAll(async () => t?.close());

  it('hillshade and coverage: 200 and a 256-px PNG at every zoom 0–22 over both DEMs; data over the centre from zoom 11 to 22', async () => {
    for (const p of plans) {
      const shadedAt: number[] = [];
      const colouredAt: number[] = [];
      for (let z = 0; z <= 22; z++) {
        for (const tile of tilesAt(z, p.centre)) {
          const where = `${p.name} z${z}/${tile.x}/${tile.y}`;
          const shade = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${p.planId}/terrain/tiles/${z}/${tile.x}/${tile.y}.png`, headers: auth() });
          expect(shade.statusCode, `hillshade ${where}: ${shade.body.slice(0, 200)}`).toBe(200);
          expect(shade.headers['content-type']).toBe('image/png');
          const shaded = opaquePixels(shade.rawPayload);
          // The header tells a transparent tile, and only a transparent one.
          expect(shade.headers['x-earshot-tile'] === undefined, `hillshade ${where}`).toBe(shaded > 0);
          if (tile.centre && shaded > 0) shadedAt.push(z);

          const coverage = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${p.planId}/coverage/${p.runId}/tiles/${z}/${tile.x}/${tile.y}.png`, headers: auth() });
          expect(coverage.statusCode, `coverage ${where}: ${coverage.body.slice(0, 200)}`).toBe(200);
          expect(coverage.headers['content-type']).toBe('image/png');
          if (tile.centre && opaquePixels(coverage.rawPayload) > 0) colouredAt.push(z);
        }
      }
      // A 6 km DEM is a few pixels wide at zoom 11 (76 m per tile pixel at 45° N) and fills the tile beyond zoom 14.
      for (let z = 11; z <= 22; z++) {
        expect(shadedAt, `${p.name}: hillshade over the centre at zoom ${z}`).toContain(z);
        expect(colouredAt, `${p.name}: coverage over the mast at zoom ${z}`).toContain(z);
      }
    }
  }, 240_000);

  it('addresses outside the world answer 400 in the error shape, never 5xx', async () => {
    const p = plans[0];
    for (const [z, x, y] of [[0, 1, 0], [0, 0, 1], [3, 8, 0], [22, 2 ** 22, 0]] as const) {
      const shade = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${p.planId}/terrain/tiles/${z}/${x}/${y}.png`, headers: auth() });
      expect(shade.statusCode, `hillshade ${z}/${x}/${y}`).toBe(400);
      expect((shade.json() as { error: { code: string } }).error.code).toBe('invalid_input');
      const coverage = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${p.planId}/coverage/${p.runId}/tiles/${z}/${x}/${y}.png`, headers: auth() });
      expect(coverage.statusCode, `coverage ${z}/${x}/${y}`).toBe(400);
      expect((coverage.json() as { error: { code: string } }).error.code).toBe('invalid_input');
    }
    const tooDeep = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${p.planId}/coverage/${p.runId}/tiles/23/0/0.png`, headers: auth() });
    expect(tooDeep.statusCode).toBe(400);
  });
});
