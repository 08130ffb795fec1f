// Field readings and their audit entry are one transaction (createFieldReadings with an
// audit builder, as POST /plans/:planId/readings uses it): when the audit insert fails in
// the database, no reading is kept; when it succeeds, the entry names every stored reading.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { createFieldReadings, listNodeReadings, type NewFieldReading } from '../../server/db/repositories/field-readings.ts';

describeEngines('field readings with their audit entry', (engine) => {
  let t: TestApp;
  let planId: string;
  let nodeId: string;
  const principal = () => ({ userId: null, teamId: t.teamId });
  const readings = (count: number): NewFieldReading[] =>
    Array.from({ length: count }, (_, i) => ({ nodeId, gatewayId: null, rssiDbm: -110 - i, snrDb: -2, sf: 9, measuredAt: new Date(Date.UTC(2026, 10, 30, 10, i)), lat: null, lon: null, note: `visit ${i}` }));

  beforeAll(async () => {
    t = await createTestApp(engine);
    const plan = await t.db.prisma.plan.create({ data: { teamId: t.teamId, name: 'Readings audit' } });
    planId = plan.id;
    nodeId = (await t.db.prisma.node.create({ data: { planId, name: 'N', lat: 40, lon: -105, deviceType: 'probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2 } })).id;
  }, 120_000);

  afterAll(async () => {
    await t?.close();
  });

  it('a failing audit insert keeps none of the readings', async () => {
    // PostgreSQL (and PGlite) reject \u0000 inside jsonb text: the audit row's insert fails in the database.
    await expect(
      createFieldReadings(t.db, planId, null, readings(3), (created) => ({ principal: principal(), action: 'create', entity: 'field-reading', entityId: created.map((r) => r.id).join(','), detail: { bad: 'nul \u0000 byte' } })),
    ).rejects.toThrow();
    expect(await listNodeReadings(t.db, planId, nodeId)).toHaveLength(0);
    expect(await t.db.prisma.auditEntry.count({ where: { entity: 'field-reading' } })).toBe(0);
  });

  it('a successful write stores the readings and one audit entry naming them', async () => {
    const created = await createFieldReadings(t.db, planId, null, readings(3), (stored) => ({ principal: principal(), action: 'create', entity: 'field-reading', entityId: stored.map((r) => r.id).join(','), detail: { planId, nodeId, count: stored.length } }));
    expect(created).toHaveLength(3);
    const stored = await listNodeReadings(t.db, planId, nodeId);
    expect(stored.map((r) => r.id).sort()).toEqual(created.map((r) => r.id).sort());
    const entries = await t.db.prisma.auditEntry.findMany({ where: { entity: 'field-reading' } });
    expect(entries).toHaveLength(1);
    expect(entries[0].entityId.split(',')).toEqual(created.map((r) => r.id));
    expect(entries[0].detail).toEqual({ planId, nodeId, count: 3 });
  });
});
