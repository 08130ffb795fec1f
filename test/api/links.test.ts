// Links API: hand-computed budgets through the whole stack (terrain file →
// profile → path method → budget), the cache, kit previews, the fleet table,
// link check, recommendation, visit sheet, readings and cross-team 404s.
import { mkdtempSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import geodesic from 'geographiclib-geodesic';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { writeFileSync } from 'node:fs';
import { standardNormalCdf } from '../../server/planning/probability.ts';
import { findPlanById } from '../../server/db/repositories/links.ts';
import { nodeLinkCheck, nodeLinks, nodeRecommendation, nodeVisitSheet } from '../../server/app/links.ts';

const WGS84 = geodesic.Geodesic.WGS84;
const NODE = { lat: 40, lon: -105 };
// Gateway exactly 10 000 m due north on the WGS84 geodesic (geographiclib Direct), ridge at 5 000 m.
const gwPoint = WGS84.Direct(NODE.lat, NODE.lon, 0, 10_000);
const midPoint = WGS84.Direct(NODE.lat, NODE.lon, 0, 5_000);
const GATEWAY = { lat: gwPoint.lat2 as number, lon: gwPoint.lon2 as number };

/** Flat 0 m DEM in EPSG:4326 with one 60 m row of cells (≈ 11 m north–south) across the path midpoint. */
function writeRidgeDem(dir: string): { path: string; bytes: number; widthPx: number; heightPx: number; west: number; north: number; south: number; east: number; cell: number } {
  const cell = 0.0001;
  const west = NODE.lon - 0.001;
  const east = NODE.lon + 0.001;
  const south = NODE.lat - 0.001;
  const north = GATEWAY.lat + 0.001;
  const widthPx = Math.round((east - west) / cell);
  const heightPx = Math.round((north - south) / cell);
  const data = new Float32Array(widthPx * heightPx);
  const ridgeRow = Math.floor((north - (midPoint.lat2 as number)) / cell);
  for (let x = 0; x < widthPx; x++) data[ridgeRow * widthPx + x] = 60;
  const bytes = writeGeoTiff({ widthPx, heightPx, data, geoTransform: [west, cell, 0, north, 0, -cell], epsg: 4326, compression: 'deflate' });
  const path = join(dir, 'ridge.tif');
  writeFileSync(path, bytes);
  return { path, bytes: statSync(path).size, widthPx, heightPx, west, north, south, east, cell };
}

let t: TestApp;
let planId: string;
let nodeId: string;
let gatewayId: string;
const flat = { kind: 'omni', elevation: { angleDeg: [-90, 90], relativeDb: [0, 0] } };

beforeAll(async () => {
  t = await createTestApp('pglite');
  const dem = writeRidgeDem(mkdtempSync(join(tmpdir(), 'earshot-links-')));
  const planner = bearer(t.tokens.planner);
  const plan = await request(t.app.server)
    .post('/api/v1/plans')
    .set(planner)
    .send({ name: 'Ridge test', targetMarginDb: 5, propagationMethod: 'bullington', settings: { profileStepM: 100, profileInterpolation: 'nearest', framingOverheadBytes: 0, frequencyMhz: 915 } });
  expect(plan.status).toBe(201);
  planId = plan.body.id;
  // Test kit: flat patterns so the gains are exactly the peak gains (0 and 3 dBi), VSWR 1.
  for (const [id, gainDbi] of [['test-iso-0', 0], ['test-iso-3', 3]] as const) {
    await t.db.prisma.antennaDesign.create({ data: { id, teamId: t.teamId, name: `Test isotropic ${gainDbi} dBi`, kind: 'custom', gainDbi, pattern: flat, fromMhz: 800, toMhz: 1000, typicalVswr: 1, costUsd: gainDbi * 10 + 1 } });
  }
  await t.db.prisma.terrainLayer.create({
    data: { planId, kind: 'elevation', name: 'ridge', filePath: dem.path, fileBytes: BigInt(dem.bytes), widthPx: dem.widthPx, heightPx: dem.heightPx, epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', geoTransform: [dem.west, dem.cell, 0, dem.north, 0, -dem.cell], west: dem.west, south: dem.south, east: dem.east, north: dem.north, resolutionM: 8.5 },
  });
  const gateway = await request(t.app.server)
    .post(`/api/v1/plans/${planId}/gateways`)
    .set(planner)
    .send({ name: 'North mast', lat: GATEWAY.lat, lon: GATEWAY.lon, antennaDesignId: 'test-iso-3', antennaHeightAglM: 30, feedlineId: 'low-loss-10mm', feedlineLengthM: 0, noiseFigureDb: 6 });
  expect(gateway.status).toBe(201);
  gatewayId = gateway.body.id;
  const node = await request(t.app.server)
    .post(`/api/v1/plans/${planId}/nodes`)
    .set(planner)
    .send({ name: 'Probe 1', lat: NODE.lat, lon: NODE.lon, deviceType: 'soil probe', antennaDesignId: 'test-iso-0', antennaHeightAglM: 10, feedlineId: null, txPowerDbm: 14, payloadBytes: 12, environment: 'outdoor', notes: 'gate code 1234; follow the farm track' });
  expect(node.status).toBe(201);
  nodeId = node.body.id;
}, 120_000);

afterAll(async () => {
  await t?.close();
});

describe('node links through the API agree with hand-computed budgets (ITU-R P.525, P.526)', () => {
  it('single knife edge, Bullington (P.526-16 §4.5.1): Lb = 140.688 dB, RSSI = 14 − 140.688 + 3 = −123.688 dBm, best SF9 for 5 dB (see test/unit/planning/link.test.ts for the arithmetic)', async () => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(res.status).toBe(200);
    expect(res.body.links).toHaveLength(1);
    const link = res.body.links[0];
    expect(link.gatewayId).toBe(gatewayId);
    expect(link.distanceM).toBeCloseTo(10_000, 0);
    expect(Math.abs(link.basicLossDb - 140.688)).toBeLessThan(0.01);
    expect(Math.abs(link.rssiDbm - -123.688)).toBeLessThan(0.01);
    // SNR = RSSI − (−174 + 10·log10(125 000) + 6) = −123.688 + 117.031 = −6.657 dB; SF9 margin = −6.657 + 12.5 = 5.843 dB.
    expect(Math.abs(link.snrDb - -6.657)).toBeLessThan(0.01);
    expect(link.bestSf).toBe(9);
    expect(Math.abs(link.marginDb - 5.843)).toBeLessThan(0.01);
    expect(link.timeOnAirMs).toBeCloseTo(144.384, 3);
    expect(link.legal.withinLimit).toBe(true);
    expect(link.lineOfSight).toBe(false);
    expect(res.body.status).toMatch(/served|marginal/);
    expect(res.body.combinedDeliveryProbability).toBeCloseTo(link.deliveryProbability, 12);
  });

  it('delivery probability = Φ(marginDb / sigmaDb) within 0.01; uncalibrated σ ≥ 5 dB; assumptions name σ and its source (server/planning/spread.ts)', async () => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(res.status).toBe(200);
    for (const link of res.body.links) {
      expect(link.sigmaDb).toBeGreaterThanOrEqual(5);
      expect(Math.abs(link.deliveryProbability - standardNormalCdf(link.marginDb / link.sigmaDb))).toBeLessThan(0.01);
      expect(link.sigmaSource).toBe('default');
    }
    expect(res.body.assumptions.sigmaDb).toBeCloseTo(res.body.links[0].sigmaDb, 9);
    expect(res.body.assumptions.sigmaSource).toBe('default');
    // The node sits 10 m above open ground (no land-cover layer: R = 0): the §4.8 height factor is 0, σ = σM = 6 dB.
    expect(res.body.assumptions.sigmaLocationDb).toBe(0);
    expect(res.body.links[0].sigmaDb).toBeCloseTo(6, 9);
    const fleet = await request(t.app.server).get(`/api/v1/plans/${planId}/links`).set(bearer(t.tokens.viewer));
    expect(fleet.status).toBe(200);
    expect(fleet.body.assumptions.sigmaSource).toBe('default');
    expect(fleet.body.items[0].sigmaDb).toBeCloseTo(res.body.links[0].sigmaDb, 9);
  });

  it('the second request is served from the cache; a changed node misses it', async () => {
    const again = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(again.body.cache).toEqual({ computed: 0, cached: 1 });
    const node = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}/nodes/${nodeId}`).set(bearer(t.tokens.planner)).send({ txPowerDbm: 13, version: node.body.version }).expect(200);
    const changed = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(changed.body.cache).toEqual({ computed: 1, cached: 0 });
    expect(changed.body.links[0].rssiDbm).toBeCloseTo(-124.688, 2);
    const latest = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}/nodes/${nodeId}`).set(bearer(t.tokens.planner)).send({ txPowerDbm: 14, version: latest.body.version }).expect(200);
    // A gateway change misses the cache too (and a change back restores the hand value).
    const gw = await request(t.app.server).get(`/api/v1/plans/${planId}/gateways/${gatewayId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}/gateways/${gatewayId}`).set(bearer(t.tokens.planner)).send({ noiseFigureDb: 3, version: gw.body.version }).expect(200);
    const gwChanged = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(gwChanged.body.cache.computed).toBe(1);
    expect(gwChanged.body.links[0].snrDb).toBeCloseTo(-6.657 + 3, 2);
    const gw2 = await request(t.app.server).get(`/api/v1/plans/${planId}/gateways/${gatewayId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}/gateways/${gatewayId}`).set(bearer(t.tokens.planner)).send({ noiseFigureDb: 6, version: gw2.body.version }).expect(200);
  });

  it('kit preview through query parameters changes the margin without saving', async () => {
    const preview = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links?antennaDesignId=test-iso-3`).set(bearer(t.tokens.viewer));
    expect(preview.status).toBe(200);
    expect(preview.body.preview).toBe(true);
    expect(preview.body.links[0].rssiDbm).toBeCloseTo(-120.688, 2);
    const saved = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(saved.body.links[0].rssiDbm).toBeCloseTo(-123.688, 2);
    const bad = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links?antennaHeightAglM=abc`).set(bearer(t.tokens.viewer));
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/antennaHeightAglM/);
    const unknown = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links?antennaDesignId=nope`).set(bearer(t.tokens.viewer));
    expect(unknown.status).toBe(400);
    expect(unknown.body.error.message).toMatch(/antennaDesignId/);
  });

  it('free-space method on the same plan: Lb = 32.448 + 20·log10(915) + 20·log10(10) = 111.676 dB (P.525-4 Eq. (9)) → RSSI −94.676 dBm', async () => {
    const plan = await request(t.app.server).get(`/api/v1/plans/${planId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}`).set(bearer(t.tokens.planner)).send({ propagationMethod: 'free-space', version: plan.body.version }).expect(200);
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(Math.abs(res.body.links[0].basicLossDb - 111.676)).toBeLessThan(0.01);
    expect(Math.abs(res.body.links[0].rssiDbm - -94.676)).toBeLessThan(0.01);
    expect(res.body.links[0].bestSf).toBe(7);
    const back = await request(t.app.server).get(`/api/v1/plans/${planId}`).set(bearer(t.tokens.planner));
    await request(t.app.server).patch(`/api/v1/plans/${planId}`).set(bearer(t.tokens.planner)).send({ propagationMethod: 'bullington', version: back.body.version }).expect(200);
  });
});

describe('fleet table, link check, recommendation, visit sheet', () => {
  it('fleet table: counts per status, status filter and pagination', async () => {
    const second = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/nodes`)
      .set(bearer(t.tokens.planner))
      .send({ name: 'Meter in pit', lat: midPoint.lat2 as number, lon: NODE.lon, deviceType: 'water meter', antennaDesignId: 'test-iso-0', antennaHeightAglM: 1, environment: 'pit' });
    expect(second.status).toBe(201);
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/links?limit=1`).set(bearer(t.tokens.viewer));
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(2);
    expect(res.body.items).toHaveLength(1);
    expect(res.body.next).not.toBeNull();
    const counts = res.body.counts;
    expect(counts.served + counts.marginal + counts.unserved).toBe(2);
    const page2 = await request(t.app.server).get(`/api/v1/plans/${planId}/links?limit=1&cursor=${res.body.next}`).set(bearer(t.tokens.viewer));
    expect(page2.body.items).toHaveLength(1);
    expect(page2.body.items[0].nodeId).not.toBe(res.body.items[0].nodeId);
    const status = res.body.items[0].status as string;
    const filtered = await request(t.app.server).get(`/api/v1/plans/${planId}/links?status=${status}`).set(bearer(t.tokens.viewer));
    expect(filtered.body.items.every((item: { status: string }) => item.status === status)).toBe(true);
    const bad = await request(t.app.server).get(`/api/v1/plans/${planId}/links?status=great`).set(bearer(t.tokens.viewer));
    expect(bad.status).toBe(400);
  });

  it('link check: the ridge is an obstruction, ray and Fresnel bounds per point, expected range 10th < 50th < 90th, cautions', async () => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/check`).set(bearer(t.tokens.installer));
    expect(res.status).toBe(200);
    const profile = res.body.profile;
    expect(profile.lineOfSight).toBe(false);
    expect(profile.points.length).toBeGreaterThan(50);
    const ridge = profile.points.find((p: { groundM: number }) => p.groundM === 60);
    expect(ridge.distanceM).toBeCloseTo(5000, 0);
    expect(ridge.fresnelUpperM).toBeGreaterThan(ridge.rayM);
    expect(profile.obstructions[0].distanceM).toBeCloseTo(5000, 0);
    expect(profile.obstructions[0].clearanceM).toBeLessThan(0);
    const e = profile.expected.rssiDbm;
    expect(e.p10).toBeLessThan(e.p50);
    expect(e.p50).toBeLessThan(e.p90);
    expect(e.p50).toBeCloseTo(-123.688, 2);
    expect(res.body.currentKit.antennaDesignId).toBe('test-iso-0');
    expect(res.body.recommendedKit).not.toBeNull();
    expect(res.body.cautions.join(' ')).toMatch(/height/i);
    expect(res.body.cautions.join(' ')).toMatch(/RF exposure/);
    expect(res.body.cautions.join(' ')).toMatch(/ground/i);
    expect(new Set(res.body.cautions).size).toBe(res.body.cautions.length);
    // Fitted to Probe 1 as it stands (a 10 m mast): work at height and grounding, each once.
    const topics = (res.body.fittedCautions as Array<{ topic: string }>).map((g) => g.topic);
    expect(topics).toEqual(expect.arrayContaining(['Work at height', 'Lightning and grounding']));
    expect(new Set(topics).size).toBe(topics.length);
    expect(res.body.cautionsFooter).toMatch(/local codes/);
  });

  it('recommend: ranked, cheapest meeting option first; an impossible target answers honestly', async () => {
    const res = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/nodes/${nodeId}/recommend`)
      .set(bearer(t.tokens.planner))
      .send({ targetMarginDb: 5, antennaDesignIds: ['test-iso-0', 'test-iso-3'], mastHeightsM: [3, 6, 10], feedlineIds: ['low-loss-10mm'] });
    expect(res.status).toBe(200);
    const options = res.body.options as Array<{ meetsTarget: boolean; cost: number }>;
    expect(options.length).toBeGreaterThan(0);
    const meeting = options.filter((o) => o.meetsTarget);
    if (meeting.length > 0) {
      expect(options[0].meetsTarget).toBe(true);
      expect(options[0].cost).toBe(Math.min(...meeting.map((o) => o.cost)));
    }
    // Cautions fitted to the first option (its mast height): work at height from 3 m up.
    const first = res.body.options[0] as { mastHeightM: number };
    const recTopics = (res.body.fittedCautions as Array<{ topic: string }>).map((g) => g.topic);
    expect(recTopics.includes('Work at height')).toBe(first.mastHeightM > 2);
    expect(res.body.cautionsFooter).toMatch(/local codes/);
    const impossible = await request(t.app.server).post(`/api/v1/plans/${planId}/nodes/${nodeId}/recommend`).set(bearer(t.tokens.planner)).send({ targetMarginDb: 59 });
    expect(impossible.status).toBe(200);
    expect(impossible.body.anyMeetsTarget).toBe(false);
    expect(impossible.body.options[0].meetsTarget).toBe(false);
    expect(impossible.body.advice.join(' ')).toMatch(/no option in the catalog meets the target/);
    expect(impossible.body.advice.join(' ')).toMatch(/gateway site/);
    const bad = await request(t.app.server).post(`/api/v1/plans/${planId}/nodes/${nodeId}/recommend`).set(bearer(t.tokens.planner)).send({ mastHeightsM: [-1] });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/mastHeightsM/);
  });

  it('fleet recommendation runs as a run with progress and a result', async () => {
    const viewer = await request(t.app.server).post(`/api/v1/plans/${planId}/recommend`).set(bearer(t.tokens.viewer)).send({});
    expect(viewer.status).toBe(403);
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/recommend`).set(bearer(t.tokens.planner)).send({ targetMarginDb: 5 });
    expect(start.status).toBe(202);
    let job = start.body;
    for (let i = 0; i < 100 && job.status !== 'done' && job.status !== 'failed'; i++) {
      await new Promise((r) => setTimeout(r, 100));
      job = (await request(t.app.server).get(`/api/v1/plans/${planId}/recommend/${start.body.id}`).set(bearer(t.tokens.viewer))).body;
    }
    expect(job.status).toBe('done');
    expect(job.progress).toBe(1);
    expect(job.result.nodes).toHaveLength(2);
  });

  it('visit sheet: printable HTML and the same as JSON', async () => {
    const html = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/visit-sheet`).set(bearer(t.tokens.installer));
    expect(html.status).toBe(200);
    expect(html.headers['content-type']).toMatch(/text\/html/);
    expect(html.text).toMatch(/Visit sheet: Probe 1/);
    expect(html.text).toMatch(/gate code 1234/);
    expect(html.text).toMatch(/Measured on site/);
    expect(html.text).not.toMatch(/<script/);
    const json = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/visit-sheet?format=json`).set(bearer(t.tokens.installer));
    expect(json.body.node.accessNotes).toMatch(/gate code/);
    expect(json.body.gateways[0].expectedRssiDbm.p50).toBeCloseTo(-123.688, 2);
    expect(json.body.measurements[0]).toMatchObject({ gatewayId, measuredRssiDbm: null });
    expect(json.body.cautions.length).toBeGreaterThan(4);
  });

  it('a home-made antenna gets its build sheet on the visit sheet', async () => {
    const node = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/nodes`)
      .set(bearer(t.tokens.planner))
      .send({ name: 'Tank 3', lat: NODE.lat + 0.0005, lon: NODE.lon, deviceType: 'tank level', antennaDesignId: 'quarter-wave-ground-plane', antennaHeightAglM: 3 });
    const sheet = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${node.body.id}/visit-sheet?format=json`).set(bearer(t.tokens.installer));
    expect(sheet.status).toBe(200);
    expect(sheet.body.buildSheet.elements.map((e: { name: string }) => e.name)).toContain('radiator');
  });

  it('links, check, recommend and visit sheet answer exactly what their use cases build: the response schemas drop no key', async () => {
    // Each route parses its answer through its response schema (server/api/link-answers.ts), which
    // drops keys it does not list; so the JSON must equal the use case's own output, key for key.
    const plan = await findPlanById(t.db, planId);
    expect(plan).not.toBeNull();
    const engine = t.app.linkEngine;
    const json = (value: unknown): unknown => JSON.parse(JSON.stringify(value));
    const nodes = (await t.db.prisma.node.findMany({ where: { planId }, select: { id: true, name: true } })).map((n) => n.id);
    expect(nodes.length).toBeGreaterThanOrEqual(3);
    const as = bearer(t.tokens.planner);
    for (const id of nodes) {
      const links = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${id}/links`).set(as);
      expect(links.status).toBe(200);
      // The use case answers a repeat from the front cache: equal but for the cache counts.
      const { cache: _routeCache, ...routeLinks } = links.body;
      const { cache: _caseCache, ...caseLinks } = json(await nodeLinks(engine, plan!, id)) as Record<string, unknown>;
      expect(routeLinks).toEqual(caseLinks);
      const preview = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${id}/links?antennaHeightAglM=4&feedlineId=none`).set(as);
      expect(preview.body).toEqual(json(await nodeLinks(engine, plan!, id, { antennaHeightAglM: 4, feedlineId: null })));
      const check = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${id}/check`).set(as);
      expect(check.status).toBe(200);
      expect(check.body).toEqual(json(await nodeLinkCheck(engine, plan!, id)));
      const body = { targetMarginDb: 5, mastHeightsM: [3, 6] };
      const recommendation = await request(t.app.server).post(`/api/v1/plans/${planId}/nodes/${id}/recommend`).set(as).send(body);
      expect(recommendation.status).toBe(200);
      expect(recommendation.body).toEqual(json(await nodeRecommendation(engine, plan!, id, body)));
      const sheet = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${id}/visit-sheet?format=json`).set(as);
      expect(sheet.status).toBe(200);
      expect(sheet.body).toEqual({ ...(json(await nodeVisitSheet(engine, plan!, id)) as object), generatedAt: sheet.body.generatedAt });
    }
    // The three kinds of answer were all exercised: a link with a profile, a build sheet, a recommendation on the sheet.
    const sheets = await Promise.all(nodes.map(async (id) => (await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${id}/visit-sheet?format=json`).set(as)).body));
    expect(sheets.some((s) => s.buildSheet !== null)).toBe(true);
    expect(sheets.some((s) => s.kit.recommended !== null)).toBe(true);
  });
});

describe('field readings beside the prediction', () => {
  it('installer records a reading; the answer shows measured − predicted in dB', async () => {
    const res = await request(t.app.server)
      .post(`/api/v1/plans/${planId}/readings`)
      .set(bearer(t.tokens.installer))
      .send({ nodeId, gatewayId, rssiDbm: -120.5, snrDb: -4, sf: 9, measuredAt: '2026-11-30T10:00:00Z', lat: NODE.lat, lon: NODE.lon });
    expect(res.status).toBe(201);
    expect(res.body.items[0].predictedRssiDbm).toBeCloseTo(-123.688, 2);
    expect(res.body.items[0].rssiDifferenceDb).toBeCloseTo(3.188, 2);
    // The audit entry was written with the reading (same transaction) and names it.
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entity: 'field-reading', entityId: res.body.items[0].id } });
    expect(audit).toHaveLength(1);
    expect(audit[0].detail).toMatchObject({ planId, nodeId, count: 1 });
    const list = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/readings`).set(bearer(t.tokens.viewer));
    expect(list.body.items).toHaveLength(1);
    expect(list.body.meanRssiDifferenceDb).toBeCloseTo(3.188, 2);
  });
  it('bad readings: 400 naming the field, nothing written; viewers may not record', async () => {
    const bad = await request(t.app.server).post(`/api/v1/plans/${planId}/readings`).set(bearer(t.tokens.installer)).send({ nodeId, gatewayId, rssiDbm: -100, snrDb: 2, sf: 13 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/sf/);
    const wrongGateway = await request(t.app.server).post(`/api/v1/plans/${planId}/readings`).set(bearer(t.tokens.installer)).send({ nodeId, readings: [{ gatewayId, rssiDbm: -100, snrDb: 2, sf: 9 }, { gatewayId: 'nope', rssiDbm: -100, snrDb: 2, sf: 9 }] });
    expect(wrongGateway.status).toBe(400);
    expect(wrongGateway.body.error.message).toMatch(/readings\.1\.gatewayId/);
    const viewer = await request(t.app.server).post(`/api/v1/plans/${planId}/readings`).set(bearer(t.tokens.viewer)).send({ nodeId, gatewayId, rssiDbm: -100, snrDb: 2, sf: 9 });
    expect(viewer.status).toBe(403);
    const list = await request(t.app.server).get(`/api/v1/plans/${planId}/readings`).set(bearer(t.tokens.viewer));
    expect(list.body.total).toBe(1);
  });
});

describe('cross-team access answers 404 on every route', () => {
  it('another team cannot see or touch this plan’s links, checks, sheets, recommendations or readings', async () => {
    const other = bearer(t.tokens.otherTeamPlanner);
    const base = `/api/v1/plans/${planId}`;
    const gets = [`${base}/nodes/${nodeId}/links`, `${base}/links`, `${base}/nodes/${nodeId}/check`, `${base}/nodes/${nodeId}/visit-sheet`, `${base}/nodes/${nodeId}/readings`, `${base}/readings`];
    for (const url of gets) {
      const res = await request(t.app.server).get(url).set(other);
      expect(res.status, url).toBe(404);
      expect(res.body.error.code).toBe('not_found');
    }
    for (const [url, body] of [
      [`${base}/nodes/${nodeId}/recommend`, {}],
      [`${base}/recommend`, {}],
      [`${base}/readings`, { nodeId, rssiDbm: -100, snrDb: 1, sf: 9 }],
    ] as const) {
      const res = await request(t.app.server).post(url).set(other).send(body);
      expect(res.status, url).toBe(404);
    }
    const noAuth = await request(t.app.server).get(`${base}/links`);
    expect(noAuth.status).toBe(401);
  });
});
