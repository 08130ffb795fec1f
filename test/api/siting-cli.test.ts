// `earshot siting` while a server holds the embedded data folder: the CLI finds
// <dataDir>/admin.json and the pid lock and asks the server's loopback
// /_admin/siting route, which runs the same use case as POST /siting.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../server/api/app.ts';
import { runCli } from '../../server/cli.ts';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

let t: TestApp;
let server: FastifyInstance;
let dataDir: string;
let planId: string;
const secret = 'local-test-secret-siting-0123456789';

beforeAll(async () => {
  t = await createTestApp('pglite');
  const planner = bearer(t.tokens.planner);
  const plan = await request(t.app.server).post('/api/v1/plans').set(planner).send({ name: 'CLI siting', propagationMethod: 'free-space' });
  planId = plan.body.id;
  // Three nodes in a row, candidate sites beside the ends and the middle: two sites serve all at k = 1 with free space over 5 km.
  for (const [n, lon] of [8.0, 8.05, 8.1].entries()) {
    expect((await request(t.app.server).post(`/api/v1/plans/${planId}/nodes`).set(planner).send({ name: `Probe ${n + 1}`, lat: 46.2, lon, deviceType: 'soil probe', antennaHeightAglM: 2 })).status).toBe(201);
  }
  for (const [n, lon] of [8.0, 8.05, 8.1].entries()) {
    expect((await request(t.app.server).post(`/api/v1/plans/${planId}/sites`).set(planner).send({ name: `Mast ${n + 1}`, lat: 46.201, lon, kind: 'candidate', costUsd: 100 * (n + 1) })).status).toBe(201);
  }
  dataDir = mkdtempSync(join(tmpdir(), 'earshot-siting-cli-'));
  server = await buildApp({ db: t.db, config: { ...t.config, dataDir }, logger: false, adminSecret: secret });
  await server.listen({ port: 0, host: '127.0.0.1' });
  const port = (server.server.address() as { port: number }).port;
  writeFileSync(join(dataDir, 'pglite.lock'), `${process.ppid}\n`);
  writeFileSync(join(dataDir, 'admin.json'), `${JSON.stringify({ port, secret, host: '127.0.0.1', pid: process.ppid })}\n`, { mode: 0o600 });
}, 120_000);

afterAll(async () => {
  await server?.close();
  await t?.close();
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
});

async function cli(args: string[]): Promise<{ code: number; out: string; err: string }> {
  const out: string[] = [];
  const err: string[] = [];
  const writeOut = process.stdout.write.bind(process.stdout);
  const writeErr = process.stderr.write.bind(process.stderr);
  const previous = process.env.EARSHOT_DATA_DIR;
  process.env.EARSHOT_DATA_DIR = dataDir;
  process.stdout.write = ((chunk: string) => (out.push(String(chunk)), true)) as typeof process.stdout.write;
  process.stderr.write = ((chunk: string) => (err.push(String(chunk)), true)) as typeof process.stderr.write;
  try {
    const code = await runCli(args);
    return { code, out: out.join(''), err: err.join('') };
  } finally {
    process.stdout.write = writeOut;
    process.stderr.write = writeErr;
    if (previous === undefined) delete process.env.EARSHOT_DATA_DIR;
    else process.env.EARSHOT_DATA_DIR = previous;
  }
}

describe('earshot siting through the running server', () => {
  it('--json prints one document with the run and its answer', async () => {
    const { code, out, err } = await cli(['siting', '--plan', planId, '--k', '2', '--json']);
    expect(err).toBe('');
    expect(code).toBe(0);
    const doc = JSON.parse(out) as { status: string; result: { requiredGateways: number; optimal: boolean; selected: unknown[]; nodesTotal: number } };
    expect(doc.status).toBe('done');
    expect(doc.result.requiredGateways).toBe(2);
    expect(doc.result.optimal).toBe(true);
    expect(doc.result.nodesTotal).toBe(3);
    expect(doc.result.selected.length).toBeGreaterThanOrEqual(2);
    // The run is recorded like an API run.
    const listed = await request(t.app.server).get(`/api/v1/plans/${planId}/siting`).set(bearer(t.tokens.planner));
    expect(listed.body.total).toBeGreaterThanOrEqual(1);
  }, 120_000);

  it('bad options exit 2 with a one-line message naming the option', async () => {
    const bad = await cli(['siting', '--plan', planId, '--k', '0']);
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/k/);
    const missing = await cli(['siting', '--plan', 'nope', '--k', '1']);
    expect(missing.code).toBe(2);
    expect(missing.err).toMatch(/no plan "nope"/);
  }, 60_000);
});
