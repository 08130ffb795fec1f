// Multi-gateway coverage runs split into a child per gateway on BullMQ queue
// workers (issue 20), with Redis on 127.0.0.1:6379 and a shared PostgreSQL:
// three `npm run worker` processes take the children (and the parent) of a run
// whose result equals, byte for byte, the run done whole in one job in this
// process; a worker killed with SIGKILL while it holds a child is survived (the
// child is retried on another worker, the run completes once with the same
// bytes); cancel stops every child; a worker that cannot see the files folder
// fails the children with a clear error naming it, and the run fails with it
// after the last attempt.
// Mandatory in CI (CI=true); elsewhere a visible skip when Redis or PostgreSQL is unreachable.
import type { ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Queue } from 'bullmq';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';
import { QueueWorkers, queueSuite, REDIS_URL, requireQueue } from '../helpers/queue-workers.ts';
import { coveragePartsDir, resultDir } from '../../server/db/files.ts';
import { createCoverageRun } from '../../server/db/repositories/coverage-runs.ts';
import { executeCoverageRun } from '../../server/jobs/coverage-job.ts';
import { COVERAGE_PARTS_KIND } from '../../server/jobs/coverage-split.ts';
import { LINK_TILE_QUEUE } from '../../server/jobs/link-runs.ts';
import { COVERAGE_QUEUE } from '../../server/jobs/runner.ts';
import { redisConnection } from '../../server/jobs/queue-connection.ts';
import { lonLatOf, resultFiles, uploadSyntheticTerrain, type CoverageRunView } from '../helpers/split-coverage.ts';

const suite = queueSuite('coverage-split-queue');

const SIZE = 500;

suite('coverage runs split into a child per gateway on BullMQ queue workers (Redis 127.0.0.1:6379, PostgreSQL)', () => {
  let t: TestApp | undefined;
  let planId = '';
  const pool = new QueueWorkers();
  const workers = pool.children;
  const as = () => bearer(t!.tokens.planner);
  /** The result of the run done whole in this process (no parts runner), per request radius. */
  const whole = new Map<number, { files: Record<string, string>; summary: unknown }>();

  beforeAll(async () => {
    requireQueue();
    pool.usePrefix();
    t = await createTestApp('postgres', { env: { REDIS_URL, EARSHOT_WORKERS: '1' } });
    const http = request(t.app.server);
    const plan = await http.post('/api/v1/plans').set(as()).send({ name: 'Split coverage on the queue (synthetic terrain)' });
    planId = plan.body.id;
    await uploadSyntheticTerrain(http, as(), planId, SIZE, 5);
    for (const [name, col, row] of [['North mast', 200, 180], ['South mast', 260, 300], ['West mast', 120, 260]] as const) {
      expect((await http.post(`/api/v1/plans/${planId}/gateways`).set(as()).send({ name, ...lonLatOf(col, row), antennaHeightAglM: 20 })).status).toBe(201);
    }
    for (const [name, col, row] of [['Probe 1', 210, 200], ['Probe 2', 250, 280], ['Probe 3', 100, 240]] as const) {
      expect((await http.post(`/api/v1/plans/${planId}/nodes`).set(as()).send({ name, deviceType: 'soil-probe', ...lonLatOf(col, row) })).status).toBe(201);
    }
  }, 240_000);

  afterAll(async () => {
    await t?.close();
    await pool.cleanUp();
  });

  const read = async (runId: string) => (await request(t!.app.server).get(`/api/v1/plans/${planId}/coverage/${runId}`).set(as())).body as CoverageRunView;
  async function settle(runId: string, timeoutMs = 180_000): Promise<CoverageRunView> {
    const deadline = Date.now() + timeoutMs;
    let run = await read(runId);
    while (['queued', 'running'].includes(run.status) && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 200));
      run = await read(runId);
    }
    return run;
  }
  const start = async (radiusKm: number) => {
    const started = await request(t!.app.server).post(`/api/v1/plans/${planId}/coverage`).set(as()).send({ radiusKm, mode: 'fast' });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    return started.body.id as string;
  };
  /** The same run's parameters done whole in this process, once per radius. */
  async function wholeResult(runId: string, radiusKm: number) {
    const known = whole.get(radiusKm);
    if (known) return known;
    const row = await t!.db.prisma.coverageRun.findUniqueOrThrow({ where: { id: runId } });
    const copy = await createCoverageRun(t!.db, planId, { gatewayIds: row.gatewayIds as string[], params: row.params, createdById: null });
    expect(await executeCoverageRun(t!.db, t!.config, copy.id, { workerId: 'test:whole' })).toBe('done');
    const done = await t!.db.prisma.coverageRun.findUniqueOrThrow({ where: { id: copy.id } });
    const result = { files: resultFiles(t!.config, copy.id), summary: done.summary };
    whole.set(radiusKm, result);
    return result;
  }
  const workerId = (child: ChildProcess) => `:${child.pid}`;
  const childrenOf = (runId: string) => t!.db.prisma.linkRun.findFirstOrThrow({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: runId } } });

  it('three worker processes: the split run equals the run done whole in one job, byte for byte, and its children ran on the workers', async () => {
    await Promise.all([pool.start(t!.config), pool.start(t!.config), pool.start(t!.config)]);
    const runId = await start(4);
    const run = await settle(runId);
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.progress).toBe(1);
    expect(run.children).toEqual({ total: 3, done: 3, retried: 0, failed: 0, cancelled: 0 });
    // Every child and the parent ran in a worker process, none in the API process.
    const parts = await childrenOf(runId);
    const tiles = await t!.db.prisma.linkRunTile.findMany({ where: { runId: parts.id } });
    for (const tile of tiles) expect(workers.some((child) => tile.doneBy?.endsWith(workerId(child)))).toBe(true);
    for (const id of run.workers) expect(workers.some((child) => id.endsWith(workerId(child)))).toBe(true);
    expect(run.workers.some((id) => id.endsWith(`:${process.pid}`))).toBe(false);
    expect(existsSync(coveragePartsDir(t!.config, runId))).toBe(false);
    const expected = await wholeResult(runId, 4);
    expect(resultFiles(t!.config, runId)).toEqual(expected.files);
    expect(run.summary).toEqual(expected.summary);
  }, 300_000);

  it('a worker killed with SIGKILL while it holds a child: the child is retried on another worker, the run completes once with the same bytes', async () => {
    const runId = await start(6);
    const deadline = Date.now() + 120_000;
    let victim: ChildProcess | undefined;
    let tileIndex = -1;
    let partsId = '';
    while (!victim && Date.now() < deadline) {
      const parts = await t!.db.prisma.linkRun.findFirst({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: runId } } });
      const running = parts && (await t!.db.prisma.linkRunTile.findFirst({ where: { runId: parts.id, status: 'running', startedAt: { lt: new Date(Date.now() - 100) } } }));
      if (parts && running) {
        const ids = running.workerIds as string[];
        victim = workers.find((child) => child.exitCode === null && ids[ids.length - 1]?.endsWith(workerId(child)));
        tileIndex = running.index;
        partsId = parts.id;
      } else await new Promise((resolve) => setTimeout(resolve, 50));
    }
    expect(victim, 'a worker should be mid-child').toBeDefined();
    victim!.kill('SIGKILL');
    await new Promise((resolve) => victim!.once('exit', resolve));
    const run = await settle(runId);
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.children!.done).toBe(3);
    expect(run.children!.retried).toBeGreaterThanOrEqual(1);
    expect(run.workers.some((id) => id.endsWith(workerId(victim!)))).toBe(true);
    const tile = await t!.db.prisma.linkRunTile.findUniqueOrThrow({ where: { runId_index: { runId: partsId, index: tileIndex } } });
    expect(tile.attempts).toBeGreaterThanOrEqual(2);
    expect(tile.doneBy?.endsWith(workerId(victim!))).toBe(false);
    // Completed once: one set of children, the parts folder gone, no temporary folder beside the result.
    expect(await t!.db.prisma.linkRun.count({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: runId } } })).toBe(1);
    expect(existsSync(coveragePartsDir(t!.config, runId))).toBe(false);
    const expected = await wholeResult(runId, 6);
    expect(resultFiles(t!.config, runId)).toEqual(expected.files);
    expect(run.summary).toEqual(expected.summary);
  }, 300_000);

  it('cancel stops every child: none runs afterwards, none is left on the queues, no part or result is left', async () => {
    await pool.start(t!.config);
    const runId = await start(6);
    const deadline = Date.now() + 120_000;
    let partsId = '';
    while (!partsId && Date.now() < deadline) {
      const parts = await t!.db.prisma.linkRun.findFirst({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: runId } } });
      if (parts && (await t!.db.prisma.linkRunTile.count({ where: { runId: parts.id, status: 'running' } })) > 0) partsId = parts.id;
      else await new Promise((resolve) => setTimeout(resolve, 50));
    }
    expect(partsId, 'a child should be running').not.toBe('');
    const cancelled = await request(t!.app.server).post(`/api/v1/plans/${planId}/coverage/${runId}/cancel`).set(as());
    expect(cancelled.status).toBe(200);
    expect(cancelled.body.status).toBe('cancelled');
    await new Promise((resolve) => setTimeout(resolve, 4000));
    const run = await read(runId);
    expect(run.status).toBe('cancelled');
    expect(run.children!.cancelled).toBeGreaterThanOrEqual(1);
    expect(run.children!.done + run.children!.cancelled).toBe(run.children!.total);
    expect(await t!.db.prisma.linkRunTile.count({ where: { runId: partsId, status: { in: ['queued', 'running'] } } })).toBe(0);
    expect(existsSync(resultDir(t!.config, runId))).toBe(false);
    expect(existsSync(coveragePartsDir(t!.config, runId))).toBe(false);
    for (const name of [LINK_TILE_QUEUE, COVERAGE_QUEUE]) {
      const queue = new Queue(name, { connection: redisConnection(REDIS_URL), prefix: pool.prefix });
      try {
        expect(await queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized')).toEqual({ waiting: 0, active: 0, delayed: 0, prioritized: 0 });
      } finally {
        await queue.close();
      }
    }
  }, 300_000);

  it('a worker that cannot read the terrain fails the children with a clear error naming it, and the run fails after the last attempt', async () => {
    await pool.stopAll();
    const blindDir = mkdtempSync(join(tmpdir(), 'earshot-blind-coverage-worker-'));
    try {
      const blind = await pool.start(t!.config, blindDir);
      const runId = await start(4);
      const run = await settle(runId, 120_000);
      expect(run.status).toBe('failed');
      expect(run.error).toMatch(new RegExp(`^gateway ".+" \\(child \\d of 3\\): worker .*:${blind.pid} could not read the plan's terrain layer: file not found`));
      expect(run.children!.failed).toBe(1);
      expect(run.children!.done).toBe(0);
      const parts = await childrenOf(runId);
      const failed = await t!.db.prisma.linkRunTile.findFirstOrThrow({ where: { runId: parts.id, status: 'failed' } });
      // Every attempt the queue gives a child (3) was made, all by the blind worker.
      expect(failed.attempts).toBe(3);
      expect(existsSync(resultDir(t!.config, runId))).toBe(false);
    } finally {
      rmSync(blindDir, { recursive: true, force: true });
    }
  }, 300_000);
});
