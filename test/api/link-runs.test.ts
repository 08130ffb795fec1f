// Fleet link table runs without Redis (issue 20): the run is cut into tiles of
// nodes × gateways that execute in this process on the link engine; the rows
// they write equal the fleet table's own, row for row; the fleet table then
// reads them (nothing computed); cancel stops every tile; bad input is a 400
// naming the field, other teams get 404, installers 403; the progress counts the
// paths a running tile has predicted so far. On both engines.
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { createFleetFixture, linkRowsOf, type FleetFixture } from '../helpers/fleet-fixture.ts';
import { cancelLinkRun, claimLinkTile, createLinkRun, linkTileStillOwned } from '../../server/db/repositories/link-runs.ts';
import { linkRunView } from '../../server/app/link-runs.ts';
import type { LinkEngine } from '../../server/jobs/link-engine.ts';

interface RunView {
  id: string;
  status: string;
  progress: number;
  children: { total: number; done: number; retried: number; failed: number; cancelled: number };
  workers: string[];
  pairs: number;
  pairsDone: number;
  linksWritten: number;
  seconds: number;
  error: string | null;
}

describeEngines('fleet link table runs in process', (engine) => {
  let t: TestApp;
  let fleet: FleetFixture;

  beforeAll(async () => {
    t = await createTestApp(engine, { env: { EARSHOT_WORKERS: '2' } });
    fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes: 60, gateways: 7, sideKm: 16, maxLinkRangeKm: 9, seed: 3 });
  }, 120_000);
  afterAll(async () => {
    await t?.close();
  });

  const as = () => bearer(t.tokens.planner);
  async function waitFor(planId: string, runId: string, done: (run: RunView) => boolean): Promise<RunView> {
    const deadline = Date.now() + 120_000;
    for (;;) {
      const res = await request(t.app.server).get(`/api/v1/plans/${planId}/links/runs/${runId}`).set(as());
      expect(res.status, JSON.stringify(res.body)).toBe(200);
      if (done(res.body as RunView) || Date.now() > deadline) return res.body as RunView;
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
  }

  it('progress counts running tiles by the paths they have predicted so far (recorded at their checks), capped at their size', async () => {
    const db = t.db;
    // A plan of its own: the run is never queued, and the other tests' plan keeps only their runs.
    const plan = await db.prisma.plan.create({ data: { teamId: t.teamId, name: 'Progress of running tiles' } });
    const run = await createLinkRun(db, plan.id, { params: {}, createdById: null, tiles: [0, 1].map(() => ({ nodeIds: [fleet.nodeIds[0]], gatewayIds: [fleet.gatewayIds[0]], pairs: 100 })) });
    const deps = { engine: { database: db } as LinkEngine };
    expect((await linkRunView(deps, run)).progress).toBe(0);
    const attempt = await claimLinkTile(db, run.id, 0, 'test:1');
    expect(attempt).toBe(1);
    expect(await linkTileStillOwned(db, run.id, 0, attempt!, 30)).toBe(true);
    expect((await linkRunView(deps, run)).progress).toBeCloseTo(30 / 200, 12);
    // More than the tile's pairs (cached pairs are not counted when it is cut): capped at its size.
    expect(await linkTileStillOwned(db, run.id, 0, attempt!, 500)).toBe(true);
    expect((await linkRunView(deps, run)).progress).toBeCloseTo(100 / 200, 12);
    // A stale attempt neither owns the tile nor moves the progress.
    expect(await linkTileStillOwned(db, run.id, 0, attempt! + 1, 10)).toBe(false);
    expect((await linkRunView(deps, run)).progress).toBeCloseTo(0.5, 12);
    // Claimed again (its worker died): the part of the lost attempt drops back.
    expect(await claimLinkTile(db, run.id, 0, 'test:2')).toBe(2);
    expect((await linkRunView(deps, run)).progress).toBe(0);
    expect(await cancelLinkRun(db, plan.id, run.id)).toBe(true);
  });

  it('a run over tiles writes exactly the rows the fleet table writes, and the fleet table then reads them', async () => {
    const http = request(t.app.server);
    const table = await http.get(`/api/v1/plans/${fleet.planId}/links?limit=1000`).set(as());
    expect(table.status).toBe(200);
    expect(table.body.cache.computed).toBeGreaterThan(100);
    const expected = await linkRowsOf(t.db, fleet.planId);
    expect(expected.length).toBe(table.body.cache.computed);
    await t.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });

    const started = await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 40 });
    expect(started.status, JSON.stringify(started.body)).toBe(202);
    expect(['queued', 'running', 'done']).toContain(started.body.status);
    expect(started.body.children.total).toBeGreaterThan(3);
    expect(started.body.pairs).toBe(expected.length);
    const run = await waitFor(fleet.planId, started.body.id, (r) => !['queued', 'running'].includes(r.status));
    expect(run.status, run.error ?? '').toBe('done');
    expect(run.progress).toBe(1);
    expect(run.children.done).toBe(run.children.total);
    expect(run.children.retried).toBe(0);
    expect(run.workers).toHaveLength(1);
    expect(run.pairsDone).toBe(expected.length);
    expect(run.linksWritten).toBe(expected.length);
    expect(await linkRowsOf(t.db, fleet.planId)).toEqual(expected);

    const again = await http.get(`/api/v1/plans/${fleet.planId}/links?limit=1000`).set(as());
    expect(again.body.cache).toEqual({ computed: 0, cached: expected.length });
    expect(again.body.items).toEqual(table.body.items);

    // A second run over a warm cache writes nothing new and still completes once.
    const warm = await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({});
    const warmRun = await waitFor(fleet.planId, warm.body.id, (r) => !['queued', 'running'].includes(r.status));
    expect(warmRun.status).toBe('done');
    expect(warmRun.linksWritten).toBe(0);
    const list = await http.get(`/api/v1/plans/${fleet.planId}/links/runs`).set(as());
    expect(list.body.items.map((r: RunView) => r.id)).toEqual([warm.body.id, started.body.id]);
  }, 180_000);

  it('cancel stops every tile: no tile runs or starts afterwards and nothing more is written', async () => {
    const http = request(t.app.server);
    await t.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
    const started = await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 10 });
    expect(started.status).toBe(202);
    const cancelled = await http.post(`/api/v1/plans/${fleet.planId}/links/runs/${started.body.id}/cancel`).set(as());
    expect(cancelled.status, JSON.stringify(cancelled.body)).toBe(200);
    expect(cancelled.body.status).toBe('cancelled');
    // Wait until no tile is running any more (the running one stops at its next batch).
    const deadline = Date.now() + 60_000;
    while ((await t.db.prisma.linkRunTile.count({ where: { runId: started.body.id, status: 'running' } })) > 0 && Date.now() < deadline) await new Promise((resolve) => setTimeout(resolve, 50));
    const rowsAfterCancel = (await linkRowsOf(t.db, fleet.planId)).length;
    await new Promise((resolve) => setTimeout(resolve, 1500));
    const run = (await http.get(`/api/v1/plans/${fleet.planId}/links/runs/${started.body.id}`).set(as())).body as RunView;
    expect(run.status).toBe('cancelled');
    expect(run.children.done + run.children.cancelled).toBe(run.children.total);
    expect(run.children.cancelled).toBeGreaterThan(0);
    expect((await linkRowsOf(t.db, fleet.planId)).length).toBe(rowsAfterCancel);
    const tiles = await t.db.prisma.linkRunTile.findMany({ where: { runId: started.body.id } });
    expect(tiles.reduce((sum, tile) => sum + tile.linksWritten, 0)).toBe(rowsAfterCancel);
    const twice = await http.post(`/api/v1/plans/${fleet.planId}/links/runs/${started.body.id}/cancel`).set(as());
    expect(twice.status).toBe(409);
  }, 120_000);

  it('bad input names the field; installers may not start runs; another team sees 404', async () => {
    const http = request(t.app.server);
    const bad = await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tilePairs: 3 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/tilePairs/);
    const extra = await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(as()).send({ tiles: 3 });
    expect(extra.status).toBe(400);
    expect(extra.body.error.message).toMatch(/tiles/);
    expect((await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(bearer(t.tokens.installer)).send({})).status).toBe(403);
    expect((await http.post(`/api/v1/plans/${fleet.planId}/links/runs`).set(bearer(t.tokens.otherTeamPlanner)).send({})).status).toBe(404);
    const runs = (await http.get(`/api/v1/plans/${fleet.planId}/links/runs`).set(as())).body.items as RunView[];
    expect((await http.get(`/api/v1/plans/${fleet.planId}/links/runs/${runs[0].id}`).set(bearer(t.tokens.otherTeamPlanner))).status).toBe(404);
    expect((await http.post(`/api/v1/plans/${fleet.planId}/links/runs/${runs[0].id}/cancel`).set(bearer(t.tokens.otherTeamPlanner))).status).toBe(404);
    expect((await http.get(`/api/v1/plans/${fleet.planId}/links/runs/nope`).set(as())).status).toBe(404);
  });
});
