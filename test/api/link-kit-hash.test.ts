// The node kit hash (part of every Link row's input hash) is memoised per plan context by its
// per-node inputs (server/jobs/link-engine.ts resolveNode): the memo must give, for every node,
// the hash of the full kit object the cache has always keyed on, and tell apart nodes that differ
// in any one input, so a warm Link cache stays warm and a changed node still misses it.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { seedDemo } from '../../server/demo.ts';
import { findPlanById, listNodesForLinks } from '../../server/db/repositories/links.ts';
import { LinkEngine, type ResolvedNode } from '../../server/jobs/link-engine.ts';
import { hashOf, hashOfShared } from '../../server/planning/node-links.ts';

/** The kit hash as resolveNode wrote it before the memo: one stableJson of the whole kit and radio. */
function fullKitHash(node: ResolvedNode, objectHashes: WeakMap<object, string>): string {
  const { bandPlan: _plan, ...radioPart } = node.radioSettings;
  return hashOf({
    a: hashOfShared(node.antenna, objectHashes),
    f: node.feedline ? hashOfShared(node.feedline, objectHashes) : null,
    length: node.kit.feedlineLengthM,
    c: node.kit.connectors.map((u) => [u.connector.id, u.connector.lossDb, u.count]),
    radio: node.radio,
    radioPart,
  });
}

describeEngines('node kit hash memo', (engineKind) => {
  let t: TestApp;
  let links: LinkEngine;
  beforeAll(async () => {
    t = await createTestApp(engineKind);
    links = new LinkEngine(t.db, t.config, { workers: 0 });
  }, 300_000);
  afterAll(async () => {
    await links?.close();
    await t?.close();
  });

  it('equals the full kit hash for every node; one changed input (power, payload, SF policy, environment, building, feedline) changes it', async () => {
    const demo = await seedDemo(t.db, t.config);
    const plan = (await findPlanById(t.db, demo.planId!))!;
    const ctx = await links.planContext(plan);
    const rows = await listNodesForLinks(t.db, plan.id);
    expect(rows.length).toBeGreaterThan(3);
    const base = rows[0];
    const variants = [
      base,
      { ...base, id: 'same-kit', name: 'same kit' },
      { ...base, id: 'power', txPowerDbm: base.txPowerDbm - 3 },
      { ...base, id: 'payload', payloadBytes: base.payloadBytes + 40 },
      base.sfPolicy === 'fixed' ? { ...base, id: 'fixed', sfPolicy: 'adaptive' as const, fixedSf: null } : { ...base, id: 'fixed', sfPolicy: 'fixed' as const, fixedSf: 10 },
      { ...base, id: 'indoor', environment: base.environment === 'indoor' ? ('outdoor' as const) : ('indoor' as const), buildingType: 'traditional' },
      { ...base, id: 'indoor-building', environment: base.environment === 'indoor' ? ('outdoor' as const) : ('indoor' as const), buildingType: 'thermally-efficient' },
      { ...base, id: 'feedline', feedlineId: 'rg-213', feedlineLengthM: 3 },
      { ...base, id: 'feedline-longer', feedlineId: 'rg-213', feedlineLengthM: 6 },
      ...rows.slice(1),
    ];
    const hashes = new Map<string, string>();
    for (const row of variants) {
      const node = await links.resolveNode(ctx, row);
      expect(node.kitHash).toBe(fullKitHash(node, ctx.objectHashes));
      hashes.set(row.id, node.kitHash);
    }
    expect(hashes.get('same-kit')).toBe(hashes.get(base.id));
    const changed = ['power', 'payload', 'fixed', 'indoor', 'indoor-building', 'feedline', 'feedline-longer'].map((id) => hashes.get(id));
    expect(new Set([hashes.get(base.id), ...changed]).size).toBe(changed.length + 1);
  });
});
