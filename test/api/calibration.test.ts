// Done-when of issue 15 on both database engines: readings made as (the demo plan's own
// prediction + 4 dB + Gaussian noise of σ = 5 dB, seeded) at every heard link → the fit finds
// the bias (4 ± 1.5 dB) and the spread (5 ± 1.2 dB); node-grouped cross-validated RMSE drops;
// applied, every predicted RSSI moves by the fitted bias and every link's σ is the
// fitted spread (sigmaSource "calibration"); revert restores the previous figures; only
// planners apply; applying and reverting are audited.
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { seedDemo } from '../../server/demo.ts';
import { issueToken } from '../../server/db/repositories/accounts.ts';
import { gaussianSource, seededRandom } from '../../server/calibration/stats.ts';

interface LinkAnswer {
  gatewayId: string;
  rssiDbm: number;
  marginDb: number;
  sigmaDb: number;
  sigmaSource: string;
}

describeEngines('calibration from field readings (demo plan)', (engine) => {
  let t: TestApp;
  let planId: string;
  let token: string;
  let nodeIds: string[];
  const before = new Map<string, LinkAnswer>();
  let calibration: { id: string; n: number; biasDb: number; sigmaDb: number; crossValidation: { rmseBeforeDb: number; rmseAfterDb: number; meanErrorBeforeDb: number; meanErrorAfterDb: number; folds: number } };

  const links = async (nodeId: string): Promise<LinkAnswer[]> => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(token));
    expect(res.status, res.text).toBe(200);
    return res.body.links as LinkAnswer[];
  };

  beforeAll(async () => {
    t = await createTestApp(engine);
    const demo = await seedDemo(t.db, t.config);
    planId = demo.planId as string;
    token = (await issueToken(t.db, { userId: demo.plannerUserId, label: 'calibration test' })).token;
    nodeIds = (await t.db.prisma.node.findMany({ where: { planId }, orderBy: { id: 'asc' }, select: { id: true } })).map((n) => n.id);
  }, 600_000);

  afterAll(async () => {
    await t?.close();
  });

  it('synthetic readings at every heard link → bias 4 ± 1.5 dB, spread 5 ± 1.2 dB, cross-validated RMSE drops', async () => {
    const gauss = gaussianSource(seededRandom(20261203));
    const rows: object[] = [];
    for (const nodeId of nodeIds) {
      for (const link of await links(nodeId)) {
        before.set(`${nodeId}|${link.gatewayId}`, link);
        if (link.marginDb < 0) continue; // heard links only
        for (let k = 0; k < 3; k++) {
          rows.push({ nodeId, gatewayId: link.gatewayId, rssiDbm: Math.round((link.rssiDbm + 4 + 5 * gauss()) * 10) / 10, snrDb: 0, sf: 9, measuredAt: new Date(Date.UTC(2026, 10, 20, 8, k, nodeIds.indexOf(nodeId))).toISOString() });
        }
      }
    }
    expect(rows.length).toBeGreaterThan(90);
    const imported = await request(t.app.server).post(`/api/v1/plans/${planId}/readings/import`).set(bearer(token)).send(rows);
    expect(imported.status, imported.text).toBe(201);
    expect(imported.body.created).toBe(rows.length);

    const fit = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration`).set(bearer(token)).send({});
    expect(fit.status, fit.text).toBe(201);
    calibration = fit.body;
    expect(calibration.n + fit.body.excluded.length).toBe(rows.length);
    expect(fit.body.excluded).toEqual([]);
    expect(Math.abs(calibration.biasDb - 4)).toBeLessThanOrEqual(1.5);
    expect(Math.abs(calibration.sigmaDb - 5)).toBeLessThanOrEqual(1.2);
    expect(fit.body.biasCi95Db[0]).toBeLessThan(calibration.biasDb);
    expect(fit.body.biasCi95Db[1]).toBeGreaterThan(calibration.biasDb);
    const cv = calibration.crossValidation;
    console.info(`[${engine}] n ${calibration.n}, bias ${calibration.biasDb.toFixed(2)} dB, σ ${calibration.sigmaDb.toFixed(2)} dB, CV RMSE ${cv.rmseBeforeDb.toFixed(2)} → ${cv.rmseAfterDb.toFixed(2)} dB, mean error ${cv.meanErrorBeforeDb.toFixed(2)} → ${cv.meanErrorAfterDb.toFixed(2)} dB`);
    expect(cv.folds).toBe(5);
    expect(cv.rmseAfterDb).toBeLessThan(cv.rmseBeforeDb);
    expect(Math.abs(cv.meanErrorAfterDb)).toBeLessThan(Math.abs(cv.meanErrorBeforeDb));
    expect(fit.body.applied).toBe(false);

    const history = await request(t.app.server).get(`/api/v1/plans/${planId}/calibration`).set(bearer(token));
    expect(history.status).toBe(200);
    expect(history.body.items.map((c: { id: string }) => c.id)).toEqual([calibration.id]);
    expect(history.body.appliedId).toBeNull();
  }, 600_000);

  it('applied: predicted RSSI moves by the fitted bias, every link (outdoor, indoor, pit) carries the fitted σ; revert restores', async () => {
    const apply = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(token)).send({ calibrationId: calibration.id });
    expect(apply.status, apply.text).toBe(200);
    expect(apply.body).toMatchObject({ changed: true, previousId: null });
    const outdoor = new Set((await t.db.prisma.node.findMany({ where: { planId, environment: 'outdoor' }, select: { id: true } })).map((n) => n.id));
    let checked = 0;
    let indoorOrPit = 0;
    for (const nodeId of nodeIds) {
      for (const link of await links(nodeId)) {
        const old = before.get(`${nodeId}|${link.gatewayId}`)!;
        expect(link.rssiDbm - old.rssiDbm).toBeCloseTo(calibration.biasDb, 6);
        expect(link.sigmaSource).toBe('calibration');
        // Every link, outdoor, indoor or pit, carries the fitted spread (server/planning/spread.ts:
        // the residuals already hold the environment's spread).
        expect(link.sigmaDb).toBeCloseTo(calibration.sigmaDb, 9);
        if (!outdoor.has(nodeId)) indoorOrPit++;
        checked++;
      }
    }
    expect(checked).toBe(before.size);
    expect(indoorOrPit, 'the demo plan has heard indoor or pit links').toBeGreaterThan(0);
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entity: 'calibration', action: 'apply' } });
    expect(audit).toHaveLength(1);

    const revert = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/revert`).set(bearer(token));
    expect(revert.status, revert.text).toBe(200);
    expect(revert.body.restored).toBeNull();
    for (const nodeId of nodeIds.slice(0, 8)) {
      for (const link of await links(nodeId)) {
        const old = before.get(`${nodeId}|${link.gatewayId}`)!;
        expect(link.rssiDbm).toBeCloseTo(old.rssiDbm, 9);
        expect(link.sigmaDb).toBeCloseTo(old.sigmaDb, 9);
        expect(link.sigmaSource).toBe(old.sigmaSource);
        expect(link.sigmaSource).not.toBe('calibration');
      }
    }
    const again = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/revert`).set(bearer(token));
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('nothing_applied');
    expect(await t.db.prisma.auditEntry.count({ where: { entity: 'calibration', action: 'revert' } })).toBe(1);
  }, 600_000);

  it('only planners apply; another team gets 404; an unknown calibration is 404; a fresh fit of an applied plan is not biased twice', async () => {
    const installer = await t.db.prisma.user.create({ data: { teamId: (await t.db.prisma.plan.findUniqueOrThrow({ where: { id: planId } })).teamId, name: 'Installer', role: 'installer' } });
    const installerToken = (await issueToken(t.db, { userId: installer.id })).token;
    const denied = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(installerToken)).send({ calibrationId: calibration.id });
    expect(denied.status).toBe(403);
    const other = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(t.tokens.otherTeamPlanner)).send({ calibrationId: calibration.id });
    expect(other.status).toBe(404);
    const unknown = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(token)).send({ calibrationId: 'nope' });
    expect(unknown.status).toBe(404);
    const bad = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration`).set(bearer(token)).send({ grouping: 'colour' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/grouping/);

    expect((await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(token)).send({ calibrationId: calibration.id })).status).toBe(200);
    const refit = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration`).set(bearer(token)).send({ grouping: 'environment' });
    expect(refit.status, refit.text).toBe(201);
    // Residuals are taken against the model without the applied calibration: the same bias again.
    expect(refit.body.biasDb).toBeCloseTo(calibration.biasDb, 6);
    expect(refit.body.groups.map((g: { key: string }) => g.key).length).toBeGreaterThan(1);
    const second = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/apply`).set(bearer(token)).send({ calibrationId: refit.body.id });
    expect(second.body).toMatchObject({ changed: true, previousId: calibration.id });
    const back = await request(t.app.server).post(`/api/v1/plans/${planId}/calibration/revert`).set(bearer(token));
    expect(back.body.restored.id).toBe(calibration.id);
  }, 600_000);
});
