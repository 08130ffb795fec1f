// Fleet link table runs on BullMQ queue workers (issue 20), with Redis on
// 127.0.0.1:6379 and a shared PostgreSQL: three `npm run worker` processes
// (server/jobs/worker-main.ts) take the tiles of one run and write exactly the
// rows the in-process fleet table writes; a worker killed with SIGKILL while it
// holds a tile is survived (the tile is retried on another worker; no row
// missing, none twice); cancel stops every tile; a worker that cannot read the
// terrain fails the tiles with a clear error, then the run.
// Mandatory in CI (CI=true); elsewhere a visible skip when Redis or PostgreSQL is unreachable.
import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtempSync, renameSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, postgresAvailable, type TestApp } from '../helpers/test-app.ts';
import { createFleetFixture, linkRowsOf, type FleetFixture } from '../helpers/fleet-fixture.ts';
import { LINK_TILE_QUEUE } from '../../server/jobs/link-runs.ts';
import { redisConnection } from '../../server/jobs/runner.ts';

const REDIS_URL = process.env.EARSHOT_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
const inCi = process.env.CI === 'true';

async function redisReachable(): Promise<boolean> {
  const client = new Redis(REDIS_URL, { lazyConnect: true, connectTimeout: 1500, maxRetriesPerRequest: 0, retryStrategy: () => null });
  try {
    await client.connect();
    return (await client.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    client.disconnect();
  }
}

const redisOk = await redisReachable();
const ready = redisOk && postgresAvailable;
if (!ready && !inCi) console.warn(`SKIPPED link-runs-queue: needs Redis at ${REDIS_URL} (${redisOk ? 'ok' : 'unreachable'}) and PostgreSQL (${postgresAvailable ? 'ok' : 'unreachable'})`);
const suite = ready || inCi ? describe : describe.skip;

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
  const workers: ChildProcess[] = [];
  const prefix = `earshot-test-${randomBytes(5).toString('hex')}`;

  beforeAll(async () => {
    if (!ready) throw new Error(`CI=true needs Redis at ${REDIS_URL} and PostgreSQL`);
    process.env.EARSHOT_QUEUE_PREFIX = prefix;
    t = await createTestApp('postgres', { env: { REDIS_URL, EARSHOT_WORKERS: '1' } });
    fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes: 120, gateways: 9, sideKm: 16, maxLinkRangeKm: 9, seed: 11 });
    // The in-process result: the fleet table of the API process itself.
    const table = await request(t.app.server).get(`/api/v1/plans/${fleet.planId}/links?limit=1`).set(bearer(t.tokens.planner));
    expect(table.status).toBe(200);
    expected = await linkRowsOf(t.db, fleet.planId);
    expect(expected.length).toBeGreaterThan(300);
  }, 240_000);

  afterAll(async () => {
    for (const worker of workers) if (worker.exitCode === null && worker.signalCode === null) worker.kill('SIGKILL');
    await t?.close();
    const redis = new Redis(REDIS_URL);
    const keys = await redis.keys(`${prefix}:*`);
    if (keys.length > 0) await redis.del(...keys);
    redis.disconnect();
  });

  /** Starts `npm run worker`'s entry; resolves once it says it is ready. */
  function startWorker(dataDir = t!.config.dataDir): Promise<ChildProcess> {
    const child = spawn(process.execPath, ['--import', 'tsx', 'server/jobs/worker-main.ts'], {
      env: { ...process.env, DATABASE_URL: t!.config.databaseUrl, REDIS_URL, EARSHOT_DATA_DIR: dataDir, EARSHOT_QUEUE_PREFIX: prefix, EARSHOT_WORKERS: '1', EARSHOT_JOB_LOCK_MS: '4000', EARSHOT_JOB_STALLED_MS: '1500' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    workers.push(child);
    child.stderr?.on('data', (chunk: Buffer) => process.stderr.write(`[worker ${child.pid}] ${chunk}`));
    return new Promise((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error('worker did not start in 90 s')), 90_000);
      child.stdout?.on('data', (chunk: Buffer) => {
        if (chunk.toString().includes('ready')) {
          clearTimeout(timer);
          resolve(child);
        }
      });
      child.once('exit', (code) => reject(new Error(`worker exited with ${code}`)));
    });
  }

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
    for (const child of workers) if (child.exitCode === null && child.signalCode === null) child.kill('SIGTERM');
    await Promise.all(workers.map((child) => (child.exitCode === null && child.signalCode === null ? new Promise((resolve) => child.once('exit', resolve)) : null)));
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
