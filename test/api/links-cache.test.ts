// The Link cache writes (saveLinkRows → upsertLinkRows: slim rows, a packed path beside
// {pathHash}, as one unnest INSERT ... ON CONFLICT DO UPDATE; any other row as one
// jsonb_to_recordset upsert; both in one transaction) on both engines: new pairs inserted,
// known pairs replaced in place, a pair listed twice keeps its last row, JSON results and
// packed bytes read back equal, other plans untouched; rows of a node or gateway not in the
// plan left out; links deleted with their gateway, node or plan (no foreign keys, triggers).
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { listNodeLinkRows, listPlanLinkRows, saveLinkRows, upsertLinkRows, type LinkRow } from '../../server/db/repositories/links.ts';

describeEngines('link cache writes', (engine) => {
  let t: TestApp;
  let planId: string;
  let otherPlanId: string;
  const nodeIds: string[] = [];
  const gatewayIds: string[] = [];
  let otherNodeId: string;
  let otherGatewayId: string;

  beforeAll(async () => {
    t = await createTestApp(engine);
    const prisma = t.db.prisma;
    const plan = await prisma.plan.create({ data: { teamId: t.teamId, name: 'Cache writes' } });
    const other = await prisma.plan.create({ data: { teamId: t.teamId, name: 'Other plan' } });
    planId = plan.id;
    otherPlanId = other.id;
    const gateway = (pid: string, i: number) => ({ planId: pid, name: `GW ${i}`, lat: 40 + i / 100, lon: -105, antennaDesignId: 'collinear-fibreglass-6dbi', antennaHeightAglM: 10, feedlineId: 'low-loss-10mm' });
    const node = (pid: string, i: number) => ({ planId: pid, name: `N ${i}`, lat: 40 - i / 1000, lon: -105, deviceType: 'probe', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 2, txPowerDbm: 14, payloadBytes: 12 });
    for (let i = 0; i < 3; i++) gatewayIds.push((await prisma.gateway.create({ data: gateway(planId, i) })).id);
    // 400 nodes × 3 gateways = 1 200 pairs, half of them in the slim form.
    await prisma.node.createMany({ data: Array.from({ length: 400 }, (_, i) => node(planId, i)) });
    nodeIds.push(...(await prisma.node.findMany({ where: { planId }, select: { id: true }, orderBy: { name: 'asc' } })).map((row) => row.id));
    otherGatewayId = (await prisma.gateway.create({ data: gateway(otherPlanId, 0) })).id;
    otherNodeId = (await prisma.node.create({ data: node(otherPlanId, 0) })).id;
  }, 120_000);

  afterAll(async () => {
    await t?.close();
  });

  const rowsOf = (hash: (nodeIndex: number, gatewayIndex: number) => string): LinkRow[] =>
    nodeIds.flatMap((nodeId, n) =>
      gatewayIds.map((gatewayId, g) =>
        n % 2 === 0
          ? { nodeId, gatewayId, inputHash: hash(n, g), result: { pathHash: `p${n}.${g}` }, packed: new Uint8Array([1, n % 256, g, 0, 255, 44, 10]) }
          : { nodeId, gatewayId, inputHash: hash(n, g), result: { pathHash: `p${n}.${g}`, path: { basicLossDb: 100 + n / 10 + g, terms: { a: 1.5, nested: [1, 2] } }, summary: { note: 'ünïcode ✓', n, g } }, packed: null },
      ),
    );
  /** A stored row as plain values (Prisma may hand bytes back as a Buffer). */
  const plain = (row: LinkRow) => ({ ...row, packed: row.packed ? [...row.packed] : null });

  it('a cold write stores every pair with its JSON result; a second write replaces the changed pairs in place', async () => {
    const cold = rowsOf((n, g) => `h0-${n}-${g}`);
    expect(cold).toHaveLength(1200);
    await saveLinkRows(t.db, otherPlanId, [{ nodeId: otherNodeId, gatewayId: otherGatewayId, inputHash: 'other', result: { keep: true } }]);
    await saveLinkRows(t.db, planId, cold);
    const stored = await listPlanLinkRows(t.db, planId);
    expect(stored).toHaveLength(1200);
    const byKey = new Map(stored.map((row) => [`${row.nodeId}|${row.gatewayId}`, row]));
    for (const row of cold) expect(plain(byKey.get(`${row.nodeId}|${row.gatewayId}`)!)).toEqual(plain(row));

    // Every node's first gateway changes; a pair listed twice keeps its last row.
    const changed = rowsOf((n, g) => (g === 0 ? `h1-${n}` : `h0-${n}-${g}`)).filter((row) => row.gatewayId === gatewayIds[0]);
    const duplicate = { ...changed[0], inputHash: 'first-of-two' };
    await saveLinkRows(t.db, planId, [duplicate, ...changed]);
    const after = await listPlanLinkRows(t.db, planId);
    expect(after).toHaveLength(1200);
    const afterByKey = new Map(after.map((row) => [`${row.nodeId}|${row.gatewayId}`, row.inputHash]));
    nodeIds.forEach((nodeId, n) => {
      expect(afterByKey.get(`${nodeId}|${gatewayIds[0]}`)).toBe(`h1-${n}`);
      expect(afterByKey.get(`${nodeId}|${gatewayIds[2]}`)).toBe(`h0-${n}-2`);
    });
    const one = await listNodeLinkRows(t.db, planId, nodeIds[7]);
    expect(one.map((row) => row.inputHash).sort()).toEqual(['h0-7-1', 'h0-7-2', 'h1-7']);
    const other = await listPlanLinkRows(t.db, otherPlanId);
    expect(other).toEqual([{ nodeId: otherNodeId, gatewayId: otherGatewayId, inputHash: 'other', result: { keep: true }, packed: null }]);
  });

  it('a failing statement keeps none of the write (the slim and the JSON statement share one transaction)', async () => {
    const before = await listPlanLinkRows(t.db, planId);
    const rows = rowsOf((n, g) => `h2-${n}-${g}`);
    // The last row (a JSON one: node 399) has no input hash: the column's NOT NULL rejects the
    // second statement, and the slim rows the first one wrote go with it.
    expect(rows[rows.length - 1].packed).toBeNull();
    rows[rows.length - 1] = { ...rows[rows.length - 1], inputHash: null as unknown as string };
    await expect(saveLinkRows(t.db, planId, rows)).rejects.toThrow();
    const after = await listPlanLinkRows(t.db, planId);
    expect(new Map(after.map((row) => [`${row.nodeId}|${row.gatewayId}`, row.inputHash]))).toEqual(new Map(before.map((row) => [`${row.nodeId}|${row.gatewayId}`, row.inputHash])));
  });

  it('a row of a node or gateway not in the plan is left out, not an error (the rule the foreign keys kept)', async () => {
    const before = await listPlanLinkRows(t.db, planId);
    const stray: LinkRow[] = [
      { nodeId: 'no-such-node', gatewayId: gatewayIds[0], inputHash: 'x', result: { pathHash: 'px' }, packed: new Uint8Array([1]) },
      { nodeId: nodeIds[0], gatewayId: 'no-such-gateway', inputHash: 'x', result: { pathHash: 'px' }, packed: new Uint8Array([1]) },
      // A node and a gateway of another plan, written under this plan.
      { nodeId: otherNodeId, gatewayId: gatewayIds[0], inputHash: 'x', result: { pathHash: 'px' }, packed: new Uint8Array([1]) },
      { nodeId: nodeIds[0], gatewayId: otherGatewayId, inputHash: 'x', result: { pathHash: 'px', path: { note: 'json form' } }, packed: null },
    ];
    const kept = { nodeId: nodeIds[1], gatewayId: gatewayIds[1], inputHash: 'kept', result: { pathHash: 'pk' }, packed: new Uint8Array([2, 3]) };
    expect(await upsertLinkRows(t.db.prisma, planId, [...stray, kept])).toBe(1);
    const after = await listPlanLinkRows(t.db, planId);
    expect(after).toHaveLength(before.length);
    expect(after.find((row) => row.nodeId === nodeIds[1] && row.gatewayId === gatewayIds[1])?.inputHash).toBe('kept');
    expect(await listPlanLinkRows(t.db, otherPlanId)).toHaveLength(1);
  });

  it('deleting a gateway, a node or a whole plan deletes their cached links (statement triggers, no foreign keys)', async () => {
    const prisma = t.db.prisma;
    const count = (where: { planId: string; nodeId?: string; gatewayId?: string }) => prisma.link.count({ where });
    expect(await count({ planId, gatewayId: gatewayIds[2] })).toBe(400);
    await prisma.gateway.delete({ where: { id: gatewayIds[2] } });
    expect(await count({ planId, gatewayId: gatewayIds[2] })).toBe(0);
    expect(await count({ planId })).toBe(800);
    await prisma.node.deleteMany({ where: { id: { in: nodeIds.slice(0, 10) } } });
    expect(await count({ planId })).toBe(780);
    expect(await count({ planId, nodeId: nodeIds[10] })).toBe(2);
    // The plan goes (its nodes and gateways by their own cascade): every row of it goes, the other plan's stays.
    await prisma.plan.delete({ where: { id: planId } });
    expect(await count({ planId })).toBe(0);
    expect(await count({ planId: otherPlanId })).toBe(1);
  });
});
