// Fleet link table runs on BullMQ queue workers (issue 20), with Redis on
// 127.0.0.1:6379 and a shared PostgreSQL: three `npm run worker` processes
// (server/jobs/worker-main.ts) take the tiles of one run and write exactly the
// rows the in-process fleet table writes; a worker killed with SIGKILL while it
// holds a tile is survived (the tile is retried on another worker; no row
// missing, none twice); cancel stops every tile; a worker that cannot read the
// terrain fails the tiles with a clear error, then the run. A siting run's
// matrix split over the same workers equals the matrix an API process without
// Redis predicts in process.
// Mandatory in CI (CI=true); elsewhere a visible skip when Redis or PostgreSQL is unreachable.
import type { ChildProcess } from 'node:child_process';
import { mkdtempSync, renameSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { Queue } from 'bullmq';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';
import { createFleetFixture, linkRowsOf, seeded, type FleetFixture } from '../helpers/fleet-fixture.ts';
import { QueueWorkers, queueSuite, REDIS_URL, requireQueue } from '../helpers/queue-workers.ts';
import { buildApp } from '../../server/api/app.ts';
import { LINK_TILE_QUEUE } from '../../server/jobs/link-runs.ts';
import { redisConnection } from '../../server/jobs/queue-connection.ts';

const suite = queueSuite('link-runs-queue');

interface RunView {
  id: string;
  status: string;
  progress: number;
  children: { total: number; done: number; retried: number; failed: number; cancelled: number };
  workers: string[];
  pairs: number;
  linksWritten: number;
  error: string | null;
}

suite('fleet link table runs on BullMQ queue workers (Redis 127.0.0.1:6379, PostgreSQL)', () => {
  let t: TestApp | undefined;
  let fleet: FleetFixture;
  let expected: string[] = [];
  const pool = new QueueWorkers();
  const workers = pool.children;
  const prefix = pool.prefix;

  beforeAll(async () => {
    requireQueue();
    pool.usePrefix();
    t = await createTestApp('postgres', { env: { REDIS_URL, EARSHOT_WORKERS: '1' } });
    fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes: 120, gateways: 9, sideKm: 16, maxLinkRangeKm: 9, seed: 11 });
    // The in-process result: the fleet table of the API process itself.
    const table = await request(t.app.server).get(`/api/v1/plans/${fleet.planId}/links?limit=1`).set(bearer(t.tokens.planner));
    expect(table.status).toBe(200);
    expected = await linkRowsOf(t.db, fleet.planId);
    expect(expected.length).toBeGreaterThan(300);
  }, 240_000);

  afterAll(async () => {
    await t?.close();
    await pool.cleanUp();
  });

  const startWorker = (dataDir?: string) => pool.start(t!.config, dataDir);

  const as = () => bearer(t!.tokens.planner);
  const read = async (runId: string) => (await request(t!.app.server).get(`/api/v1/plans/${fleet.planId}/links/runs/${runId}`).set(as())).body as RunView;
  async function settle(runId: string, timeoutMs = 180_000): Promise<RunView> {
    const deadline = Date.now() + timeoutMs;
    let run = await read(runId);
    while (['queued', 'running'].includes(run.status) && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 200));
      run = await read(runId);
    }
    return run;
  }
  const workerId = (child: ChildProcess) => `:${child.pid}`;

  it('three worker processes: the run equals the in-process fleet table row for row, and every worker took part', async () => {
    await Promise.all([startWorker(), startWorker(), startWorker()]);
    await t!.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
    const started = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 20 });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    expect(started.body.pairs).toBe(expected.length);
    const run = await settle(started.body.id);
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.children.done).toBe(run.children.total);
    expect(run.progress).toBe(1);
    expect(run.workers).toHaveLength(3);
    for (const child of workers) expect(run.workers.some((id) => id.endsWith(workerId(child)))).toBe(true);
    expect(await linkRowsOf(t!.db, fleet.planId)).toEqual(expected);
  }, 300_000);

  it('a siting run over the queue: its matrix, split into blocks on the worker processes, equals the matrix of an in-process siting run', async () => {
    // Candidate sites over the fleet's area (our own invented places).
    const rand = seeded(21);
    const nodes = await t!.db.prisma.node.findMany({ where: { planId: fleet.planId }, select: { lat: true, lon: true } });
    const lat = [Math.min(...nodes.map((n) => n.lat)), Math.max(...nodes.map((n) => n.lat))];
    const lon = [Math.min(...nodes.map((n) => n.lon)), Math.max(...nodes.map((n) => n.lon))];
    for (let n = 0; n < 20; n++) {
      const res = await request(t!.app.server)
        .post(`/api/v1/plans/${fleet.planId}/sites`)
        .set(as())
        .send({ name: `Queue candidate ${n + 1} (synthetic)`, lat: lat[0] + rand() * (lat[1] - lat[0]), lon: lon[0] + rand() * (lon[1] - lon[0]), kind: 'candidate', costUsd: 500 + 10 * n, maxAntennaHeightAglM: 15 });
      expect(res.status, JSON.stringify(res.body)).toBe(201);
    }
    const body = { requiredGateways: 2, candidates: { sites: true, terrainPoints: 0 }, keepExistingGateways: true };
    const settleSiting = async (server: TestApp['app']['server'], id: string) => {
      const deadline = Date.now() + 180_000;
      for (;;) {
        const res = await request(server).get(`/api/v1/plans/${fleet.planId}/siting/${id}`).set(as());
        if (!['queued', 'running'].includes(res.body.status) || Date.now() > deadline) return res.body as { status: string; error: string | null };
        await new Promise((resolve) => setTimeout(resolve, 200));
      }
    };
    // 1. The API process has REDIS_URL: the matrix goes over the queue to the three workers.
    const queued = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/siting`).set(as()).send(body);
    expect(queued.status, JSON.stringify(queued.body)).toBe(202);
    const overQueue = await settleSiting(t!.app.server, queued.body.id);
    expect(overQueue.status, overQueue.error ?? '').toBe('done');
    const split = await t!.db.prisma.linkRun.findFirstOrThrow({ where: { kind: 'siting-matrix', params: { path: ['sitingRunId'], equals: queued.body.id } } });
    expect(split.status).toBe('done');
    expect(split.tilesTotal).toBeGreaterThan(1);
    const tiles = await t!.db.prisma.linkRunTile.findMany({ where: { runId: split.id } });
    const takers = new Set(tiles.map((tile) => tile.doneBy));
    // Every block was done by a worker process, none by the API process.
    for (const taker of takers) expect(workers.some((child) => taker?.endsWith(workerId(child)))).toBe(true);
    expect([...takers].some((taker) => taker?.endsWith(`:${process.pid}`))).toBe(false);
    const matrixA = await request(t!.app.server).get(`/api/v1/plans/${fleet.planId}/siting/${queued.body.id}/matrix`).set(as());
    expect(matrixA.status).toBe(200);
    expect(matrixA.body.pairsPredicted).toBeGreaterThan(500);

    // 2. The same request to an API process without Redis (same database): the matrix is predicted in process.
    //    The first run's matrix is taken out of the cache so the second one predicts its own.
    await t!.db.prisma.sitingRun.update({ where: { id: queued.body.id }, data: { matrixHash: null } });
    const local = await buildApp({ db: t!.db, config: { ...t!.config, redisUrl: undefined }, logger: false });
    try {
      await local.ready();
      const inProcess = await request(local.server).post(`/api/v1/plans/${fleet.planId}/siting`).set(as()).send(body);
      expect(inProcess.status).toBe(202);
      const done = await settleSiting(local.server, inProcess.body.id);
      expect(done.status, done.error ?? '').toBe('done');
      expect(await t!.db.prisma.linkRun.count({ where: { kind: 'siting-matrix', params: { path: ['sitingRunId'], equals: inProcess.body.id } } })).toBe(0);
      const matrixB = await request(local.server).get(`/api/v1/plans/${fleet.planId}/siting/${inProcess.body.id}/matrix`).set(as());
      expect(matrixB.status).toBe(200);
      // Cell for cell: the same nodes, candidates, meets and margins, and the same counts.
      expect(matrixA.body).toEqual(matrixB.body);
    } finally {
      await local.close();
    }
  }, 300_000);

  it('a worker killed with SIGKILL while it holds a tile: the tile is retried elsewhere, no row missing or twice, the run completes once', async () => {
    await t!.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
    const started = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 120 });
    expect(started.status).toBe(202);
    const runId = started.body.id as string;
    // Wait until some worker has held a tile for a while, then kill that worker without warning.
    const deadline = Date.now() + 120_000;
    let victim: ChildProcess | undefined;
    let tileIndex = -1;
    while (!victim && Date.now() < deadline) {
      const running = await t!.db.prisma.linkRunTile.findFirst({ where: { runId, status: 'running', startedAt: { lt: new Date(Date.now() - 50) } } });
      if (running) {
        const ids = running.workerIds as string[];
        victim = workers.find((child) => child.exitCode === null && ids[ids.length - 1]?.endsWith(workerId(child)));
        tileIndex = running.index;
      } else await new Promise((resolve) => setTimeout(resolve, 50));
    }
    expect(victim, 'a worker should be mid-tile').toBeDefined();
    victim!.kill('SIGKILL');
    await new Promise((resolve) => victim!.once('exit', resolve));
    const run = await settle(runId);
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.children.retried).toBeGreaterThanOrEqual(1);
    expect(run.workers.some((id) => id.endsWith(workerId(victim!)))).toBe(true);
    const tile = await t!.db.prisma.linkRunTile.findUnique({ where: { runId_index: { runId, index: tileIndex } } });
    expect(tile!.attempts).toBeGreaterThanOrEqual(2);
    expect(tile!.doneBy?.endsWith(workerId(victim!))).toBe(false);
    // Exactly the in-process rows: none missing, none twice (and the unique key would refuse a twin).
    expect(await linkRowsOf(t!.db, fleet.planId)).toEqual(expected);
    // Link rows are one per pair even counting across the plan.
    expect(await t!.db.prisma.link.count({ where: { planId: fleet.planId } })).toBe(expected.length);
  }, 300_000);

  it('cancel stops every tile: none runs afterwards, none is left on the queue, nothing more is written', async () => {
    await startWorker();
    await t!.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
    const started = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 10 });
    const runId = started.body.id as string;
    // Let a few tiles finish first.
    const deadline = Date.now() + 120_000;
    while ((await read(runId)).children.done < 2 && Date.now() < deadline) await new Promise((resolve) => setTimeout(resolve, 50));
    const cancelled = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/links/runs/${runId}/cancel`).set(as());
    expect(cancelled.status).toBe(200);
    expect(cancelled.body.status).toBe('cancelled');
    while ((await t!.db.prisma.linkRunTile.count({ where: { runId, status: 'running' } })) > 0 && Date.now() < deadline) await new Promise((resolve) => setTimeout(resolve, 50));
    const rows = (await linkRowsOf(t!.db, fleet.planId)).length;
    await new Promise((resolve) => setTimeout(resolve, 3000));
    const run = await read(runId);
    expect(run.status).toBe('cancelled');
    expect(run.children.cancelled).toBeGreaterThan(0);
    expect(run.children.done + run.children.cancelled).toBe(run.children.total);
    expect((await linkRowsOf(t!.db, fleet.planId)).length).toBe(rows);
    const tiles = await t!.db.prisma.linkRunTile.findMany({ where: { runId } });
    expect(tiles.reduce((sum, tile) => sum + tile.linksWritten, 0)).toBe(rows);
    // Tiles cancelled before they started were never claimed by any worker.
    expect(tiles.filter((tile) => tile.status === 'cancelled' && (tile.workerIds as string[]).length === 0).length).toBeGreaterThan(0);
    const queue = new Queue(LINK_TILE_QUEUE, { connection: redisConnection(REDIS_URL), prefix });
    try {
      const counts = await queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized');
      expect(counts).toEqual({ waiting: 0, active: 0, delayed: 0, prioritized: 0 });
    } finally {
      await queue.close();
    }
  }, 300_000);

  it('a worker that cannot read the terrain layer fails its tiles with a clear error, and the run fails once', async () => {
    // Only workers that cannot see the files folder are left: the layer's path is relative to it.
    await pool.stopAll();
    const layer = await t!.db.prisma.terrainLayer.findFirstOrThrow({ where: { planId: fleet.planId } });
    const moved = join(t!.config.filesDir, 'terrain', 'moved.tif');
    renameSync(fleet.terrainPath, moved);
    await t!.db.prisma.terrainLayer.update({ where: { id: layer.id }, data: { filePath: relative(t!.config.filesDir, moved) } });
    await t!.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
    const started = await request(t!.app.server).post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 200 });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    const blindDir = mkdtempSync(join(tmpdir(), 'earshot-blind-worker-'));
    try {
      const blind = await startWorker(blindDir);
      const run = await settle(started.body.id, 120_000);
      expect(run.status).toBe('failed');
      expect(run.error).toMatch(new RegExp(`worker .*:${blind.pid} could not read the plan's terrain layer`));
      expect(run.error).toMatch(/moved\.tif/);
      expect(run.children.failed).toBe(1);
      expect(await t!.db.prisma.link.count({ where: { planId: fleet.planId } })).toBe(0);
    } finally {
      rmSync(blindDir, { recursive: true, force: true });
    }
  }, 300_000);
});
