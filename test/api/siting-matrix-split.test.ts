// A siting matrix split into blocks of nodes × candidates (issue 20,
// server/jobs/siting-matrix-split.ts) equals the matrix predicted whole
// (server/jobs/siting-matrix.ts computeSitingMatrix), cell for cell, including
// a node with a directional antenna aimed at its best-heard candidate (its row
// stays in one block) and a node whose kit is unknown (left out as unusable).
// The blocks here run on the in-process runner (the queue's workers run the
// same executor: test/api/link-runs-queue.test.ts). Cancelling the parent
// cancels every block.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { createFleetFixture, seeded, type FleetFixture } from '../helpers/fleet-fixture.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { computeSitingMatrix, matrixInputs, SitingCancelled, type SitingCandidate } from '../../server/jobs/siting-matrix.ts';
import { createLinkRunJobs } from '../../server/jobs/link-runs.ts';
import type { LinkRunJobs } from '../../server/jobs/link-run-jobs.ts';
import { cutSitingTiles, splitSitingMatrix } from '../../server/jobs/siting-matrix-split.ts';

describeEngines('siting matrix split into blocks', (engineName) => {
  let t: TestApp;
  let fleet: FleetFixture;
  let engine: LinkEngine;
  let jobs: LinkRunJobs;
  let candidates: SitingCandidate[];

  beforeAll(async () => {
    t = await createTestApp(engineName, { env: { EARSHOT_WORKERS: '1' } });
    fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes: 40, gateways: 4, sideKm: 14, maxLinkRangeKm: 8, seed: 5 });
    await t.db.prisma.node.update({ where: { id: fleet.nodeIds[3] }, data: { antennaDesignId: 'yagi-5-element' } });
    await t.db.prisma.node.update({ where: { id: fleet.nodeIds[7] }, data: { antennaDesignId: 'no-such-antenna' } });
    const rand = seeded(9);
    const nodes = await t.db.prisma.node.findMany({ where: { planId: fleet.planId } });
    const lat = [Math.min(...nodes.map((n) => n.lat)), Math.max(...nodes.map((n) => n.lat))];
    const lon = [Math.min(...nodes.map((n) => n.lon)), Math.max(...nodes.map((n) => n.lon))];
    candidates = Array.from({ length: 11 }, (_x, n) => ({
      id: `site:${n + 1}`,
      source: 'site' as const,
      siteId: null,
      gatewayId: null,
      name: `Candidate ${n + 1} (synthetic)`,
      lat: lat[0] + rand() * (lat[1] - lat[0]),
      lon: lon[0] + rand() * (lon[1] - lon[0]),
      antennaDesignId: 'collinear-fibreglass-6dbi',
      antennaHeightAglM: 12 + n,
      feedlineId: 'low-loss-10mm',
      feedlineLengthM: 15,
      mastOptionId: null,
      noiseFigureDb: 6,
      costUsd: 1000 + n,
      fixed: false,
    }));
    engine = new LinkEngine(t.db, t.config, { workers: 0 });
    jobs = await createLinkRunJobs(t.db, { ...t.config, redisUrl: undefined }, engine);
  }, 120_000);
  afterAll(async () => {
    await jobs?.close();
    await engine?.close();
    await t?.close();
  });

  it('the blocks put together equal the whole matrix, cell for cell', async () => {
    const plan = await t.db.prisma.plan.findUniqueOrThrow({ where: { id: fleet.planId } });
    const ctx = await engine.planContext(plan);
    const inputs = await matrixInputs(engine, ctx, candidates);
    expect(inputs.broken).toHaveLength(1);
    const whole = await computeSitingMatrix(engine, ctx, candidates, inputs, { areaMinElevationM: 500 });
    expect(whole.pairsPredicted).toBeGreaterThan(100);
    // 60 pairs a block: 11 candidates → 5 nodes a block, the directional node alone across every column.
    const tiles = cutSitingTiles(inputs, 60);
    expect(tiles.length).toBeGreaterThan(6);
    const fractions: number[] = [];
    const split = await splitSitingMatrix(engine, jobs, ctx, candidates, inputs, { sitingRunId: 'test-run-1', areaMinElevationM: 500, tilePairs: 60, onProgress: (f) => void fractions.push(f) });
    expect(split).toEqual(whole);
    expect(fractions.at(-1)).toBe(0.97);
    const run = await t.db.prisma.linkRun.findFirstOrThrow({ where: { planId: fleet.planId, kind: 'siting-matrix' } });
    expect(run.status).toBe('done');
    expect(await t.db.prisma.linkRunTile.count({ where: { runId: run.id, status: 'done' } })).toBe(run.tilesTotal);
    // Matrix blocks write no Link rows.
    expect(await t.db.prisma.link.count({ where: { planId: fleet.planId } })).toBe(0);
  }, 180_000);

  it('beyond the 1.5 × horizon allowance a pair is skipped only when even free space (ITU-R P.525) cannot close it', async () => {
    const plan = await t.db.prisma.plan.findUniqueOrThrow({ where: { id: fleet.planId } });
    const ctx = await engine.planContext(plan);
    const inputs = await matrixInputs(engine, ctx, candidates);
    const within = await computeSitingMatrix(engine, ctx, candidates, inputs, { areaMinElevationM: 500 });
    // Heights over a reference 100 km up are clamped to 0 m: every pair lies beyond the old bound
    // (1.5 × a horizon of 0 m), which used to drop all of them.
    const beyond = await computeSitingMatrix(engine, ctx, candidates, inputs, { areaMinElevationM: 100_000 });
    const heard = within.meets.flat().filter(Boolean).length;
    expect(heard).toBeGreaterThan(10);
    expect(beyond.pairsPredicted).toBeGreaterThan(0);
    // Pairs within 8 km close over free space, so nothing the link table would serve is dropped:
    // "meets" is identical, and every pair predicted in both has the same margin.
    expect(beyond.meets).toEqual(within.meets);
    let compared = 0;
    beyond.marginDb.forEach((row, i) =>
      row.forEach((margin, j) => {
        if (margin === null) expect(within.meets[i][j], `skipped pair ${i}×${j} is not heard`).toBe(false);
        else {
          expect(margin).toBe(within.marginDb[i][j]);
          compared++;
        }
      }),
    );
    expect(compared).toBeGreaterThan(100);
    // A target no free-space link can reach: beyond the allowance every pair is skipped (no path
    // work), within it they are still predicted (and none meets the target).
    const unreachable = { ...ctx, settings: { ...ctx.settings, targetMarginDb: 150 } };
    const none = await computeSitingMatrix(engine, unreachable, candidates, inputs, { areaMinElevationM: 100_000 });
    expect(none.pairsPredicted).toBe(0);
    expect(none.pairsSkipped).toBe(beyond.pairsPredicted + beyond.pairsSkipped);
  }, 180_000);

  it('a cancelled parent cancels every block and stops', async () => {
    const plan = await t.db.prisma.plan.findUniqueOrThrow({ where: { id: fleet.planId } });
    const ctx = await engine.planContext(plan);
    const inputs = await matrixInputs(engine, ctx, candidates);
    let calls = 0;
    await expect(splitSitingMatrix(engine, jobs, ctx, candidates, inputs, { sitingRunId: 'test-run-2', areaMinElevationM: 500, tilePairs: 20, onProgress: () => ++calls < 2 })).rejects.toBeInstanceOf(SitingCancelled);
    await jobs.idle();
    const run = await t.db.prisma.linkRun.findFirstOrThrow({ where: { planId: fleet.planId, kind: 'siting-matrix', params: { path: ['sitingRunId'], equals: 'test-run-2' } } });
    expect(run.status).toBe('cancelled');
    const open = await t.db.prisma.linkRunTile.count({ where: { runId: run.id, status: { in: ['queued', 'running'] } } });
    expect(open).toBe(0);
    expect(await t.db.prisma.linkRunTile.count({ where: { runId: run.id, status: 'cancelled' } })).toBeGreaterThan(0);
  }, 120_000);
});
