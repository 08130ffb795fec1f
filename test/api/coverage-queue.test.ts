// Coverage runs on BullMQ queue workers (`npm run worker` processes) with
// Redis on 127.0.0.1:6379 and a shared PostgreSQL: a worker killed with
// SIGKILL mid-job → the job is taken back after its lock lapses, a second
// worker completes it exactly once, and no half-written result is left.
// Mandatory in CI (CI=true); elsewhere a visible skip when Redis or
// PostgreSQL is unreachable.
import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import proj4 from 'proj4';
import request from 'supertest';
import { afterAll, expect, it } from 'vitest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';
import { QueueWorkers, queueSuite, REDIS_URL, requireQueue } from '../helpers/queue-workers.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { resultDir } from '../../server/db/files.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const suite = queueSuite('coverage-queue');

const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const SIZE = 900;
const CELL_M = 30;

suite('coverage on BullMQ queue workers (Redis 127.0.0.1:6379, PostgreSQL)', () => {
  let t: TestApp | undefined;
  const pool = new QueueWorkers();
  afterAll(async () => {
    await t?.close();
    await pool.cleanUp();
  });

  const startWorker = (config: TestApp['config']) => pool.spawn(config);

  it('a worker killed with SIGKILL mid-job: the job is retried and completes once, with no half-written result', async () => {
    requireQueue();
    pool.usePrefix();
    t = await createTestApp('postgres', { env: { REDIS_URL } });
    const http = request(t.app.server);
    const as = bearer(t.tokens.planner);
    const plan = await http.post('/api/v1/plans').set(as).send({ name: 'Queue test plan (synthetic terrain)' });
    const dem = makeSyntheticDem(SIZE, SIZE, CELL_M, 4, 1);
    const bytes = Buffer.from(writeGeoTiff({ widthPx: SIZE, heightPx: SIZE, data: dem.elevationM, geoTransform: [500_000, CELL_M, 0, 4_100_000, 0, -CELL_M], epsg: 32633, noData: -9999 }));
    expect((await http.post(`/api/v1/plans/${plan.body.id}/terrain`).set(as).set('Content-Type', 'image/tiff').send(bytes)).status).toBe(201);
    const [lon, lat] = proj4(UTM33, 'WGS84', [500_000 + 450.5 * CELL_M, 4_100_000 - 450.5 * CELL_M]) as [number, number];
    for (const [name, dLon] of [['North mast', 0], ['East mast', 0.02]] as const) {
      expect((await http.post(`/api/v1/plans/${plan.body.id}/gateways`).set(as).send({ name, lat, lon: lon + dLon, antennaHeightAglM: 20 })).status).toBe(201);
    }
    const started = await http.post(`/api/v1/plans/${plan.body.id}/coverage`).set(as).send({ radiusKm: 11, mode: 'fast' });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    const runId = started.body.id as string;
    const read = async () => (await http.get(`/api/v1/plans/${plan.body.id}/coverage/${runId}`).set(as)).body as { status: string; progress: number; attempts: number; error: string | null };

    const first = startWorker(t.config);
    // Wait until the first worker is inside the job, then kill it without warning.
    const deadline = Date.now() + 120_000;
    let row = await read();
    while (!(row.status === 'running' && row.progress > 0) && row.status !== 'done' && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 100));
      row = await read();
    }
    expect(row.status, 'the first worker should be mid-job').toBe('running');
    first.kill('SIGKILL');
    await new Promise((resolve) => first.once('exit', resolve));

    startWorker(t.config);
    while (!['done', 'failed', 'cancelled'].includes(row.status) && Date.now() < deadline + 60_000) {
      await new Promise((resolve) => setTimeout(resolve, 250));
      row = await read();
    }
    expect(row.status, row.error ?? '').toBe('done');
    expect(row.attempts).toBe(2);
    const dir = resultDir(t.config, runId);
    expect(readdirSync(dir).sort()).toEqual(['best-sf.tif', 'loss.tif', 'margin.tif', 'meta.json', 'redundancy.tif']);
    // No temporary folder of the killed attempt is left beside the result.
    const siblings = readdirSync(join(t.config.filesDir, 'coverage'));
    expect(siblings.filter((name) => name.includes('.partial-'))).toEqual([]);
    // The export is readable.
    const tif = await http.get(`/api/v1/plans/${plan.body.id}/coverage/${runId}.tif`).set(as);
    expect(tif.status).toBe(200);
    expect(existsSync(join(dir, 'margin.tif'))).toBe(true);
  }, 240_000);
});
