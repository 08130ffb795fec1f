// `earshot report` / `earshot export` while a server holds the embedded data folder:
// the command (fetchReportFile in server/cli/reports.ts) finds <dataDir>/admin.json and
// the pid lock and asks the loopback /_admin/report-file route, which runs the same
// reportFile() as the in-process path: the exports must be byte for byte the same.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { buildApp } from '../../server/api/app.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { reportFile } from '../../server/app/report-files.ts';
import { fetchReportFile, reportCommands } from '../../server/cli/reports.ts';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

let t: TestApp;
let server: FastifyInstance;
let engine: LinkEngine;
let dataDir: string;
let planId: string;
const secret = 'local-test-secret-report-0123456789';

beforeAll(async () => {
  t = await createTestApp('pglite');
  const planner = bearer(t.tokens.planner);
  const plan = await request(t.app.server).post('/api/v1/plans').set(planner).send({ name: 'CLI report, free space', propagationMethod: 'free-space' });
  planId = plan.body.id;
  await request(t.app.server).post(`/api/v1/plans/${planId}/gateways`).set(planner).send({ name: 'Barn mast', lat: 46.2, lon: 8.1, antennaHeightAglM: 20 });
  for (const [i, d] of [0.01, 0.05, 0.4].entries()) {
    const res = await request(t.app.server).post(`/api/v1/plans/${planId}/nodes`).set(planner).send({ name: `=cmd|' /C calc'!A${i}`, lat: 46.2 + d, lon: 8.1 + d, deviceType: 'tank level', antennaHeightAglM: 2 });
    expect(res.status).toBe(201);
  }
  dataDir = mkdtempSync(join(tmpdir(), 'earshot-report-cli-'));
  server = await buildApp({ db: t.db, config: { ...t.config, dataDir }, logger: false, adminSecret: secret });
  await server.listen({ port: 0, host: '127.0.0.1' });
  const port = (server.server.address() as { port: number }).port;
  writeFileSync(join(dataDir, 'pglite.lock'), `${process.ppid}\n`);
  writeFileSync(join(dataDir, 'admin.json'), `${JSON.stringify({ port, secret, host: '127.0.0.1', pid: process.ppid })}\n`, { mode: 0o600 });
  engine = new LinkEngine(t.db, t.config, { workers: 0 });
}, 300_000);

afterAll(async () => {
  await engine?.close();
  await server?.close();
  await t?.close();
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
});

const env = () => ({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off' });

it('exports through the running server equal the in-process function, byte for byte', async () => {
  for (const kind of ['geojson', 'kml', 'csv', 'bom'] as const) {
    const viaServer = await fetchReportFile({ plan: planId, kind }, env());
    const direct = await reportFile(engine, t.config, { plan: planId, kind });
    expect(viaServer.fileName).toBe(direct.fileName);
    expect(viaServer.bytes.equals(direct.bytes), kind).toBe(true);
  }
  // Formula-looking node names reach the CSV as text (neutralised), not as formulas.
  const csv = (await fetchReportFile({ plan: planId, kind: 'csv' }, env())).bytes.toString('utf8');
  expect(csv).toContain(`,'=cmd|' /C calc'!A0,`);
  expect(csv.split('\r\n').filter(Boolean)).toHaveLength(4);
}, 120_000);

it('the report through the running server is a PDF with the fleet counts', async () => {
  const file = await fetchReportFile({ plan: planId, kind: 'report' }, env());
  expect(file.bytes.subarray(0, 5).toString()).toBe('%PDF-');
  expect(file.counts).toBeDefined();
  expect(Object.values(file.counts!).reduce((a, b) => a + b, 0)).toBe(3);
  if (spawnSync('which', ['pdftotext']).status === 0) {
    const out = join(dataDir, 'r.pdf');
    writeFileSync(out, file.bytes);
    const text = spawnSync('pdftotext', [out, '-'], { encoding: 'utf8' }).stdout.replace(/\s+/g, ' ');
    expect(text).toContain(`Served (meets the target margin and delivery) ${file.counts!.served} `);
  }
}, 120_000);

it('an unknown plan is a one-line usage error naming --plan', async () => {
  await expect(fetchReportFile({ plan: 'nope', kind: 'csv' }, env())).rejects.toThrow(/--plan: no plan "nope"/);
  expect(reportCommands.map((c) => c.words)).toEqual(['report', 'export']);
});
