// POST /api/v1/tune (JSON and multipart) and antenna readings of a node (audited).
import { afterAll, beforeAll, expect, it } from 'vitest';
import request from 'supertest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { touchstone } from '../unit/tuning/series-rlc.ts';

const antenna = { resonanceMhz: 903.37, resistanceOhm: 42, inductanceNh: 100 };
const s1p = touchstone(antenna, 'RI', { fromMhz: 850, toMhz: 980, stepMhz: 1 });

describeEngines('antenna tuning API', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  let planId: string;
  let nodeId: string;
  const as = (who: keyof TestApp['tokens']) => bearer(t.tokens[who]);

  beforeAll(async () => {
    t = await createTestApp(engine);
    http = request(t.app.server);
    const plan = await t.db.prisma.plan.create({ data: { teamId: t.teamId, name: 'Tuning', bandPlanId: 'us-902-928' } });
    planId = plan.id;
    nodeId = (await t.db.prisma.node.create({ data: { planId, name: 'Silo roof', lat: 40, lon: -105, deviceType: 'probe', antennaDesignId: 'quarter-wave-ground-plane', antennaHeightAglM: 2 } })).id;
  }, 120_000);
  afterAll(async () => {
    await t?.close();
  });

  it('JSON: answers the result with every documented field', async () => {
    const res = await http.post('/api/v1/tune').set(as('viewer')).send({ s1p, band: 'us-902-928', design: 'quarter-wave-ground-plane', lengthMm: 80 });
    expect(res.status).toBe(200);
    expect(Math.abs(res.body.resonanceMhz - antenna.resonanceMhz)).toBeLessThan(0.9);
    for (const key of ['vswrAtResonance', 'vswrAtBandCentre', 'returnLossDbAtBandCentre', 'vswr2BandMhz', 'newLengthMm', 'trimMm', 'advice', 'chart', 'channels']) expect(res.body).toHaveProperty(key);
    expect(res.body.advice[0].message).toMatch(/^Trim 1\.0 mm from the radiator tip/);
    expect(res.body.reading).toBeNull();
  });

  it('multipart: the file part and form fields', async () => {
    const res = await http.post('/api/v1/tune').set(as('installer')).field('band', 'us-902-928').field('design', 'quarter-wave-ground-plane').field('lengthMm', '80').attach('file', Buffer.from(s1p), 'roof.s1p');
    expect(res.status).toBe(200);
    expect(res.body.newLengthMm).toBeCloseTo((80 * res.body.resonanceMhz) / 915, 2);
  });

  it('bad input: 400 naming the line or the field, never a 500', async () => {
    const twoPort = '# MHz S RI R 50\n900 0.1 0 0.9 0 0.9 0 0.1 0\n';
    const cases: Array<[Record<string, unknown>, RegExp]> = [
      [{ s1p: twoPort, band: 'us-902-928' }, /^file: line 2: .*two-port/],
      [{ s1p: 'just words', band: 'us-902-928' }, /^file: line 1: not a Touchstone file/],
      [{ s1p, band: 'nowhere' }, /^band: /],
      [{ s1p, band: 'us-902-928', design: 'quarter-wave-ground-plane', lengthMm: -5 }, /^lengthMm: /],
      [{ band: 'us-902-928' }, /^s1p: give the sweep/],
      [{ s1p, band: 'us-902-928', extra: 1 }, /^extra: unknown field/],
      [{ s1p: touchstone(antenna, 'RI', { fromMhz: 700, toMhz: 800, stepMhz: 1 }), band: 'us-902-928' }, /^file: line \d+: the sweep covers 700–800 MHz/],
    ];
    for (const [body, pattern] of cases) {
      const res = await http.post('/api/v1/tune').set(as('planner')).send(body);
      expect(res.status, JSON.stringify(body).slice(0, 80)).toBe(400);
      expect(res.body.error.code).toBe('invalid_input');
      expect(res.body.error.message).toMatch(pattern);
    }
    const noFile = await http.post('/api/v1/tune').set(as('planner')).field('band', 'us-902-928');
    expect(noFile.status).toBe(400);
    expect(noFile.body.error.message).toMatch(/^file: /);
  });

  it('attaching to a node stores an antenna reading with its audit entry; band and design come from the plan and the node', async () => {
    const res = await http.post('/api/v1/tune').set(as('installer')).send({ s1p, fileName: 'roof.s1p', planId, nodeId, lengthMm: 80, note: 'after mounting' });
    expect(res.status).toBe(200);
    expect(res.body.bandId).toBe('us-902-928');
    expect(res.body.design).toBe('quarter-wave-ground-plane');
    expect(res.body.reading.nodeId).toBe(nodeId);
    const list = await http.get(`/api/v1/plans/${planId}/nodes/${nodeId}/antenna-readings`).set(as('viewer'));
    expect(list.status).toBe(200);
    expect(list.body.items).toHaveLength(1);
    expect(list.body.items[0].result.trimMm).toBe(res.body.trimMm);
    expect(list.body.items[0].note).toBe('after mounting');
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entity: 'antenna-reading' } });
    expect(audit).toHaveLength(1);
    expect(audit[0].entityId).toBe(res.body.reading.id);
  });

  it('a viewer cannot attach; another team gets 404; a bad file stores nothing', async () => {
    const viewer = await http.post('/api/v1/tune').set(as('viewer')).send({ s1p, planId, nodeId });
    expect(viewer.status).toBe(403);
    const other = await http.post('/api/v1/tune').set(as('otherTeamPlanner')).send({ s1p, planId, nodeId });
    expect(other.status).toBe(404);
    const otherList = await http.get(`/api/v1/plans/${planId}/nodes/${nodeId}/antenna-readings`).set(as('otherTeamPlanner'));
    expect(otherList.status).toBe(404);
    const before = await t.db.prisma.antennaReading.count();
    const bad = await http.post('/api/v1/tune').set(as('installer')).send({ s1p: '# MHz S RI R 50\n900 x 0\n', planId, nodeId });
    expect(bad.status).toBe(400);
    expect(await t.db.prisma.antennaReading.count()).toBe(before);
  });
});
