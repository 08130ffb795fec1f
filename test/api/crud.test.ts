// Plans, sites, gateways, nodes (incl. bulk import), kit catalog and audit log, against both
// engines: defaults, pagination, roles (403), team isolation (404), stale versions (409),
// bad input (400 naming the field) and oversized bodies (413).
import { afterAll, beforeAll, beforeEach, expect, it } from 'vitest';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import request from 'supertest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

describeEngines('plan-scoped CRUD', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  beforeAll(async () => {
    t = await createTestApp(engine);
    http = request(t.app.server);
  });
  afterAll(async () => t?.close());
  beforeEach(async () => t.reset());

  const as = (who: keyof TestApp['tokens']) => bearer(t.tokens[who]);
  async function newPlan(name = 'Riverbend pilot') {
    const response = await http.post('/api/v1/plans').set(as('planner')).send({ name });
    expect(response.status).toBe(201);
    return response.body as { id: string; version: number };
  }

  it('POST /plans with only a name answers 201 with the defaults and an id', async () => {
    const response = await http.post('/api/v1/plans').set(as('planner')).send({ name: 'Orchard east' });
    expect(response.status).toBe(201);
    expect(response.body).toMatchObject({ name: 'Orchard east', bandPlanId: 'us-902-928', targetMarginDb: 10, propagationMethod: 'p1812', version: 1, settings: {} });
    expect(typeof response.body.id).toBe('string');
    const read = await http.get(`/api/v1/plans/${response.body.id}`).set(as('viewer'));
    expect(read.status).toBe(200);
    expect(read.body.counts).toEqual({ sites: 0, gateways: 0, nodes: 0, terrainLayers: 0 });
  });

  it('lists answer { items, total, next } and page with limit/cursor', async () => {
    for (let i = 0; i < 5; i++) await newPlan(`plan ${i}`);
    const first = await http.get('/api/v1/plans?limit=2').set(as('viewer'));
    expect(first.status).toBe(200);
    expect(first.body.items).toHaveLength(2);
    expect(first.body.total).toBe(5);
    expect(typeof first.body.next).toBe('string');
    const names: string[] = first.body.items.map((p: { name: string }) => p.name);
    let next = first.body.next as string | null;
    while (next) {
      const page = await http.get(`/api/v1/plans?limit=2&cursor=${next}`).set(as('viewer'));
      names.push(...page.body.items.map((p: { name: string }) => p.name));
      next = page.body.next;
    }
    expect(names).toEqual(['plan 0', 'plan 1', 'plan 2', 'plan 3', 'plan 4']);
    const bad = await http.get('/api/v1/plans?limit=0').set(as('viewer'));
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/^limit:/);
  });

  it('rejects bad input with 400 naming the field, and writes nothing', async () => {
    const cases: Array<[unknown, RegExp]> = [
      [{ name: '' }, /^name: must not be empty/],
      [{ name: '   ' }, /^name: must not be empty/],
      [{ name: 'x', colour: 'red' }, /colour: unknown field/],
      [{ name: 'x', targetMarginDb: 'ten' }, /^targetMarginDb: /],
      [{ name: 'x', bandPlanId: 'mars-1' }, /^bandPlanId: must be one of/],
      [{}, /^name: /],
    ];
    for (const [body, message] of cases) {
      const response = await http.post('/api/v1/plans').set(as('planner')).send(body as object);
      expect(response.status, JSON.stringify(body)).toBe(400);
      expect(response.body.error.code).toBe('invalid_input');
      expect(response.body.error.message).toMatch(message);
    }
    // Invalid JSON and NaN (not JSON at all) -> 400 invalid_json.
    for (const raw of ['{"name":', '{"name":"x","targetMarginDb":NaN}', '{"name":"x","targetMarginDb":Infinity}']) {
      const response = await http.post('/api/v1/plans').set(as('planner')).set('Content-Type', 'application/json').send(raw);
      expect(response.status).toBe(400);
      expect(response.body.error.code).toBe('invalid_json');
    }
    // Numbers beyond double range parse to Infinity: rejected by the schema.
    const huge = await http.post('/api/v1/plans').set(as('planner')).set('Content-Type', 'application/json').send('{"name":"x","targetMarginDb":1e999}');
    expect(huge.status).toBe(400);
    expect(huge.body.error.message).toMatch(/^targetMarginDb:/);
    expect((await http.get('/api/v1/plans').set(as('viewer'))).body.total).toBe(0);
  });

  it('answers 413 for an oversized body', async () => {
    const response = await http
      .post('/api/v1/plans')
      .set(as('planner'))
      .send({ name: 'big', description: 'x'.repeat(t.config.maxJsonBodyBytes + 10) });
    expect(response.status).toBe(413);
    expect(response.body.error.code).toBe('payload_too_large');
  });

  it('viewers and installers cannot edit plans (403); the other team cannot see them (404)', async () => {
    const plan = await newPlan();
    for (const who of ['viewer', 'installer'] as const) {
      expect((await http.post('/api/v1/plans').set(as(who)).send({ name: 'no' })).status).toBe(403);
      const patch = await http.patch(`/api/v1/plans/${plan.id}`).set(as(who)).send({ name: 'no', version: 1 });
      expect(patch.status).toBe(403);
      expect(patch.body.error.code).toBe('forbidden');
    }
    const foreign = await http.get(`/api/v1/plans/${plan.id}`).set(as('otherTeamPlanner'));
    const missing = await http.get('/api/v1/plans/does-not-exist').set(as('otherTeamPlanner'));
    expect(foreign.status).toBe(404);
    expect(foreign.body).toEqual(missing.body); // never reveal that it exists
    expect((await http.patch(`/api/v1/plans/${plan.id}`).set(as('otherTeamPlanner')).send({ name: 'mine', version: 1 })).status).toBe(404);
    expect((await http.delete(`/api/v1/plans/${plan.id}`).set(as('otherTeamPlanner'))).status).toBe(404);
    expect((await http.get(`/api/v1/plans/${plan.id}/nodes`).set(as('otherTeamPlanner'))).status).toBe(404);
    expect((await http.get('/api/v1/plans').set(as('otherTeamPlanner'))).body.total).toBe(0);
  });

  it('a stale version gets 409 version_conflict, not a silent overwrite', async () => {
    const plan = await newPlan();
    const first = await http.patch(`/api/v1/plans/${plan.id}`).set(as('planner')).send({ targetMarginDb: 12, version: 1 });
    expect(first.status).toBe(200);
    expect(first.body.version).toBe(2);
    const stale = await http.patch(`/api/v1/plans/${plan.id}`).set(as('planner')).send({ targetMarginDb: 8, version: 1 });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe('version_conflict');
    expect(stale.body.error.currentVersion).toBe(2);
    expect((await http.get(`/api/v1/plans/${plan.id}`).set(as('viewer'))).body.targetMarginDb).toBe(12);
  });

  it('sites: create, read, update, delete; lat/lon ranges checked', async () => {
    const plan = await newPlan();
    const base = `/api/v1/plans/${plan.id}/sites`;
    expect((await http.post(base).set(as('planner')).send({ name: 'Water tower', lat: 95, lon: 0 })).body.error.message).toMatch(/^lat: latitude must be within ±90°/);
    expect((await http.post(base).set(as('planner')).send({ name: 'Water tower', lat: 45, lon: -181 })).body.error.message).toMatch(/^lon: longitude must be within ±180°/);
    const created = await http.post(base).set(as('planner')).send({ name: 'Water tower', lat: 44.1, lon: -120.2, costUsd: 800 });
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ kind: 'candidate', version: 1, planId: plan.id });
    const id = created.body.id;
    expect((await http.get(`${base}/${id}`).set(as('installer'))).body.name).toBe('Water tower');
    const updated = await http.patch(`${base}/${id}`).set(as('planner')).send({ kind: 'used', version: 1 });
    expect(updated.body).toMatchObject({ kind: 'used', version: 2 });
    expect((await http.patch(`${base}/${id}`).set(as('planner')).send({ kind: 'candidate', version: 1 })).status).toBe(409);
    expect((await http.get(`${base}?kind=used`).set(as('viewer'))).body.total).toBe(1);
    expect((await http.delete(`${base}/${id}`).set(as('viewer'))).status).toBe(403);
    expect((await http.delete(`${base}/${id}`).set(as('planner'))).status).toBe(204);
    expect((await http.get(`${base}/${id}`).set(as('planner'))).status).toBe(404);
  });

  it('gateways: take position from their site, default kit, unknown kit ids are 400', async () => {
    const plan = await newPlan();
    const site = (await http.post(`/api/v1/plans/${plan.id}/sites`).set(as('planner')).send({ name: 'Ridge', lat: 44.2, lon: -120.3 })).body;
    const base = `/api/v1/plans/${plan.id}/gateways`;
    const created = await http.post(base).set(as('planner')).send({ name: 'GW ridge', siteId: site.id, antennaHeightAglM: 12 });
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ lat: 44.2, lon: -120.3, siteId: site.id, antennaHeightAglM: 12, antennaDesignId: 'collinear-fibreglass-6dbi', noiseFigureDb: 6 });
    const badKit = await http.post(base).set(as('planner')).send({ name: 'GW', lat: 1, lon: 1, antennaDesignId: 'no-such-antenna' });
    expect(badKit.status).toBe(400);
    expect(badKit.body.error.message).toMatch(/^antennaDesignId: no antenna design "no-such-antenna"/);
    const noPosition = await http.post(base).set(as('planner')).send({ name: 'GW' });
    expect(noPosition.body.error.message).toMatch(/^lat: required/);
    const foreignSite = await http.post(base).set(as('planner')).send({ name: 'GW', siteId: 'elsewhere' });
    expect(foreignSite.body.error.message).toMatch(/^siteId: /);
    const patched = await http.patch(`${base}/${created.body.id}`).set(as('planner')).send({ txPowerDbm: 20, version: 1 });
    expect(patched.body).toMatchObject({ txPowerDbm: 20, version: 2 });
    expect((await http.get(base).set(as('viewer'))).body.total).toBe(1);
    expect((await http.get(`${base}/${created.body.id}`).set(as('otherTeamPlanner'))).status).toBe(404);
    expect((await http.delete(`${base}/${created.body.id}`).set(as('planner'))).status).toBe(204);
  });

  it('nodes: defaults, fixed SF rule, installers update install status only', async () => {
    const plan = await newPlan();
    const base = `/api/v1/plans/${plan.id}/nodes`;
    const created = await http.post(base).set(as('planner')).send({ name: 'Probe 1', lat: 44, lon: -120, deviceType: 'soil-probe' });
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ antennaDesignId: 'helical-stub', sfPolicy: 'adaptive', environment: 'outdoor', installStatus: 'planned', payloadBytes: 12 });
    const fixed = await http.post(base).set(as('planner')).send({ name: 'Probe 2', lat: 44, lon: -120, deviceType: 'soil-probe', sfPolicy: 'fixed' });
    expect(fixed.status).toBe(400);
    expect(fixed.body.error.message).toMatch(/^fixedSf: required when sfPolicy is fixed/);
    const id = created.body.id;
    const installer = await http.patch(`${base}/${id}`).set(as('installer')).send({ installStatus: 'needs-visit', notes: 'lid cracked', version: 1 });
    expect(installer.status).toBe(200);
    expect(installer.body).toMatchObject({ installStatus: 'needs-visit', notes: 'lid cracked', version: 2 });
    const installerMove = await http.patch(`${base}/${id}`).set(as('installer')).send({ lat: 45, version: 2 });
    expect(installerMove.status).toBe(403);
    expect((await http.patch(`${base}/${id}`).set(as('viewer')).send({ installStatus: 'installed', version: 2 })).status).toBe(403);
    expect((await http.get(`${base}?installStatus=needs-visit`).set(as('viewer'))).body.total).toBe(1);
    expect((await http.patch(`${base}/${id}`).set(as('otherTeamPlanner')).send({ installStatus: 'installed', version: 2 })).status).toBe(404);
    expect((await http.delete(`${base}/${id}`).set(as('installer'))).status).toBe(403);
    expect((await http.delete(`${base}/${id}`).set(as('planner'))).status).toBe(204);
  });

  it('node import from CSV: dry run previews, a bad row writes nothing, a good file writes all', async () => {
    const plan = await newPlan();
    const url = `/api/v1/plans/${plan.id}/nodes/import`;
    const good = 'name,lat,lon,device type,environment,payloadBytes\n"Meter, pit 1",44.01,-120.1,water-meter,pit,10\nTank 2,44.02,-120.2,tank-level,outdoor,8\n';
    const preview = await http.post(`${url}?dryRun=true`).set(as('planner')).set('Content-Type', 'text/csv').send(good);
    expect(preview.status).toBe(200);
    expect(preview.body).toMatchObject({ dryRun: true, valid: true, rowCount: 2, errors: [] });
    expect(preview.body.preview[0]).toMatchObject({ name: 'Meter, pit 1', environment: 'pit', deviceType: 'water-meter' });
    expect((await http.get(`/api/v1/plans/${plan.id}/nodes`).set(as('viewer'))).body.total).toBe(0);

    const bad = `${good}Bad 3,91,-120.3,soil-probe,outdoor,12\nBad 4,44,-120.4,soil-probe,underwater,12\n`;
    const rejected = await http.post(url).set(as('planner')).set('Content-Type', 'text/csv').send(bad);
    expect(rejected.status).toBe(400);
    expect(rejected.body.error.code).toBe('invalid_rows');
    expect(rejected.body.error.rows).toEqual([
      { row: 3, field: 'lat', message: 'latitude must be within ±90°' },
      { row: 4, field: 'environment', message: 'must be outdoor, indoor or pit' },
    ]);
    expect((await http.get(`/api/v1/plans/${plan.id}/nodes`).set(as('viewer'))).body.total).toBe(0);

    const imported = await http.post(url).set(as('planner')).set('Content-Type', 'text/csv').send(good);
    expect(imported.status).toBe(201);
    expect(imported.body.created).toBe(2);
    const audit = await http.get('/api/v1/audit?entity=node').set(as('viewer'));
    expect(audit.body.items).toHaveLength(1); // the rejected import left no audit entry either
    expect(audit.body.items[0]).toMatchObject({ action: 'import', entityId: plan.id, detail: { count: 2 } });
    expect((await http.get(`/api/v1/plans/${plan.id}/nodes`).set(as('viewer'))).body.total).toBe(2);
    expect((await http.post(url).set(as('viewer')).set('Content-Type', 'text/csv').send(good)).status).toBe(403);
    expect((await http.post(url).set(as('otherTeamPlanner')).set('Content-Type', 'text/csv').send(good)).status).toBe(404);
  });

  it('node import from GeoJSON; unknown kit in one row rejects the whole file', async () => {
    const plan = await newPlan();
    const url = `/api/v1/plans/${plan.id}/nodes/import`;
    const feature = (name: string, lon: number, lat: number, extra: Record<string, unknown> = {}) => ({
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [lon, lat] },
      properties: { name, deviceType: 'soil-probe', ...extra },
    });
    const collection = { type: 'FeatureCollection', features: [feature('A', -120, 44), feature('B', -120.1, 44.1, { antennaDesignId: 'made-up' })] };
    const rejected = await http.post(url).set(as('planner')).send(collection);
    expect(rejected.status).toBe(400);
    expect(rejected.body.error.rows).toEqual([{ row: 2, field: 'antennaDesignId', message: 'no antennaDesign "made-up" in the kit catalog' }]);
    collection.features[1] = feature('B', -120.1, 44.1, { antennaDesignId: 'quarter-wave-ground-plane' });
    const ok = await http.post(url).set(as('planner')).set('Content-Type', 'application/geo+json').send(JSON.stringify(collection));
    expect(ok.status).toBe(201);
    expect(ok.body.items.map((n: { name: string; lat: number; lon: number }) => [n.name, n.lat, n.lon])).toEqual([
      ['A', 44, -120],
      ['B', 44.1, -120.1],
    ]);
    const notGeo = await http.post(url).set(as('planner')).send({ type: 'Feature' });
    expect(notGeo.status).toBe(400);
    expect(notGeo.body.error.message).toMatch(/GeoJSON FeatureCollection/);
  });

  it('kit catalog: built-ins are listed and read-only, team rows are private to the team', async () => {
    const antennas = await http.get('/api/v1/kit/antenna-designs?limit=100').set(as('viewer'));
    expect(antennas.status).toBe(200);
    expect(antennas.body.items.length).toBeGreaterThan(3);
    expect(antennas.body.items.every((a: { builtIn: boolean }) => a.builtIn)).toBe(true);
    const builtIn = antennas.body.items[0];
    expect((await http.patch(`/api/v1/kit/antenna-designs/${builtIn.id}`).set(as('planner')).send({ gainDbi: 20, version: builtIn.version })).status).toBe(403);
    expect((await http.delete(`/api/v1/kit/antenna-designs/${builtIn.id}`).set(as('planner'))).status).toBe(403);

    const own = await http.post('/api/v1/kit/antenna-designs').set(as('planner')).send({ name: 'Shed yagi', kind: 'yagi', gainDbi: 9, fromMhz: 902, toMhz: 928 });
    expect(own.status).toBe(201);
    expect(own.body.builtIn).toBe(false);
    const band = await http.post('/api/v1/kit/antenna-designs').set(as('planner')).send({ name: 'x', kind: 'yagi', gainDbi: 9, fromMhz: 928, toMhz: 902 });
    expect(band.body.error.message).toMatch(/^toMhz: must be above fromMhz/);
    expect((await http.post('/api/v1/kit/antenna-designs').set(as('viewer')).send({ name: 'x', kind: 'yagi', gainDbi: 9, fromMhz: 902, toMhz: 928 })).status).toBe(403);
    expect((await http.get(`/api/v1/kit/antenna-designs/${own.body.id}`).set(as('otherTeamPlanner'))).status).toBe(404);
    const edited = await http.patch(`/api/v1/kit/antenna-designs/${own.body.id}`).set(as('planner')).send({ gainDbi: 10, version: 1 });
    expect(edited.body).toMatchObject({ gainDbi: 10, version: 2 });
    expect((await http.patch(`/api/v1/kit/antenna-designs/${own.body.id}`).set(as('planner')).send({ gainDbi: 11, version: 1 })).status).toBe(409);

    const feedline = await http.post('/api/v1/kit/feedlines').set(as('planner')).send({ name: 'Drum cable', lossDbPer100m: 12, referenceMhz: 915 });
    expect(feedline.status).toBe(201);
    const mast = await http.post('/api/v1/kit/masts').set(as('planner')).send({ name: 'Silo bracket', heightM: 18 });
    expect(mast.status).toBe(201);
    expect((await http.get('/api/v1/kit/masts').set(as('otherTeamPlanner'))).body.items.some((m: { id: string }) => m.id === mast.body.id)).toBe(false);
    expect((await http.delete(`/api/v1/kit/masts/${mast.body.id}`).set(as('otherTeamPlanner'))).status).toBe(404);
    expect((await http.delete(`/api/v1/kit/masts/${mast.body.id}`).set(as('planner'))).status).toBe(204);
    // A node may use the team's own antenna.
    const plan = await newPlan();
    const node = await http.post(`/api/v1/plans/${plan.id}/nodes`).set(as('planner')).send({ name: 'N', lat: 1, lon: 1, deviceType: 'x', antennaDesignId: own.body.id });
    expect(node.status).toBe(201);
    const foreignUse = await http.post('/api/v1/plans').set(as('otherTeamPlanner')).send({ name: 'theirs' });
    const theirNode = await http.post(`/api/v1/plans/${foreignUse.body.id}/nodes`).set(as('otherTeamPlanner')).send({ name: 'N', lat: 1, lon: 1, deviceType: 'x', antennaDesignId: own.body.id });
    expect(theirNode.status).toBe(400);
  });

  it('every write lands in the audit log (who, what, when), readable by the team only', async () => {
    const plan = await newPlan('Audited');
    await http.patch(`/api/v1/plans/${plan.id}`).set(as('planner')).send({ name: 'Audited 2', version: 1 });
    await http.post(`/api/v1/plans/${plan.id}/sites`).set(as('planner')).send({ name: 'S', lat: 1, lon: 1 });
    const log = await http.get('/api/v1/audit').set(as('viewer'));
    expect(log.status).toBe(200);
    expect(log.body.items.map((e: { action: string; entity: string }) => `${e.action} ${e.entity}`)).toEqual(['create site', 'update plan', 'create plan']);
    const planner = await t.db.prisma.apiToken.findFirstOrThrow({ where: { user: { role: 'planner', teamId: t.teamId } } });
    expect(log.body.items[0].userId).toBe(planner.userId);
    expect(Date.parse(log.body.items[0].at)).toBeGreaterThan(Date.now() - 120_000);
    expect((await http.get(`/api/v1/audit?entity=plan&entityId=${plan.id}`).set(as('viewer'))).body.total).toBe(2);
    expect((await http.get('/api/v1/audit').set(as('otherTeamPlanner'))).body.total).toBe(0);
  });
  it('a write and its audit entry are one transaction: a refused audit insert keeps neither; a good write leaves exactly one entry', async () => {
    const plan = await newPlan('Atomic');
    const site = await http.post(`/api/v1/plans/${plan.id}/sites`).set(as('planner')).send({ name: 'Hilltop', lat: 1, lon: 1 });
    expect(site.status).toBe(201);
    expect(await t.db.prisma.auditEntry.count({ where: { entityId: plan.id } })).toBe(1);
    expect(await t.db.prisma.auditEntry.count({ where: { entityId: site.body.id } })).toBe(1);
    // The database itself refuses these audit rows (a CHECK constraint), so the failure is a
    // real insert error on both engines, raised after the row write in the same request.
    await t.db.raw.exec(
      `ALTER TABLE "AuditEntry" ADD CONSTRAINT "test_audit_refused" CHECK (COALESCE("detail"->>'name', '') <> 'audit-must-fail' AND "entityId" NOT IN ('${plan.id}', '${site.body.id}') AND "action" <> 'issue') NOT VALID`,
    );
    try {
      const auditBefore = await t.db.prisma.auditEntry.count();
      const refused = 'audit-must-fail';
      expect((await http.post('/api/v1/plans').set(as('planner')).send({ name: refused })).status).toBe(500);
      expect((await http.post(`/api/v1/plans/${plan.id}/sites`).set(as('planner')).send({ name: refused, lat: 2, lon: 2 })).status).toBe(500);
      expect((await http.post(`/api/v1/plans/${plan.id}/gateways`).set(as('planner')).send({ name: refused, lat: 2, lon: 2 })).status).toBe(500);
      expect((await http.post(`/api/v1/plans/${plan.id}/nodes`).set(as('planner')).send({ name: refused, lat: 2, lon: 2, deviceType: 'soil-probe' })).status).toBe(500);
      expect(await t.db.prisma.plan.count({ where: { name: refused } })).toBe(0);
      expect(await t.db.prisma.site.count({ where: { name: refused } })).toBe(0);
      expect(await t.db.prisma.gateway.count({ where: { name: refused } })).toBe(0);
      expect(await t.db.prisma.node.count({ where: { name: refused } })).toBe(0);
      // Updates and deletes roll back too (a plan delete would have cascaded to its site).
      expect((await http.patch(`/api/v1/plans/${plan.id}`).set(as('planner')).send({ name: 'Renamed', version: 1 })).status).toBe(500);
      expect((await http.patch(`/api/v1/plans/${plan.id}/sites/${site.body.id}`).set(as('planner')).send({ name: 'Renamed', version: 1 })).status).toBe(500);
      expect((await http.delete(`/api/v1/plans/${plan.id}/sites/${site.body.id}`).set(as('planner'))).status).toBe(500);
      expect((await http.delete(`/api/v1/plans/${plan.id}`).set(as('planner'))).status).toBe(500);
      expect(await t.db.prisma.plan.findUnique({ where: { id: plan.id } })).toMatchObject({ name: 'Atomic', version: 1 });
      expect(await t.db.prisma.site.findUnique({ where: { id: site.body.id } })).toMatchObject({ name: 'Hilltop', version: 1 });
      // A token issued for a new user: user, token and audit entry all go or none.
      const usersBefore = await t.db.prisma.user.count();
      const tokensBefore = await t.db.prisma.apiToken.count();
      expect((await http.post('/api/v1/tokens').set(as('planner')).send({ role: 'installer', userName: 'Field crew 3' })).status).toBe(500);
      expect(await t.db.prisma.user.count()).toBe(usersBefore);
      expect(await t.db.prisma.apiToken.count()).toBe(tokensBefore);
      expect(await t.db.prisma.auditEntry.count()).toBe(auditBefore);
    } finally {
      await t.db.raw.exec(`ALTER TABLE "AuditEntry" DROP CONSTRAINT IF EXISTS "test_audit_refused"`);
    }
    const patched = await http.patch(`/api/v1/plans/${plan.id}`).set(as('planner')).send({ name: 'Renamed', version: 1 });
    expect(patched.status).toBe(200);
    expect(await t.db.prisma.auditEntry.findMany({ where: { entityId: plan.id }, select: { action: true } })).toEqual(expect.arrayContaining([{ action: 'create' }, { action: 'update' }]));
    expect(await t.db.prisma.auditEntry.count({ where: { entityId: plan.id } })).toBe(2);
  });
  it('deleting a plan removes its terrain files and coverage result folders, keeps files other plans use, and nothing on a failed delete', async () => {
    const filesDir = t.config.filesDir;
    const plan = await newPlan('Short-lived');
    const keeper = await newPlan('Keeper');
    const layer = (planId: string, filePath: string) => ({
      planId, kind: 'elevation' as const, name: 'DEM', filePath, fileBytes: 4n, widthPx: 1, heightPx: 1, proj4: '+proj=longlat +datum=WGS84', geoTransform: [0, 1, 0, 0, 0, -1], west: 0, south: 0, east: 1, north: 1, resolutionM: 30,
    });
    const put = (relativePath: string) => {
      mkdirSync(join(filesDir, relativePath, '..'), { recursive: true });
      writeFileSync(join(filesDir, relativePath), 'tiff');
      return relativePath;
    };
    const own = put(`terrain/${plan.id}/own.tif`);
    const stray = put(`terrain/${plan.id}/.incoming-interrupted.tif`);
    const shared = put('terrain/shared-dem.tif');
    const keepersOwn = put(`terrain/${keeper.id}/kept.tif`);
    await t.db.prisma.terrainLayer.createMany({ data: [layer(plan.id, own), layer(plan.id, shared), layer(keeper.id, shared), layer(keeper.id, keepersOwn)] });
    const run = await t.db.prisma.coverageRun.create({ data: { planId: plan.id, status: 'done' } });
    await t.db.prisma.coverageRun.update({ where: { id: run.id }, data: { resultPath: `coverage/${run.id}` } });
    const result = put(`coverage/${run.id}/margin.tif`);
    const partial = put(`coverage/${run.id}.partial-123-456/loss.tif`);
    const keeperRun = await t.db.prisma.coverageRun.create({ data: { planId: keeper.id, status: 'done' } });
    const keeperResult = put(`coverage/${keeperRun.id}/margin.tif`);

    // A delete that fails (its audit entry refused) keeps the rows and the files.
    await t.db.raw.exec(`ALTER TABLE "AuditEntry" ADD CONSTRAINT "test_audit_refused" CHECK ("entityId" <> '${plan.id}') NOT VALID`);
    try {
      expect((await http.delete(`/api/v1/plans/${plan.id}`).set(as('planner'))).status).toBe(500);
    } finally {
      await t.db.raw.exec(`ALTER TABLE "AuditEntry" DROP CONSTRAINT IF EXISTS "test_audit_refused"`);
    }
    for (const path of [own, stray, shared, result, partial]) expect(existsSync(join(filesDir, path)), path).toBe(true);

    expect((await http.delete(`/api/v1/plans/${plan.id}`).set(as('planner'))).status).toBe(204);
    expect(await t.db.prisma.terrainLayer.count({ where: { planId: plan.id } })).toBe(0);
    expect(await t.db.prisma.coverageRun.count({ where: { planId: plan.id } })).toBe(0);
    expect(existsSync(join(filesDir, 'terrain', plan.id))).toBe(false);
    expect(existsSync(join(filesDir, 'coverage', run.id))).toBe(false);
    expect(existsSync(join(filesDir, partial))).toBe(false);
    // Still referenced by the other plan, or the other plan's own: kept.
    for (const path of [shared, keepersOwn, keeperResult]) expect(existsSync(join(filesDir, path)), path).toBe(true);
  });
});
