// Bulk field-reading import (POST /plans/:planId/readings/import): CSV and JSON, references by
// node id, DevEUI or name and gateway id or name, all rows or none with row-level errors,
// ?dryRun=true, duplicates recognised (within the file and against stored readings), audited.
import request from 'supertest';
import { afterAll, beforeAll, beforeEach, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

describeEngines('field reading import', (engine) => {
  let t: TestApp;
  let planId: string;
  let nodeId: string;
  let gatewayId: string;

  beforeAll(async () => {
    t = await createTestApp(engine);
  }, 300_000);
  afterAll(async () => {
    await t?.close();
  });
  beforeEach(async () => {
    await t.reset();
    const plan = await t.db.prisma.plan.create({ data: { teamId: t.teamId, name: 'Import' } });
    planId = plan.id;
    nodeId = (await t.db.prisma.node.create({ data: { planId, name: 'Probe 1', lat: 40, lon: -105, deviceType: 'probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2, devEui: '70B3D57ED0000001' } })).id;
    await t.db.prisma.node.create({ data: { planId, name: 'Probe 2', lat: 40.01, lon: -105, deviceType: 'probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2 } });
    gatewayId = (await t.db.prisma.gateway.create({ data: { planId, name: 'Ridge GW', lat: 40.02, lon: -105.01, antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 10, feedlineId: 'lmr-400' } })).id;
  });

  const csv = (lines: string[]) => ['dev_eui,gateway,RSSI,SNR,datarate,time,lat,lon,frequency', ...lines].join('\n');
  const post = (body: string | object, query = '') =>
    request(t.app.server)
      .post(`/api/v1/plans/${planId}/readings/import${query}`)
      .set(bearer(t.tokens.planner))
      .set('Content-Type', typeof body === 'string' ? 'text/csv' : 'application/json')
      .send(typeof body === 'string' ? body : JSON.stringify(body));

  it('imports a gateway log as CSV (DevEUI, gateway name, SF7BW125, Unix time), audited, kit recorded', async () => {
    const res = await post(csv(['70-B3-D5-7E-D0-00-00-01,Ridge GW,-112.5,-3.25,SF9BW125,1764580000,,,903.9', '70b3d57ed0000001,Ridge GW,-110,-1,SF9BW125,1764580600,40.0005,-105.0005,904.1']));
    expect(res.status, res.text).toBe(201);
    expect(res.body).toMatchObject({ created: 2, rowCount: 2, duplicates: [], ignoredColumns: ['frequency'] });
    const stored = await t.db.prisma.fieldReading.findMany({ where: { planId }, orderBy: { measuredAt: 'asc' } });
    expect(stored.map((r) => [r.nodeId, r.gatewayId, r.rssiDbm, r.snrDb, r.sf, r.measuredAt.toISOString(), r.source])).toEqual([
      [nodeId, gatewayId, -112.5, -3.25, 9, '2025-12-01T09:06:40.000Z', 'import'],
      [nodeId, gatewayId, -110, -1, 9, '2025-12-01T09:16:40.000Z', 'import'],
    ]);
    expect(stored[1].lat).toBe(40.0005);
    expect(stored[0].kit).toMatchObject({ antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2, environment: 'outdoor', txPowerDbm: 14 });
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entity: 'field-reading', action: 'import' } });
    expect(audit).toHaveLength(1);
    expect(audit[0].detail).toMatchObject({ planId, count: 2, duplicates: 0 });
  });

  it('a bad row answers 400 naming the row and the field, and stores nothing', async () => {
    const res = await post(csv(['70B3D57ED0000001,Ridge GW,-112,-3,9,2026-11-30T10:00:00Z,,,', '70B3D57ED0000001,Ridge GW,loud,-3,9,2026-11-30T10:01:00Z,,,', '70B3D57ED0000099,Ridge GW,-100,-3,9,2026-11-30T10:02:00Z,,,']));
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('invalid_rows');
    expect(res.body.error.message).toMatch(/row 2 rssiDbm/);
    expect(res.body.error.rows).toEqual([
      { row: 2, field: 'rssiDbm', message: 'must be a finite number' },
      { row: 3, field: 'devEui', message: 'no node with DevEUI 70B3D57ED0000099 in this plan' },
    ]);
    expect(await t.db.prisma.fieldReading.count({ where: { planId } })).toBe(0);
    expect(await t.db.prisma.auditEntry.count({ where: { entity: 'field-reading' } })).toBe(0);
  });

  it('names missing and out-of-range fields: SF, time, node reference, half a position, unknown gateway', async () => {
    const res = await post([
      { nodeId, gatewayId, rssiDbm: -100, snrDb: 0, sf: 13, measuredAt: '2026-11-30T10:00:00Z' },
      { nodeId, gatewayId, rssiDbm: -100, snrDb: 0, sf: 9, measuredAt: 'yesterday' },
      { gatewayId, rssiDbm: -100, snrDb: 0, sf: 9, measuredAt: '2026-11-30T10:00:00Z' },
      { nodeId, gatewayId, rssiDbm: -100, snrDb: 0, sf: 9, measuredAt: '2026-11-30T10:00:00Z', lat: 40 },
      { nodeId, gatewayId: 'nowhere', rssiDbm: -100, snrDb: 0, sf: 9, measuredAt: '2026-11-30T10:00:00Z' },
      { nodeId, gatewayId, rssiDbm: -100, snrDb: 0, sf: 9, measuredAt: '2099-01-01T00:00:00Z' },
    ]);
    expect(res.status).toBe(400);
    const fields = (res.body.error.rows as Array<{ row: number; field: string }>).map((e) => `${e.row}:${e.field}`);
    expect(fields).toEqual(['1:sf', '2:measuredAt', '3:nodeId', '4:lon', '5:gatewayId', '6:measuredAt']);
    expect(await t.db.prisma.fieldReading.count({ where: { planId } })).toBe(0);
  });

  it('?dryRun=true previews and stores nothing; duplicates within the file and against stored rows are recognised', async () => {
    const rows = [
      { nodeName: 'Probe 2', gatewayId: 'Ridge GW', rssiDbm: -101, snrDb: 2, sf: 'SF8', measuredAt: '2026-11-30T10:00:00Z' },
      { nodeName: 'Probe 2', gatewayId: 'Ridge GW', rssiDbm: -101, snrDb: 2, sf: 8, measuredAt: '2026-11-30T10:00:00.000Z' },
      { nodeId, gatewayId, rssiDbm: -99, snrDb: 3, sf: 8, measuredAt: '2026-11-30T10:05:00Z' },
    ];
    const dry = await post(rows, '?dryRun=true');
    expect(dry.status, dry.text).toBe(200);
    expect(dry.body).toMatchObject({ dryRun: true, valid: true, rowCount: 3, created: 2, duplicates: [{ row: 2, sameAs: 'row 1' }] });
    expect(dry.body.preview).toHaveLength(2);
    expect(await t.db.prisma.fieldReading.count({ where: { planId } })).toBe(0);
    const first = await post(rows);
    expect(first.status).toBe(201);
    expect(first.body.created).toBe(2);
    const again = await post(rows);
    expect(again.status).toBe(201);
    expect(again.body.created).toBe(0);
    expect(again.body.duplicates).toHaveLength(3);
    expect(again.body.duplicates[0].sameAs).toMatch(/^stored reading /);
    expect(await t.db.prisma.fieldReading.count({ where: { planId } })).toBe(2);
  });

  it('a GeoJSON drive test (Point or no geometry) imports; viewers may not import; other teams get 404', async () => {
    const body = {
      type: 'FeatureCollection',
      features: [
        { type: 'Feature', geometry: { type: 'Point', coordinates: [-105.002, 40.003] }, properties: { nodeId, gatewayId, rssi: -95, snr: 5, sf: 7, time: '2026-11-30T11:00:00Z' } },
        { type: 'Feature', geometry: null, properties: { nodeId, gatewayId, rssi: -96, snr: 4, sf: 7, time: '2026-11-30T11:01:00Z' } },
      ],
    };
    const res = await post(body);
    expect(res.status, res.text).toBe(201);
    expect(res.body.created).toBe(2);
    const stored = await t.db.prisma.fieldReading.findMany({ where: { planId }, orderBy: { measuredAt: 'asc' } });
    expect([stored[0].lat, stored[0].lon, stored[1].lat]).toEqual([40.003, -105.002, null]);
    const viewer = await request(t.app.server).post(`/api/v1/plans/${planId}/readings/import`).set(bearer(t.tokens.viewer)).send(body);
    expect(viewer.status).toBe(403);
    const other = await request(t.app.server).post(`/api/v1/plans/${planId}/readings/import`).set(bearer(t.tokens.otherTeamPlanner)).send(body);
    expect(other.status).toBe(404);
  });
});
