// A multi-gateway coverage run split into a child per gateway (issue 20,
// server/jobs/coverage-split.ts), in process (no Redis): its result files equal
// byte for byte, and its summary equals, the same run done whole in one job
// (executeCoverageRun without a parts runner: the pre-split path); the GET reports
// the children and the workers; cancel stops every child; a child that cannot read
// the terrain fails with a message naming the worker and the gateway, after its
// retry, and the run fails with it. The part file codec keeps every bit.
// The queue's workers run the same children: test/api/coverage-split-queue.test.ts.
import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { coveragePartsDir, resultDir } from '../../server/db/files.ts';
import { createCoverageRun } from '../../server/db/repositories/coverage-runs.ts';
import { executeCoverageRun } from '../../server/jobs/coverage-job.ts';
import { COVERAGE_PARTS_KIND, decodeCoveragePart, encodeCoveragePart } from '../../server/jobs/coverage-split.ts';
import { createCoverageJobs } from '../../server/jobs/runner.ts';
import { lonLatOf, resultFiles, uploadSyntheticTerrain, type CoverageRunView } from '../helpers/split-coverage.ts';

const SIZE = 400;

describeEngines('coverage runs split into a child per gateway, in process', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  let planId = '';
  const gatewayIds: string[] = [];
  const as = () => bearer(t.tokens.planner);

  async function settle(runId: string, until = (run: CoverageRunView) => !['queued', 'running'].includes(run.status), timeoutMs = 120_000): Promise<CoverageRunView> {
    const deadline = Date.now() + timeoutMs;
    for (;;) {
      const got = await http.get(`/api/v1/plans/${planId}/coverage/${runId}`).set(as());
      expect(got.status, JSON.stringify(got.body)).toBe(200);
      if (until(got.body as CoverageRunView) || Date.now() > deadline) return got.body as CoverageRunView;
      await new Promise((resolve) => setTimeout(resolve, 50));
    }
  }

  beforeAll(async () => {
    t = await createTestApp(engine, { env: { EARSHOT_WORKERS: '1' } });
    http = request(t.app.server);
    const plan = await http.post('/api/v1/plans').set(as()).send({ name: 'Split coverage plan (synthetic terrain)' });
    planId = plan.body.id;
    await uploadSyntheticTerrain(http, as(), planId, SIZE, 7);
    // Three masts whose discs overlap (best server, redundancy) and one whose disc is clipped by the terrain's edge.
    for (const [name, col, row] of [['Hill mast', 150, 160], ['Valley mast', 230, 200], ['Edge mast', 370, 120]] as const) {
      const res = await http.post(`/api/v1/plans/${planId}/gateways`).set(as()).send({ name, ...lonLatOf(col, row), antennaHeightAglM: 18 });
      expect(res.status, JSON.stringify(res.body)).toBe(201);
      gatewayIds.push(res.body.id);
    }
    for (const [name, col, row] of [['Probe A', 170, 170], ['Probe B', 220, 230], ['Probe C', 300, 140], ['Probe far', 20, 390]] as const) {
      expect((await http.post(`/api/v1/plans/${planId}/nodes`).set(as()).send({ name, deviceType: 'soil-probe', ...lonLatOf(col, row) })).status).toBe(201);
    }
  }, 120_000);
  afterAll(async () => {
    await t?.close();
  });

  it('the split run equals the run done whole in one job: the same GeoTIFF bytes and the same summary', async () => {
    const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as()).send({ radiusKm: 3, mode: 'fast' });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    expect(started.body.children).toEqual({ total: 3, done: 0, retried: 0, failed: 0, cancelled: 0 });
    const run = await settle(started.body.id);
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.progress).toBe(1);
    expect(run.children).toEqual({ total: 3, done: 3, retried: 0, failed: 0, cancelled: 0 });
    // The parent ran once: one composite over the three parts.
    expect(run.attempts).toBe(1);
    expect(run.workers).toEqual([expect.stringMatching(new RegExp(`:${process.pid}$`))]);
    // One child per gateway, each with the checksum of the part it wrote.
    const parts = await t.db.prisma.linkRun.findFirstOrThrow({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: run.id } }, include: { tiles: { orderBy: { index: 'asc' } } } });
    expect(parts.status).toBe('done');
    expect(parts.tiles.map((tile) => tile.gatewayIds)).toEqual(gatewayIds.map((id) => [id]));
    for (const tile of parts.tiles) expect((tile.result as { sha256: string }).sha256).toMatch(/^[0-9a-f]{64}$/);
    // The parts are gone once the composite is built; no temporary folder is left.
    expect(existsSync(coveragePartsDir(t.config, run.id))).toBe(false);
    expect(readdirSync(join(t.config.filesDir, 'coverage')).filter((name) => name.startsWith(run.id) && name !== run.id)).toEqual([]);

    // The same run done whole: a row with the same parameters, executed without a parts runner.
    const row = await t.db.prisma.coverageRun.findUniqueOrThrow({ where: { id: run.id } });
    const whole = await createCoverageRun(t.db, planId, { gatewayIds: row.gatewayIds as string[], params: row.params, createdById: null });
    expect(await executeCoverageRun(t.db, t.config, whole.id, { workerId: 'test:whole' })).toBe('done');
    expect(await t.db.prisma.linkRun.count({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: whole.id } } })).toBe(0);
    expect(resultFiles(t.config, run.id)).toEqual(resultFiles(t.config, whole.id));
    const wholeRow = await t.db.prisma.coverageRun.findUniqueOrThrow({ where: { id: whole.id } });
    expect(run.summary).toEqual(wholeRow.summary);
    // The test plan is one where the composite matters: more than one best server, a clipped disc.
    const summary = run.summary as { gateways: Array<{ bestServerCells: number }>; terrain: { discShare: number } };
    expect(summary.gateways.filter((g) => g.bestServerCells > 0).length).toBe(3);
    expect(summary.terrain.discShare).toBeLessThan(0.99);
    // The run done whole reports no children.
    const wholeView = (await http.get(`/api/v1/plans/${planId}/coverage/${whole.id}`).set(as())).body as CoverageRunView;
    expect(wholeView.children).toBeNull();
  }, 180_000);

  it('cancel stops every child: none runs afterwards, no part or result is left', async () => {
    const started = await http.post(`/api/v1/plans/${planId}/coverage`).set(as()).send({ radiusKm: 5.5, mode: 'fast' });
    expect(started.status).toBe(202);
    const runId = started.body.id as string;
    const mid = await settle(runId, (run) => (run.children?.done ?? 0) >= 1 || !['queued', 'running'].includes(run.status));
    expect(mid.status).toBe('running');
    const cancelled = await http.post(`/api/v1/plans/${planId}/coverage/${runId}/cancel`).set(as());
    expect(cancelled.status).toBe(200);
    expect(cancelled.body.status).toBe('cancelled');
    expect(cancelled.body.children.cancelled).toBeGreaterThanOrEqual(1);
    await new Promise((resolve) => setTimeout(resolve, 2500));
    const run = await settle(runId);
    expect(run.status).toBe('cancelled');
    expect(run.children!.done + run.children!.cancelled).toBe(run.children!.total);
    const parts = await t.db.prisma.linkRun.findFirstOrThrow({ where: { kind: COVERAGE_PARTS_KIND, params: { path: ['coverageRunId'], equals: runId } } });
    expect(parts.status).toBe('cancelled');
    expect(await t.db.prisma.linkRunTile.count({ where: { runId: parts.id, status: { in: ['queued', 'running'] } } })).toBe(0);
    expect(existsSync(resultDir(t.config, runId))).toBe(false);
    expect(existsSync(coveragePartsDir(t.config, runId))).toBe(false);
  }, 180_000);

  it('a child that cannot read the terrain fails, after its retry, with a message naming the worker and the gateway; the run fails with it', async () => {
    // A run whose layer path names a file the files folder lacks (as on a worker that does not see it).
    const row = await t.db.prisma.coverageRun.findFirstOrThrow({ where: { planId, status: 'done' } });
    const params = { ...(row.params as Record<string, unknown>), terrainPath: 'terrain/missing-layer.tif' };
    const run = await createCoverageRun(t.db, planId, { gatewayIds: row.gatewayIds as string[], params, createdById: null });
    const jobs = await createCoverageJobs(t.db, { ...t.config, redisUrl: undefined }, t.app.linkEngine);
    try {
      await jobs.enqueue(run.id);
      const view = await settle(run.id);
      expect(view.status).toBe('failed');
      expect(view.error).toMatch(new RegExp(`^gateway "Hill mast" \\(child 1 of 3\\): worker .*:${process.pid} could not read the plan's terrain layer: file not found: .*missing-layer\\.tif`));
      expect(view.children).toMatchObject({ total: 3, failed: 1, retried: 1 });
      expect(view.children!.done).toBe(0);
      expect(existsSync(resultDir(t.config, run.id))).toBe(false);
    } finally {
      await jobs.close();
    }
  }, 120_000);

  it('a part file keeps every bit of its arrays (NaN outside the terrain included) and refuses a cut file', () => {
    const cells = 6;
    const part = {
      gatewayIndex: 2,
      placement: { x0: 5, y0: 7, widthPx: 3, heightPx: 2 },
      lossDb: Float32Array.from([120.5, Number.NaN, 99, 140.25, 133, 101]),
      products: {
        powerDbm: Float32Array.from([-101.5, Number.NaN, -80, -121.25, -114, -82]),
        marginDb: Float32Array.from([12.5, Number.NaN, 34, -7.25, 0, 32]),
        bestSf: Uint8Array.from([7, 255, 7, 0, 12, 7]),
        deliveryProbability: Float32Array.from([0.99, Number.NaN, 1, 0.2, 0.5, 1]),
      },
    };
    const bytes = encodeCoveragePart(part, 'gw-3');
    const back = decodeCoveragePart(bytes);
    expect(back.gatewayId).toBe('gw-3');
    expect(back.part.placement).toEqual(part.placement);
    expect(back.part.gatewayIndex).toBe(2);
    const bits = (values: Float32Array) => Array.from(new Uint32Array(values.buffer, values.byteOffset, cells));
    expect(bits(back.part.lossDb)).toEqual(bits(part.lossDb));
    expect(bits(back.part.products.marginDb)).toEqual(bits(part.products.marginDb));
    expect(bits(back.part.products.powerDbm)).toEqual(bits(part.products.powerDbm));
    expect(bits(back.part.products.deliveryProbability)).toEqual(bits(part.products.deliveryProbability));
    expect(Array.from(back.part.products.bestSf)).toEqual(Array.from(part.products.bestSf));
    expect(() => decodeCoveragePart(bytes.slice(0, bytes.length - 1))).toThrow(/bytes, not the/);
  });
});
