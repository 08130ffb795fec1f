// `earshot link` / `earshot recommend` while a server holds the embedded data folder:
// the CLI side (runLinkOperation in server/cli/links.ts) finds <dataDir>/admin.json and
// the folder's pid lock, and asks the server's loopback admin routes (/_admin/link,
// /_admin/recommend, behind the local secret), which run the same function as the
// direct path. The answers must be the same JSON as running the function in-process.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../server/api/app.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { linkReport, recommendReport } from '../../server/app/links.ts';
import { runLinkOperation } from '../../server/cli/links.ts';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

let t: TestApp;
let server: FastifyInstance;
let engine: LinkEngine;
let dataDir: string;
let planId: string;
let nodeId: string;
let gatewayId: string;
const secret = 'local-test-secret-0123456789';
let port: number;

/** The folder looks held by another live process (the vitest parent), with this server's admin file. */
function writeAdminFile(values: { port: number; secret: string }) {
  writeFileSync(join(dataDir, 'admin.json'), `${JSON.stringify({ ...values, host: '127.0.0.1', pid: process.ppid })}\n`, { mode: 0o600 });
}
const env = () => ({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off' });
/** The cache counts say whether this call computed or reused; the figures must not differ. */
const withoutCache = (value: unknown) => {
  const { cache: _cache, ...rest } = JSON.parse(JSON.stringify(value)) as Record<string, unknown>;
  return rest;
};

beforeAll(async () => {
  t = await createTestApp('pglite');
  const planner = bearer(t.tokens.planner);
  const plan = await request(t.app.server).post('/api/v1/plans').set(planner).send({ name: 'CLI through server', propagationMethod: 'free-space' });
  expect(plan.status).toBe(201);
  planId = plan.body.id;
  const gateway = await request(t.app.server).post(`/api/v1/plans/${planId}/gateways`).set(planner).send({ name: 'Barn mast', lat: 46.2, lon: 8.1, antennaHeightAglM: 20 });
  expect(gateway.status).toBe(201);
  gatewayId = gateway.body.id;
  const node = await request(t.app.server).post(`/api/v1/plans/${planId}/nodes`).set(planner).send({ name: 'Tank 3', lat: 46.23, lon: 8.13, deviceType: 'tank level', antennaHeightAglM: 2 });
  expect(node.status).toBe(201);
  nodeId = node.body.id;
  dataDir = mkdtempSync(join(tmpdir(), 'earshot-links-admin-'));
  server = await buildApp({ db: t.db, config: { ...t.config, dataDir }, logger: false, adminSecret: secret });
  await server.listen({ port: 0, host: '127.0.0.1' });
  port = (server.server.address() as { port: number }).port;
  writeFileSync(join(dataDir, 'pglite.lock'), `${process.ppid}\n`);
  writeAdminFile({ port, secret });
  engine = new LinkEngine(t.db, t.config, { workers: 0 });
}, 120_000);

afterAll(async () => {
  await engine?.close();
  await server?.close();
  await t?.close();
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
});

describe('earshot link / recommend through the running server (loopback admin route)', () => {
  it('link: the same JSON as the engine function in-process, and the same figures as the API route', async () => {
    const viaServer = await runLinkOperation('link', { plan: planId, node: nodeId }, env());
    const direct = await linkReport(engine, { plan: planId, node: nodeId });
    expect(withoutCache(viaServer)).toEqual(withoutCache(direct));
    const api = await request(t.app.server).get(`/api/v1/plans/${planId}/nodes/${nodeId}/links`).set(bearer(t.tokens.viewer));
    expect(api.status).toBe(200);
    const links = (viaServer as { links: Array<{ gatewayId: string; basicLossDb: number; rssiDbm: number; marginDb: number }> }).links;
    expect(links).toHaveLength(1);
    expect(links[0].gatewayId).toBe(gatewayId);
    expect(links[0].basicLossDb).toBe(api.body.links[0].basicLossDb);
    expect(links[0].rssiDbm).toBe(api.body.links[0].rssiDbm);
    expect((viaServer as { status: string }).status).toBe(api.body.status);
    const one = await runLinkOperation('link', { plan: planId, node: nodeId, gateway: gatewayId }, env());
    expect((one as { links: unknown[] }).links).toHaveLength(1);
  }, 60_000);

  it('recommend: the same options as the engine function in-process', async () => {
    const body = { plan: planId, node: nodeId, targetMarginDb: 12, maxCost: 500 };
    const viaServer = await runLinkOperation('recommend', body, env());
    const direct = await recommendReport(engine, body);
    expect(JSON.parse(JSON.stringify(viaServer))).toEqual(JSON.parse(JSON.stringify(direct)));
    expect((viaServer as { options: unknown[] }).options.length).toBeGreaterThan(0);
  }, 60_000);

  it('mistakes come back as the one-line CLI message naming the option', async () => {
    await expect(runLinkOperation('link', { plan: planId, node: 'no-such-node' }, env())).rejects.toThrow(`--node: no node "no-such-node" in plan ${planId}`);
    await expect(runLinkOperation('link', { plan: 'no-such-plan', node: nodeId }, env())).rejects.toThrow('--plan: no plan "no-such-plan"');
    await expect(runLinkOperation('link', { plan: planId, node: nodeId, gateway: 'gw-x' }, env())).rejects.toThrow('--gateway: no gateway "gw-x"');
  }, 60_000);

  it('the admin routes refuse a wrong secret; with no server answering the CLI says so and never opens the held folder', async () => {
    const wrong = await request(server.server).post('/_admin/link').set('x-earshot-admin', 'wrong').send({ plan: planId, node: nodeId });
    expect(wrong.status).toBe(401);
    writeAdminFile({ port, secret: 'not-the-secret' });
    await expect(runLinkOperation('link', { plan: planId, node: nodeId }, env())).rejects.toThrow(/admin secret/);
    writeAdminFile({ port: 1, secret });
    await expect(runLinkOperation('link', { plan: planId, node: nodeId }, env())).rejects.toThrow(/in use by process \d+ and no server answers/);
    writeAdminFile({ port, secret });
  }, 60_000);
});
