import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { seedDemo } from '../../server/demo.ts';
import { issueToken } from '../../server/db/repositories/accounts.ts';

interface Matrix {
  nodeIds: string[];
  candidates: Array<{ id: string; siteId: string | null; lat: number; lon: number; fixed: boolean; costUsd: number }>;
  meets: boolean[][];
  marginDb: Array<Array<number | null>>;
}

/**
 * The fewest columns such that every row gets min(k, #true in the row) of its
 * true cells: an exhaustive search by growing subset size (independent of the
 * server's MILP, greedy and cover code).
 */
function fewestColumns(meets: boolean[][], columns: number, k: number): number {
  const need = meets.map((row) => Math.min(k, row.filter(Boolean).length));
  const hearing = meets.map((row) => row.flatMap((cell, j) => (cell ? [j] : [])));
  const chosen = new Uint8Array(columns);
  const ok = () => hearing.every((list, i) => list.reduce((n, j) => n + chosen[j], 0) >= need[i]);
  const search = (start: number, left: number): boolean => {
    if (left === 0) return ok();
    for (let j = start; j <= columns - left; j++) {
      chosen[j] = 1;
      if (search(j + 1, left - 1)) return true;
      chosen[j] = 0;
    }
    return false;
  };
  for (let size = 0; size <= columns; size++) {
    chosen.fill(0);
    if (search(0, size)) return size;
  }
  throw new Error('no cover');
}

async function waitDone(t: TestApp, auth: Record<string, string>, planId: string, runId: string): Promise<Record<string, unknown>> {
  for (let i = 0; i < 600; i++) {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${runId}`).set(auth);
    expect(res.status).toBe(200);
    if (['done', 'failed', 'cancelled'].includes(res.body.status)) return res.body;
    await new Promise((resolve) => setTimeout(resolve, 250));
  }
  throw new Error('siting run did not finish');
}

describeEngines('gateway siting API', (engine) => {
  let t: TestApp;
  let planId: string;
  let auth: Record<string, string>;
  const extraSiteIds: string[] = [];

  beforeAll(async () => {
    t = await createTestApp(engine);
    const demo = await seedDemo(t.db, t.config);
    planId = demo.planId as string;
    auth = bearer((await issueToken(t.db, { userId: demo.plannerUserId, label: 'siting test' })).token);
    // The demo plan with its gateways removed and 15 extra candidate sites on a grid over the valley.
    const gateways = await request(t.app.server).get(`/api/v1/plans/${planId}/gateways`).set(auth);
    for (const g of gateways.body.items) expect((await request(t.app.server).delete(`/api/v1/plans/${planId}/gateways/${g.id}`).set(auth)).status).toBe(204);
    const sites = (await request(t.app.server).get(`/api/v1/plans/${planId}/sites`).set(auth)).body.items as Array<{ lat: number; lon: number }>;
    const lat0 = Math.min(...sites.map((s) => s.lat));
    const lat1 = Math.max(...sites.map((s) => s.lat));
    const lon0 = Math.min(...sites.map((s) => s.lon));
    const lon1 = Math.max(...sites.map((s) => s.lon));
    for (let n = 0; n < 15; n++) {
      const row = Math.floor(n / 3);
      const col = n % 3;
      const res = await request(t.app.server)
        .post(`/api/v1/plans/${planId}/sites`)
        .set(auth)
        .send({ name: `Extra candidate ${n + 1}`, lat: lat0 + ((row + 0.5) / 5) * (lat1 - lat0) * 1.2 - 0.1 * (lat1 - lat0), lon: lon0 + ((col + 0.5) / 3) * (lon1 - lon0), kind: 'candidate', costUsd: 300 + 100 * n, maxAntennaHeightAglM: 15 });
      expect(res.status).toBe(201);
      extraSiteIds.push(res.body.id);
    }
  }, 240_000);

  afterAll(async () => {
    await t?.close();
  });

  const body = (k: number) => ({ requiredGateways: k, candidates: { sites: true, terrainPoints: 0 }, keepExistingGateways: false });

  for (const k of [1, 2]) {
    it(`k = ${k}: the chosen set is as small as an exhaustive solve of the returned matrix and covers every coverable node`, async () => {
      const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send(body(k));
      expect(start.status).toBe(202);
      expect(start.body).toMatchObject({ status: 'queued' });
      const run = await waitDone(t, auth, planId, start.body.id);
      expect(run.status, String(run.error)).toBe('done');
      const result = run.result as {
        nodesCoverable: number;
        nodesTotal: number;
        optimal: boolean;
        gapPercent: number;
        solver: string;
        objective: { gateways: number };
        coveredNodeIds: string[];
        selected: Array<{ candidateId: string; rank: number }>;
        uncovered: Array<{ name: string; reason: string }>;
        greedy: { gateways: number };
      };
      const matrixRes = await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}/matrix`).set(auth);
      expect(matrixRes.status).toBe(200);
      const matrix = matrixRes.body as Matrix;
      expect(matrix.nodeIds).toHaveLength(64);
      expect(matrix.candidates).toHaveLength(18); // 3 demo candidate sites + 15 extra
      expect(matrix.meets.every((row) => row.length === 18)).toBe(true);
      const coverable = matrix.nodeIds.filter((_id, i) => matrix.meets[i].some(Boolean));
      expect(coverable.length).toBeGreaterThan(10);
      expect(result.nodesCoverable).toBe(coverable.length);
      expect(result.nodesTotal).toBe(64);
      expect(result.optimal).toBe(true);
      expect(result.gapPercent).toBe(0);
      expect(result.solver).toMatch(/HiGHS/);
      expect(result.objective.gateways).toBe(fewestColumns(matrix.meets, 18, k));
      expect(new Set(result.coveredNodeIds)).toEqual(new Set(coverable));
      // Every covered node is heard by min(k, hearers) chosen candidates, by the matrix.
      const chosen = new Set(result.selected.map((s) => s.candidateId));
      for (let i = 0; i < matrix.nodeIds.length; i++) {
        const hearers = matrix.candidates.filter((c, j) => matrix.meets[i][j]);
        const got = hearers.filter((c) => chosen.has(c.id)).length;
        expect(got).toBeGreaterThanOrEqual(Math.min(k, hearers.length));
      }
      // A meets cell always has a margin; a margin below the plan's 10 dB target never meets.
      for (let i = 0; i < matrix.nodeIds.length; i++) {
        for (let j = 0; j < 18; j++) {
          if (matrix.meets[i][j]) expect(matrix.marginDb[i][j]).toBeGreaterThanOrEqual(10);
        }
      }
      // Ranks are 1…n and the uncovered are named with a reason.
      expect(result.selected.map((s) => s.rank)).toEqual(result.selected.map((_s, n) => n + 1));
      for (const u of result.uncovered) expect(u.reason).toMatch(/no candidate hears it/);
      expect(result.greedy.gateways).toBeGreaterThanOrEqual(result.objective.gateways);
    }, 240_000);
  }

  it('at most 2 gateways of 5 nodes each: the covered nodes are those the chosen pair can home within the cap, and the ranking counts on them', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send({ ...body(1), maxGateways: 2, maxNodesPerGateway: 5 });
    expect(start.status).toBe(202);
    const run = await waitDone(t, auth, planId, start.body.id);
    expect(run.status, String(run.error)).toBe('done');
    const result = run.result as {
      coveredNodeIds: string[];
      uncovered: Array<{ nodeId: string; reason: string }>;
      selected: Array<{ candidateId: string; nodeIdsOnlyHere: string[]; nodesOnlyHere: number }>;
      optimal: boolean;
      objective: { gateways: number };
    };
    const matrix = (await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}/matrix`).set(auth)).body as Matrix;
    expect(result.optimal).toBe(true);
    expect(result.objective.gateways).toBeLessThanOrEqual(2);
    // Two gateways home at most 10 nodes, and two of the demo's candidates hear more than that, so the cap binds.
    expect(result.coveredNodeIds.length).toBe(10);
    // Homing by hand (independent of the server): each covered node heard by a chosen candidate with a free seat.
    const seats = new Map(result.selected.map((s) => [matrix.candidates.findIndex((c) => c.id === s.candidateId), 5]));
    const homes = (ids: string[]): boolean => {
      if (ids.length === 0) return true;
      const i = matrix.nodeIds.indexOf(ids[0]);
      for (const [j, free] of seats) {
        if (free === 0 || !matrix.meets[i][j]) continue;
        seats.set(j, free - 1);
        if (homes(ids.slice(1))) return true;
        seats.set(j, free);
      }
      return false;
    };
    expect(homes(result.coveredNodeIds)).toBe(true);
    const covered = new Set(result.coveredNodeIds);
    for (const s of result.selected) for (const id of s.nodeIdsOnlyHere) expect(covered.has(id)).toBe(true);
    // Nodes the chosen set hears but cannot seat are told so.
    expect(result.uncovered.some((u) => /full \(at most 5 nodes each\)/.test(u.reason))).toBe(true);
  }, 240_000);

  it('a second run with the same inputs reuses the cached matrix; SSE reports the finish', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send(body(1));
    const run = await waitDone(t, auth, planId, start.body.id);
    expect((run.result as { matrix: { cached: boolean } }).matrix.cached).toBe(true);
    const events = await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}/events`).set(auth);
    expect(events.text).toContain('"status":"done"');
    expect(events.text).toContain('event: end');
    // A finished run cannot be cancelled; the list shows the runs newest first.
    const cancel = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/cancel`).set(auth);
    expect(cancel.status).toBe(409);
    expect(cancel.body.error.code).toBe('already_finished');
    const listed = await request(t.app.server).get(`/api/v1/plans/${planId}/siting`).set(auth);
    expect(listed.body.items[0].id).toBe(start.body.id);
  }, 120_000);

  it('k = 2: after apply the link table serves every covered node', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send(body(2));
    const run = await waitDone(t, auth, planId, start.body.id);
    const result = run.result as { coveredNodeIds: string[] };
    const applied = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(applied.status).toBe(201);
    const fleet = await request(t.app.server).get(`/api/v1/plans/${planId}/links?limit=1000`).set(auth);
    expect(fleet.status).toBe(200);
    const status = new Map((fleet.body.items as Array<{ nodeId: string; status: string }>).map((item) => [item.nodeId, item.status]));
    expect(result.coveredNodeIds.length).toBeGreaterThan(10);
    for (const id of result.coveredNodeIds) expect(status.get(id), id).toBe('served');
    for (const id of applied.body.gatewayIds) expect((await request(t.app.server).delete(`/api/v1/plans/${planId}/gateways/${id}`).set(auth)).status).toBe(204);
  }, 240_000);

  it('apply creates the chosen gateways (audited), after which the link table serves the covered nodes; a second apply is refused', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send(body(1));
    const run = await waitDone(t, auth, planId, start.body.id);
    const result = run.result as { selected: Array<{ candidateId: string }>; coveredNodeIds: string[] };
    const applied = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(applied.status).toBe(201);
    expect(applied.body.gatewayIds).toHaveLength(result.selected.length);
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entity: 'siting_run', entityId: start.body.id, action: 'apply' } });
    expect(audit).toHaveLength(1);
    const fleet = await request(t.app.server).get(`/api/v1/plans/${planId}/links?limit=1000`).set(auth);
    expect(fleet.status).toBe(200);
    const status = new Map((fleet.body.items as Array<{ nodeId: string; status: string }>).map((item) => [item.nodeId, item.status]));
    for (const id of result.coveredNodeIds) expect(status.get(id), id).toBe('served');
    const again = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('already_applied');
    // Undo (the panel deletes the created gateways) leaves the plan as before.
    for (const id of applied.body.gatewayIds) expect((await request(t.app.server).delete(`/api/v1/plans/${planId}/gateways/${id}`).set(auth)).status).toBe(204);
  }, 240_000);

  it('apply answers 409 when the plan changed since the run', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send(body(1));
    await waitDone(t, auth, planId, start.body.id);
    const site = await request(t.app.server).post(`/api/v1/plans/${planId}/sites`).set(auth).send({ name: 'Late idea', lat: 44.3, lon: -116.1, kind: 'candidate' });
    expect(site.status).toBe(201);
    const applied = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(applied.status).toBe(409);
    expect(applied.body.error.code).toBe('plan_changed');
    await request(t.app.server).delete(`/api/v1/plans/${planId}/sites/${site.body.id}`).set(auth);
  }, 120_000);

  it('a chosen candidate costs what the bill of materials prices its gateway at: same kit (mast included), same number', async () => {
    const mast = await t.db.prisma.mastOption.findFirstOrThrow({ where: { teamId: null, costUsd: { gt: 0 } }, orderBy: { costUsd: 'asc' } });
    const bomBefore = await request(t.app.server).get(`/api/v1/plans/${planId}/bom`).set(auth);
    expect(bomBefore.status).toBe(200);
    expect(bomBefore.body.gatewayKitCostUsd).toBe(0); // the set-up removed every gateway
    // One gateway, first without a mast, then the kit with a mast (the feedline length left to the
    // plan's rule, height + drop). The second run reuses the first one's matrix (the mast changes no
    // link), but its candidates are priced with its own kit.
    const plain = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send({ ...body(1), maxGateways: 1 });
    expect((await waitDone(t, auth, planId, plain.body.id)).status).toBe('done');
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send({ ...body(1), maxGateways: 1, gatewayKit: { mastOptionId: mast.id } });
    expect(start.status).toBe(202);
    const run = await waitDone(t, auth, planId, start.body.id);
    expect(run.status, String(run.error)).toBe('done');
    expect((run.result as { matrix: { cached: boolean } }).matrix.cached).toBe(true);
    const costs = async (id: string) => new Map(((await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${id}/matrix`).set(auth)).body as Matrix).candidates.map((c) => [c.id, c.costUsd]));
    const [plainCosts, mastCosts] = await Promise.all([costs(plain.body.id), costs(start.body.id)]);
    for (const [id, cost] of mastCosts) if (id.startsWith('site:')) expect(cost - (plainCosts.get(id) as number), id).toBeCloseTo(mast.costUsd, 2);
    const chosen = (run.result as { selected: Array<{ candidateId: string; siteId: string | null; costUsd: number; kept: boolean }> }).selected;
    expect(chosen).toHaveLength(1);
    expect(chosen[0].kept).toBe(false);
    const site = ((await request(t.app.server).get(`/api/v1/plans/${planId}/sites?limit=1000`).set(auth)).body.items as Array<{ id: string; name: string; costUsd: number | null }>).find((s) => s.id === chosen[0].siteId);
    expect(site, 'the chosen candidate is a site').toBeDefined();
    const applied = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(applied.status).toBe(201);
    const bom = await request(t.app.server).get(`/api/v1/plans/${planId}/bom`).set(auth);
    expect(bom.status).toBe(200);
    // Candidate cost = site works + kit; the bill prices the applied gateway's kit and the site works apart.
    const siteCostUsd = site!.costUsd ?? 0;
    expect(bom.body.gatewayKitCostUsd).toBeGreaterThan(0);
    expect(bom.body.gatewayKitCostUsd).toBeCloseTo(chosen[0].costUsd - siteCostUsd, 2);
    expect(bom.body.kitCostUsd - bomBefore.body.kitCostUsd).toBeCloseTo(chosen[0].costUsd - siteCostUsd, 2);
    const works = (bom.body.lines as Array<{ category: string; name: string; costUsd: number }>).filter((l) => l.category === 'site');
    expect(works.reduce((sum, l) => sum + l.costUsd, 0)).toBeCloseTo(siteCostUsd, 2);
    // The mast is one of the kit's lines (the bare antenna + feedline figure would leave it and the connectors out).
    const mastCount = (b: { lines: Array<{ category: string; name: string; quantity: number }> }) => b.lines.find((l) => l.category === 'mast' && l.name === mast.name)?.quantity ?? 0;
    expect(mastCount(bom.body) - mastCount(bomBefore.body)).toBe(1);
    for (const id of applied.body.gatewayIds) expect((await request(t.app.server).delete(`/api/v1/plans/${planId}/gateways/${id}`).set(auth)).status).toBe(204);
  }, 240_000);

  it('bad input answers 400 naming the field; another team answers 404; non-planners 403', async () => {
    const post = (payload: unknown, headers = auth) => request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(headers).send(payload as object);
    const k0 = await post({ ...body(1), requiredGateways: 0 });
    expect(k0.status).toBe(400);
    expect(k0.body.error.message).toMatch(/requiredGateways/);
    const budget = await post({ ...body(1), budgetUsd: -5 });
    expect(budget.status).toBe(400);
    expect(budget.body.error.message).toMatch(/budgetUsd/);
    const line = await post({ ...body(1), excludeAreas: [{ type: 'LineString', coordinates: [[0, 0], [1, 1]] }] });
    expect(line.status).toBe(400);
    expect(line.body.error.message).toMatch(/excludeAreas\[0\]: must be a GeoJSON Polygon/);
    // A site of another plan.
    const other = await request(t.app.server).post('/api/v1/plans').set(bearer(t.tokens.planner)).send({ name: 'Other plan' });
    const foreign = await request(t.app.server).post(`/api/v1/plans/${other.body.id}/sites`).set(bearer(t.tokens.planner)).send({ name: 'Elsewhere', lat: 1, lon: 1 });
    expect(foreign.status).toBe(201);
    const wrongSite = await post({ ...body(1), candidates: { sites: true, terrainPoints: 0, siteIds: [extraSiteIds[0], foreign.body.id] } });
    expect(wrongSite.status).toBe(400);
    expect(wrongSite.body.error.message).toMatch(/candidates\.siteIds\[1\]/);
    const otherTeam = await post(body(1), bearer(t.tokens.otherTeamPlanner));
    expect(otherTeam.status).toBe(404);
    const viewerToken = (await issueToken(t.db, { userId: (await t.db.prisma.user.create({ data: { teamId: (await t.db.prisma.plan.findUniqueOrThrow({ where: { id: planId } })).teamId, name: 'Demo viewer', role: 'viewer' } })).id, label: 'viewer' })).token;
    const viewer = await post(body(1), bearer(viewerToken));
    expect(viewer.status).toBe(403);
    const run404 = await request(t.app.server).get(`/api/v1/plans/${planId}/siting/nope`).set(auth);
    expect(run404.status).toBe(404);
  });
});

describe('siting terrain candidates', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp('pglite');
  }, 60_000);
  afterAll(async () => t?.close());

  it('terrain high points come from the demo DEM, spaced, outside the exclusion area; k = 1 budget variant stays within budget', async () => {
    const demo = await seedDemo(t.db, t.config);
    const auth = bearer((await issueToken(t.db, { userId: demo.plannerUserId, label: 'siting test' })).token);
    const planId = demo.planId as string;
    // Exclude the western half of the valley (west of the mean site longitude).
    const sites = (await request(t.app.server).get(`/api/v1/plans/${planId}/sites`).set(auth)).body.items as Array<{ lat: number; lon: number }>;
    const mid = sites.reduce((sum, s) => sum + s.lon, 0) / sites.length;
    const exclusion = { type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [[[mid - 1, 43], [mid, 43], [mid, 46], [mid - 1, 46], [mid - 1, 43]]] } };
    const start = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/siting`)
      .set(auth)
      .send({ requiredGateways: 1, candidates: { sites: false, terrainPoints: 6, spacingM: 1500 }, keepExistingGateways: true, budgetUsd: 2000, excludeAreas: [exclusion] });
    expect(start.status).toBe(202);
    const run = await waitDone(t, auth, planId, start.body.id);
    expect(run.status, String(run.error)).toBe('done');
    const matrix = (await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}/matrix`).set(auth)).body as Matrix;
    const terrain = matrix.candidates.filter((c) => c.id.startsWith('terrain:'));
    expect(terrain.length).toBeGreaterThanOrEqual(3);
    for (const c of terrain) expect(c.lon).toBeGreaterThan(mid);
    for (let a = 0; a < terrain.length; a++) for (let b = a + 1; b < terrain.length; b++) expect(Math.hypot((terrain[a].lat - terrain[b].lat) * 111_320, (terrain[a].lon - terrain[b].lon) * 111_320 * Math.cos((terrain[a].lat * Math.PI) / 180))).toBeGreaterThan(1400);
    expect(matrix.candidates.filter((c) => c.fixed)).toHaveLength(2);
    const result = run.result as { objective: { costUsd: number }; selected: Array<{ kept: boolean }>; optimal: boolean };
    expect(result.objective.costUsd).toBeLessThanOrEqual(2000);
    expect(result.selected.filter((s) => s.kept)).toHaveLength(2);
    expect(result.optimal).toBe(true);
  }, 240_000);
});

describeEngines('siting with keepExistingGateways false (start over)', (engine) => {
  let t: TestApp;
  afterAll(async () => t?.close());

  it('existing gateways are ordinary candidates; apply replaces the plan’s gateways (audited); undo restores them with their readings, once', async () => {
    t = await createTestApp(engine);
    const demo = await seedDemo(t.db, t.config);
    const auth = bearer((await issueToken(t.db, { userId: demo.plannerUserId, label: 'siting test' })).token);
    const planId = demo.planId as string;
    const before = await t.db.prisma.gateway.findMany({ where: { planId }, orderBy: { id: 'asc' } });
    expect(before).toHaveLength(2);
    // A field reading that names the first gateway: removing the gateway clears it, undo must put it back.
    const node = await t.db.prisma.node.findFirstOrThrow({ where: { planId } });
    const reading = await t.db.prisma.fieldReading.create({ data: { planId, nodeId: node.id, gatewayId: before[0].id, rssiDbm: -101, snrDb: 3, sf: 9, measuredAt: new Date('2026-05-01T08:00:00Z') } });
    // At most one gateway in all: at least one of the two existing ones must go.
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(auth).send({ requiredGateways: 1, candidates: { sites: true, terrainPoints: 0 }, keepExistingGateways: false, maxGateways: 1 });
    expect(start.status).toBe(202);
    const run = await waitDone(t, auth, planId, start.body.id);
    expect(run.status, String(run.error)).toBe('done');
    const matrix = (await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}/matrix`).set(auth)).body as Matrix & { candidates: Array<{ id: string; fixed: boolean; costUsd: number; gatewayId: string | null }> };
    const existing = matrix.candidates.filter((c) => c.id.startsWith('gateway:'));
    expect(existing).toHaveLength(2);
    for (const c of existing) expect(c).toMatchObject({ fixed: false, costUsd: 0 });
    const result = run.result as { selected: Array<{ candidateId: string; gatewayId: string | null; kept: boolean }>; removed: Array<{ gatewayId: string }>; after: { gateways: number }; before: { gateways: number } };
    expect(result.selected.length).toBeLessThanOrEqual(1);
    const keptIds = result.selected.filter((s) => s.kept).map((s) => s.gatewayId);
    // removed = the existing gateways the answer does not choose; after = what the plan will hold.
    expect(new Set(result.removed.map((r) => r.gatewayId))).toEqual(new Set(before.map((g) => g.id).filter((id) => !keptIds.includes(id))));
    expect(result.removed.length).toBeGreaterThanOrEqual(1);
    expect(result.before.gateways).toBe(2);
    expect(result.after.gateways).toBe(result.selected.length);
    const applied = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/apply`).set(auth);
    expect(applied.status).toBe(201);
    expect(new Set(applied.body.removedGatewayIds)).toEqual(new Set(result.removed.map((r) => r.gatewayId)));
    const now = await t.db.prisma.gateway.findMany({ where: { planId } });
    expect(now).toHaveLength(result.after.gateways);
    for (const r of result.removed) expect(now.find((g) => g.id === r.gatewayId)).toBeUndefined();
    const audit = await t.db.prisma.auditEntry.findFirstOrThrow({ where: { entity: 'siting_run', entityId: start.body.id, action: 'apply' } });
    expect(JSON.stringify(audit.detail)).toContain(result.removed[0].gatewayId);
    if (result.removed.some((r) => r.gatewayId === before[0].id)) expect((await t.db.prisma.fieldReading.findUniqueOrThrow({ where: { id: reading.id } })).gatewayId).toBeNull();
    // Undo: created gateways gone, removed ones back with the same ids and fields, the reading names its gateway again.
    const undo = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/undo`).set(auth);
    expect(undo.status).toBe(200);
    expect(new Set(undo.body.restoredGatewayIds)).toEqual(new Set(result.removed.map((r) => r.gatewayId)));
    const restored = await t.db.prisma.gateway.findMany({ where: { planId }, orderBy: { id: 'asc' } });
    const fields = (g: (typeof before)[number]) => ({ id: g.id, name: g.name, lat: g.lat, lon: g.lon, siteId: g.siteId, antennaDesignId: g.antennaDesignId, antennaHeightAglM: g.antennaHeightAglM, feedlineId: g.feedlineId, feedlineLengthM: g.feedlineLengthM, noiseFigureDb: g.noiseFigureDb, version: g.version, createdAt: g.createdAt.toISOString() });
    expect(restored.map(fields)).toEqual(before.map(fields));
    expect((await t.db.prisma.fieldReading.findUniqueOrThrow({ where: { id: reading.id } })).gatewayId).toBe(before[0].id);
    expect(await t.db.prisma.auditEntry.count({ where: { entity: 'siting_run', entityId: start.body.id, action: 'undo' } })).toBe(1);
    const again = await request(t.app.server).post(`/api/v1/plans/${planId}/siting/${start.body.id}/undo`).set(auth);
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('already_undone');
    const run2 = (await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}`).set(auth)).body;
    expect(run2.undoneAt).not.toBeNull();
  }, 300_000);
});
