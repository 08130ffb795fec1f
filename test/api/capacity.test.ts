// Capacity API: the figures come from the link engine's fleet (same time on air and
// link-only delivery as GET /links — one budget), the aloha formula of Abramson 1970 on
// them, the EU868 duty-cycle budget floor(36 s / time on air), the what-if rate factor, a
// reproducible simulation, and the errors (bad model → 400 naming the field, other team → 404).
import { execFileSync, spawnSync } from 'node:child_process';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type Engine, type TestApp } from '../helpers/test-app.ts';

describeEngines('capacity API', (engine: Engine) => {
  let t: TestApp;
  let planId: string;
  const nodeIds: string[] = [];

  beforeAll(async () => {
    t = await createTestApp(engine);
    const planner = bearer(t.tokens.planner);
    // No terrain: paths over a smooth earth (the engine says so in its warnings); free space is enough here.
    const plan = await request(t.app.server).post('/api/v1/plans').set(planner).send({ name: 'Capacity test', bandPlanId: 'eu-863-870', targetMarginDb: 5, propagationMethod: 'free-space' });
    expect(plan.status).toBe(201);
    planId = plan.body.id;
    const gw = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/gateways`)
      .set(planner)
      .send({ name: 'Barn mast', lat: 52.0, lon: 5.0, antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 20, feedlineId: 'low-loss-10mm', feedlineLengthM: 0, noiseFigureDb: 6 });
    expect(gw.status).toBe(201);
    for (let k = 0; k < 6; k++) {
      const node = await request(t.app.server)
        .post(`/api/v1/plans/${planId}/nodes`)
        .set(planner)
        .send({ name: `Probe ${k}`, lat: 52.0 + 0.004 * (k + 1), lon: 5.0 + 0.003 * k, deviceType: 'soil probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2, feedlineId: null, txPowerDbm: 14, payloadBytes: 12, messagesPerHour: 200 + 100 * k, environment: 'outdoor' });
      expect(node.status).toBe(201);
      nodeIds.push(node.body.id);
    }
  }, 180_000);

  afterAll(async () => {
    await t?.close();
  });

  it('aloha: per node time on air and link-only delivery equal the fleet table; survival = exp(−Σ λ_j (T_i + T_j) / C) (Abramson 1970); EU868 budget = floor(36 s / ToA)', async () => {
    const viewer = bearer(t.tokens.viewer);
    const fleet = await request(t.app.server).get(`/api/v1/plans/${planId}/links`).set(viewer);
    expect(fleet.status).toBe(200);
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=aloha`).set(viewer);
    expect(res.status).toBe(200);
    const body = res.body;
    expect(body.model).toBe('aloha');
    expect(body.channels).toBe(3);
    expect(body.rules.dutyCyclePercent).toBe(1);
    expect(body.nodes).toHaveLength(6);
    expect(body.gateways).toHaveLength(1);
    const byId = new Map<string, { timeOnAirMs: number; combinedDeliveryProbability: number; bestSf: number }>(fleet.body.items.map((item: { nodeId: string }) => [item.nodeId, item]));
    const nodes = body.nodes as Array<{ nodeId: string; sf: number; timeOnAirMs: number; messagesPerHour: number; successProbability: number; linkDeliveryProbability: number; deliveryRatio: number; maxMessagesPerHourAtDutyCycle: number }>;
    for (const node of nodes) {
      const row = byId.get(node.nodeId);
      expect(row).toBeDefined();
      expect(node.timeOnAirMs).toBeCloseTo(row!.timeOnAirMs, 9);
      expect(node.linkDeliveryProbability).toBeCloseTo(row!.combinedDeliveryProbability, 9);
      expect(node.maxMessagesPerHourAtDutyCycle).toBe(Math.floor(36_000 / node.timeOnAirMs));
      expect(node.deliveryRatio).toBeLessThanOrEqual(node.linkDeliveryProbability + 1e-12);
      // Pure ALOHA over the other nodes of the same SF, spread over 3 channels.
      let hazard = 0;
      for (const other of nodes) {
        if (other.nodeId === node.nodeId || other.sf !== node.sf) continue;
        hazard += ((other.messagesPerHour / 3600) * (node.timeOnAirMs / 1000 + other.timeOnAirMs / 1000)) / 3;
      }
      expect(node.successProbability).toBeCloseTo(Math.exp(-hazard), 9);
    }
    const gateway = body.gateways[0];
    const offered = nodes.reduce((sum, n) => sum + ((n.messagesPerHour / 3600) * (n.timeOnAirMs / 1000)) / 3, 0);
    expect(gateway.nodes).toBe(6);
    expect(gateway.offeredLoadErlangPerChannel).toHaveLength(3);
    expect(gateway.offeredLoadErlangPerChannel[0]).toBeCloseTo(offered, 9);
    expect(gateway.perSf.reduce((sum: number, s: { airtimeShare: number }) => sum + s.airtimeShare, 0)).toBeCloseTo(1, 9);
    expect(gateway.downlink.airtimeShare).toBe(0);
    expect(body.sources.join(' ')).toMatch(/Abramson/);
    expect(body.cautions.length).toBeGreaterThan(0);
  });

  it('the what-if rate factor doubles the offered load; simulate is reproducible for a seed', async () => {
    const viewer = bearer(t.tokens.viewer);
    const base = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=capture`).set(viewer);
    const doubled = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=capture&rateScale=2`).set(viewer);
    expect(doubled.status).toBe(200);
    expect(doubled.body.rateScale).toBe(2);
    expect(doubled.body.gateways[0].offeredLoadErlang).toBeCloseTo(2 * base.body.gateways[0].offeredLoadErlang, 9);
    expect(doubled.body.totals.meanDeliveryRatio).toBeLessThan(base.body.totals.meanDeliveryRatio);
    // What-if of the channel count: the same traffic over 8 channels instead of 3 loads each channel 3/8 as much.
    const eight = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=aloha&channels=8`).set(viewer);
    expect(eight.status).toBe(200);
    expect(eight.body.channels).toBe(8);
    expect(eight.body.gateways[0].offeredLoadErlangPerChannel).toHaveLength(8);
    expect(eight.body.gateways[0].offeredLoadErlangPerChannel[0]).toBeCloseTo((base.body.gateways[0].offeredLoadErlangPerChannel[0] * 3) / 8, 9);
    const one = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=simulate&seed=5&durationS=1800&confirmedShare=0.5`).set(viewer);
    const two = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=simulate&seed=5&durationS=1800&confirmedShare=0.5`).set(viewer);
    expect(one.status).toBe(200);
    expect(one.body.seed).toBe(5);
    expect(one.body.durationS).toBe(1800);
    expect(one.body.totals.transmissions).toBeGreaterThan(500);
    expect(one.body.gateways[0].downlink.messagesPerHour).toBeGreaterThan(0);
    expect(two.body).toEqual(one.body);
  });

  const hasPdftotext = spawnSync('pdftotext', ['-v']).status === 0;
  it.skipIf(!hasPdftotext && process.env.CI !== 'true')('the report PDF carries the capacity figures (read back with pdftotext, poppler-utils)', async () => {
    const viewer = bearer(t.tokens.viewer);
    const capacity = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=capture`).set(viewer);
    const pdf = await request(t.app.server)
      .get(`/api/v1/plans/${planId}/report.pdf`)
      .set(viewer)
      .buffer(true)
      .parse((res, done) => {
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('end', () => done(null, Buffer.concat(chunks)));
      });
    expect(pdf.status).toBe(200);
    const text = execFileSync('pdftotext', ['-', '-'], { input: pdf.body as Buffer, encoding: 'utf8' }).replace(/\s+/g, ' ');
    expect(text).toMatch(/Mean delivery ratio \(links and collisions\)/);
    expect(text).toContain(`${(capacity.body.totals.meanDeliveryRatio * 100).toFixed(1)} %`);
    expect(text).toMatch(/Gateway Barn mast.{0,40}6 nodes heard, offered load/);
  });

  it('bad input answers 400 naming the field; another team gets 404', async () => {
    const viewer = bearer(t.tokens.viewer);
    const bad = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?model=magic`).set(viewer);
    expect(bad.status).toBe(400);
    expect(bad.body.error.code).toBe('invalid_input');
    expect(bad.body.error.message).toMatch(/model/);
    expect(bad.body.error.message).toMatch(/aloha, capture, simulate/);
    const negative = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity?rateScale=-1`).set(viewer);
    expect(negative.status).toBe(400);
    expect(negative.body.error.message).toMatch(/rateScale/);
    const other = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity`).set(bearer(t.tokens.otherTeamPlanner));
    expect(other.status).toBe(404);
    const anonymous = await request(t.app.server).get(`/api/v1/plans/${planId}/capacity`);
    expect(anonymous.status).toBe(401);
  });
});
