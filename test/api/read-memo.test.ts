// The warm node-links path reads plan row, applied calibration and input fingerprint once per
// generation of the change feed (server/db/change-feed.ts: triggers NOTIFY at COMMIT, each
// process LISTENs). These tests prove the memo serves (a change the triggers are told not to
// report stays unseen: no query was made) and that every way of changing an input is seen on
// the next read: an API write, a write straight to the database (another process, the CLI on
// PostgreSQL), a plan edit, a kit edit, and a lost PostgreSQL listener (no memo until it is back).
import { afterAll, beforeAll, beforeEach, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

interface LinksAnswer {
  links: Array<{ gatewayId: string; basicLossDb: number; rssiDbm: number }>;
  kit: { antennaHeightAglM: number };
}

async function eventually<T>(read: () => Promise<T>, ok: (value: T) => boolean, timeoutMs = 3000): Promise<T> {
  const until = Date.now() + timeoutMs;
  let value = await read();
  while (!ok(value) && Date.now() < until) {
    await new Promise((done) => setTimeout(done, 25));
    value = await read();
  }
  return value;
}

describeEngines('read memos of the warm link path', (engine) => {
  let t: TestApp;
  let planId: string;
  let nodeId: string;
  let gatewayId: string;
  const auth = () => bearer(t.tokens.planner);
  const links = async (): Promise<LinksAnswer> => {
    const answer = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/nodes/${nodeId}/links`, headers: auth() });
    expect(answer.statusCode).toBe(200);
    return answer.json() as LinksAnswer;
  };

  beforeAll(async () => {
    t = await createTestApp(engine);
    // The PostgreSQL listener connects in the background.
    await eventually(async () => t.db.changes?.stamp() ?? null, (stamp) => stamp !== null);
  }, 120_000);

  afterAll(async () => {
    await t?.close();
  });

  beforeEach(async () => {
    await t.reset();
    const plan = await t.app.inject({ method: 'POST', url: '/api/v1/plans', headers: auth(), payload: { name: 'Memo' } });
    planId = (plan.json() as { id: string }).id;
    const gateway = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/gateways`, headers: auth(), payload: { name: 'GW', lat: 45, lon: 7, antennaHeightAglM: 15 } });
    gatewayId = (gateway.json() as { id: string }).id;
    const node = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${planId}/nodes`, headers: auth(), payload: { name: 'N', lat: 44.98, lon: 7.02, deviceType: 'probe', antennaHeightAglM: 2 } });
    nodeId = (node.json() as { id: string }).id;
  });

  /** Notifications of the set-up's own commits arrive asynchronously (later under load): wait until the generation holds still for 300 ms. */
  async function feedSettled(): Promise<void> {
    let stamp = t.db.changes?.stamp() ?? null;
    for (let i = 0; i < 40; i++) {
      await new Promise((done) => setTimeout(done, 300));
      const now = t.db.changes?.stamp() ?? null;
      if (now === stamp) return;
      stamp = now;
    }
  }

  it('serves from the memo while nothing reports a change (no query), and sees the change once reported', async () => {
    await feedSettled();
    const first = await links();
    expect(first.kit.antennaHeightAglM).toBe(2);
    await t.db.raw.exec('ALTER TABLE "Node" DISABLE TRIGGER "Node_change_notify"');
    try {
      await t.db.raw.query('UPDATE "Node" SET "antennaHeightAglM" = 9, "updatedAt" = now() WHERE "id" = $1', [nodeId]);
      // Give a PostgreSQL notification (there is none) time to arrive: the memo still answers.
      await new Promise((done) => setTimeout(done, 200));
      expect((await links()).kit.antennaHeightAglM).toBe(2);
    } finally {
      await t.db.raw.exec('ALTER TABLE "Node" ENABLE TRIGGER "Node_change_notify"');
    }
    // Any reported change (here another table) drops the memo; the fingerprint then sees the node.
    await t.db.raw.query('UPDATE "Gateway" SET "name" = "name" WHERE "id" = $1', [gatewayId]);
    const after = await eventually(links, (answer) => answer.kit.antennaHeightAglM === 9);
    expect(after.kit.antennaHeightAglM).toBe(9);
  });

  it('an API write is seen by the very next read (read-your-writes, without waiting for a notification)', async () => {
    const before = await links();
    const node = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/nodes/${nodeId}`, headers: auth() });
    const version = (node.json() as { version: number }).version;
    const patched = await t.app.inject({ method: 'PATCH', url: `/api/v1/plans/${planId}/nodes/${nodeId}`, headers: auth(), payload: { version, antennaHeightAglM: 6 } });
    expect(patched.statusCode).toBe(200);
    const after = await links();
    expect(after.kit.antennaHeightAglM).toBe(6);
    expect(after.links[0].basicLossDb).not.toBe(before.links[0].basicLossDb);

    const gateway = await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/gateways/${gatewayId}`, headers: auth() });
    const gatewayVersion = (gateway.json() as { version: number }).version;
    expect((await t.app.inject({ method: 'PATCH', url: `/api/v1/plans/${planId}/gateways/${gatewayId}`, headers: auth(), payload: { version: gatewayVersion, antennaHeightAglM: 40 } })).statusCode).toBe(200);
    expect((await links()).links[0].basicLossDb).not.toBe(after.links[0].basicLossDb);
  });

  it('a write straight to the database (another process, the CLI) is seen: the plan row and the node fingerprint', async () => {
    await links();
    await t.db.raw.query('UPDATE "Node" SET "antennaHeightAglM" = 4, "updatedAt" = now() WHERE "id" = $1', [nodeId]);
    expect((await eventually(links, (answer) => answer.kit.antennaHeightAglM === 4)).kit.antennaHeightAglM).toBe(4);
    // The plan row itself (loadPlanForRead) is memoised too: a rename elsewhere is seen.
    await t.db.raw.query('UPDATE "Plan" SET "name" = $2, "updatedAt" = now() WHERE "id" = $1', [planId, 'Renamed elsewhere']);
    await t.db.raw.query('DELETE FROM "Plan" WHERE "id" = $1', [planId]);
    const gone = await eventually(
      async () => (await t.app.inject({ method: 'GET', url: `/api/v1/plans/${planId}/nodes/${nodeId}/links`, headers: auth() })).statusCode,
      (status) => status === 404,
    );
    expect(gone).toBe(404);
  });

  it('a rolled-back write reports nothing and changes nothing', async () => {
    const before = await links();
    const stamp = t.db.changes?.stamp();
    await expect(
      t.db.prisma.$transaction(async (tx) => {
        await tx.node.update({ where: { id: nodeId }, data: { antennaHeightAglM: 12 } });
        throw new Error('roll back');
      }),
    ).rejects.toThrow('roll back');
    await new Promise((done) => setTimeout(done, 100));
    expect(t.db.changes?.stamp()).toBe(stamp);
    expect((await links()).kit.antennaHeightAglM).toBe(before.kit.antennaHeightAglM);
  });

  if (engine === 'postgres') {
    it('a lost listener turns the memo off until it is back, then drops what it held', async () => {
      await links();
      const killed = await t.db.raw.query<{ ok: boolean }>(`SELECT pg_terminate_backend(pid) AS ok FROM pg_stat_activity WHERE datname = current_database() AND query ILIKE 'LISTEN earshot_change%'`);
      expect(killed.length).toBe(1);
      await eventually(async () => t.db.changes?.stamp() ?? null, (stamp) => stamp === null, 2000);
      // While it is down, a write nobody is told about is still seen (no memo).
      await t.db.raw.exec('ALTER TABLE "Node" DISABLE TRIGGER "Node_change_notify"');
      try {
        await t.db.raw.query('UPDATE "Node" SET "antennaHeightAglM" = 7, "updatedAt" = now() WHERE "id" = $1', [nodeId]);
        if (t.db.changes?.stamp() === null) expect((await links()).kit.antennaHeightAglM).toBe(7);
      } finally {
        await t.db.raw.exec('ALTER TABLE "Node" ENABLE TRIGGER "Node_change_notify"');
      }
      const back = await eventually(async () => t.db.changes?.stamp() ?? null, (stamp) => stamp !== null, 5000);
      expect(back).not.toBeNull();
      expect((await links()).kit.antennaHeightAglM).toBe(7);
    });
  }
});
