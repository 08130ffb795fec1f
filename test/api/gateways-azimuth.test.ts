// Gateway antenna azimuth: a directional gateway antenna points where the gateway row says
// (Gateway.antennaAzimuthDeg, degrees clockwise from true north); null = omni / aimed at
// each node. The expected RSSI change is the catalog pattern's own figure
// (antennaGainDbi, server/radio/antennas.ts), read back from the team's catalog here.
import geodesic from 'geographiclib-geodesic';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { findAntennaDesignForTeam } from '../../server/db/repositories/kit.ts';
import { antennaGainDbi } from '../../server/radio/antennas.ts';

const WGS84 = geodesic.Geodesic.WGS84;
const NODE = { lat: 40, lon: -105 };
// Gateways 5 km due north of the node (geographiclib Direct); no terrain: smooth earth.
const north = WGS84.Direct(NODE.lat, NODE.lon, 0, 5_000);
const GATEWAY = { lat: north.lat2 as number, lon: north.lon2 as number };
/** Bearing gateway → node, degrees clockwise from north in [0, 360). */
const towardNodeDeg = (((WGS84.Inverse(GATEWAY.lat, GATEWAY.lon, NODE.lat, NODE.lon).azi1 as number) % 360) + 360) % 360;
const awayFromNodeDeg = (towardNodeDeg + 180) % 360;

describeEngines('gateway antenna azimuth', (engine) => {
  let t: TestApp;
  let planId: string;
  let nodeId: string;
  let yagiId: string;
  let omniId: string;
  const planner = () => bearer(t.tokens.planner);

  beforeAll(async () => {
    t = await createTestApp(engine);
    const plan = await request(t.app.server).post('/api/v1/plans').set(planner()).send({ name: 'Azimuth test', targetMarginDb: 5, propagationMethod: 'free-space', settings: { frequencyMhz: 915 } });
    expect(plan.status).toBe(201);
    planId = plan.body.id;
    const gateway = (name: string, antennaDesignId: string, extra: Record<string, unknown> = {}) =>
      request(t.app.server).post(`/api/v1/plans/${planId}/gateways`).set(planner()).send({ name, ...GATEWAY, antennaDesignId, antennaHeightAglM: 20, feedlineId: 'low-loss-10mm', feedlineLengthM: 0, ...extra });
    const yagi = await gateway('Yagi mast', 'yagi-5-element', { antennaAzimuthDeg: towardNodeDeg });
    expect(yagi.status).toBe(201);
    expect(yagi.body.antennaAzimuthDeg).toBeCloseTo(towardNodeDeg, 9);
    yagiId = yagi.body.id;
    const omni = await gateway('Collinear mast', 'collinear-fibreglass-6dbi');
    expect(omni.status).toBe(201);
    expect(omni.body.antennaAzimuthDeg).toBeNull();
    omniId = omni.body.id;
    const node = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/nodes`)
      .set(planner())
      .send({ name: 'Probe', ...NODE, deviceType: 'soil probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2, feedlineId: null, txPowerDbm: 14, payloadBytes: 12, environment: 'outdoor' });
    expect(node.status).toBe(201);
    nodeId = node.body.id;
  }, 120_000);

  afterAll(async () => {
    await t?.close();
  });

  async function rssiByGateway(): Promise<Map<string, number>> {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(res.status).toBe(200);
    return new Map((res.body.links as Array<{ gatewayId: string; rssiDbm: number }>).map((link) => [link.gatewayId, link.rssiDbm]));
  }

  async function patchGateway(id: string, body: Record<string, unknown>) {
    const current = await request(t.app.server).get(`/api/v1/plans/${planId}/gateways/${id}`).set(planner());
    return request(t.app.server).patch(`/api/v1/plans/${planId}/gateways/${id}`).set(planner()).send({ ...body, version: current.body.version });
  }

  it("a directional gateway aimed away from the node loses the pattern's front-to-back figure; null aims it at each node again", async () => {
    const yagi = await findAntennaDesignForTeam(t.db, t.teamId, 'yagi-5-element');
    expect(yagi.pattern.kind).toBe('directional');
    // Gain = peak + azimuth cut(az − boresight) + elevation cut(el): the elevation term is the same for both aims.
    const frontToBackDb = antennaGainDbi(yagi, towardNodeDeg, 0, towardNodeDeg) - antennaGainDbi(yagi, towardNodeDeg, 0, awayFromNodeDeg);
    expect(frontToBackDb).toBeGreaterThan(10);

    const aimedAt = await rssiByGateway();
    const omniBefore = aimedAt.get(omniId) as number;
    expect((await patchGateway(yagiId, { antennaAzimuthDeg: awayFromNodeDeg })).status).toBe(200);
    const aimedAway = await rssiByGateway();
    expect((aimedAt.get(yagiId) as number) - (aimedAway.get(yagiId) as number)).toBeCloseTo(frontToBackDb, 6);
    expect(aimedAway.get(omniId)).toBeCloseTo(omniBefore, 9);

    // null = aimed at each node: the same figure as aiming at this node by hand.
    expect((await patchGateway(yagiId, { antennaAzimuthDeg: null })).status).toBe(200);
    const unaimed = await rssiByGateway();
    expect(unaimed.get(yagiId)).toBeCloseTo(aimedAt.get(yagiId) as number, 6);
  });

  it('an omni gateway antenna is unaffected by an azimuth', async () => {
    const before = (await rssiByGateway()).get(omniId) as number;
    expect((await patchGateway(omniId, { antennaAzimuthDeg: awayFromNodeDeg })).status).toBe(200);
    const after = (await rssiByGateway()).get(omniId) as number;
    expect(after).toBeCloseTo(before, 9);
  });

  it('an azimuth outside 0 ≤ az < 360 answers 400 naming the field, and nothing changes', async () => {
    const created = await request(t.app.server).post(`/api/v1/plans/${planId}/gateways`).set(planner()).send({ name: 'Bad aim', ...GATEWAY, antennaAzimuthDeg: 400 });
    expect(created.status).toBe(400);
    expect(created.body.error.message).toMatch(/antennaAzimuthDeg/);
    expect(created.body.error.message).toMatch(/360/);
    const patched = await patchGateway(yagiId, { antennaAzimuthDeg: 360 });
    expect(patched.status).toBe(400);
    expect(patched.body.error.message).toMatch(/antennaAzimuthDeg/);
    const negative = await patchGateway(yagiId, { antennaAzimuthDeg: -1 });
    expect(negative.status).toBe(400);
    expect(negative.body.error.message).toMatch(/antennaAzimuthDeg.*≥ 0/);
    const list = await request(t.app.server).get(`/api/v1/plans/${planId}/gateways`).set(planner());
    expect(list.body.total).toBe(2);
    expect(list.body.items.find((g: { id: string }) => g.id === yagiId).antennaAzimuthDeg).toBeNull();
  });
});
