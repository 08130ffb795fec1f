// Exports, scenarios and the report on the demo plan, checked with outside tools:
// GDAL/OGR (ogrinfo, Debian gdal-bin) reads the GeoJSON, KML and CSV exports;
// poppler (pdftoppm, pdftotext, Debian poppler-utils) renders and reads the PDF.
// Without those tools the suite is skipped with the reason (outside CI); in CI it fails.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';
import { seedDemo } from '../../server/demo.ts';
import { issueToken } from '../../server/db/repositories/accounts.ts';
import { installCautions } from '../../server/planning/check.ts';
import { findBandPlan } from '../../server/radio/band-plans.ts';
import { STATUS_WORDS } from '../../server/planning/status.ts';

const inCi = process.env.CI === 'true';
const has = (tool: string) => spawnSync('which', [tool]).status === 0;
const toolsPresent = has('ogrinfo') && has('pdftotext') && has('pdftoppm');
if (!toolsPresent && !inCi) console.warn('SKIPPED reports-exports: needs ogrinfo (gdal-bin) and pdftotext/pdftoppm (poppler-utils)');
const suite = toolsPresent || inCi ? describe : describe.skip;

const dir = mkdtempSync(join(tmpdir(), 'earshot-reports-'));
let t: TestApp;
let planId: string;
let demo: Record<string, string>;
let fleet: { assumptions: { sigmaDb: number; sigmaSource: string }; counts: { served: number; marginal: number; unserved: number }; items: Array<{ nodeId: string; lat: number; lon: number; status: string }> };

/** Feature id → [lon, lat] as ogrinfo prints them ("id (String) = …", "POINT (lon lat)"). */
function ogrPoints(path: string): Map<string, [number, number]> {
  const text = execFileSync('ogrinfo', ['-ro', '-al', '-q', path], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  const points = new Map<string, [number, number]>();
  let current: string | null = null;
  for (const line of text.split('\n')) {
    const id = /^\s+id \(String\) = (\S+)/.exec(line);
    if (id) current = id[1];
    const point = /POINT (?:Z )?\(([-\d.e]+) ([-\d.e]+)/.exec(line);
    if (point && current) {
      points.set(current, [Number(point[1]), Number(point[2])]);
      current = null;
    }
  }
  return points;
}

function featureCount(path: string, layer?: string): number {
  const text = execFileSync('ogrinfo', ['-ro', '-so', ...(layer ? [path, layer] : ['-al', path])], { encoding: 'utf8' });
  return [...text.matchAll(/Feature Count: (\d+)/g)].reduce((sum, m) => sum + Number(m[1]), 0);
}

async function download(path: string, file: string, token = demo.token): Promise<{ path: string; status: number; headers: Record<string, string> }> {
  const res = await request(t.app.server).get(path).set(bearer(token)).buffer(true).parse((r, cb) => {
    const chunks: Buffer[] = [];
    r.on('data', (c: Buffer) => chunks.push(c));
    r.on('end', () => cb(null, Buffer.concat(chunks)));
  });
  const out = join(dir, file);
  writeFileSync(out, res.body as Buffer);
  return { path: out, status: res.status, headers: res.headers as Record<string, string> };
}

beforeAll(async () => {
  t = await createTestApp('pglite');
  const seeded = await seedDemo(t.db, t.config);
  planId = seeded.planId as string;
  demo = { token: (await issueToken(t.db, { userId: seeded.plannerUserId, label: 'test' })).token };
  const res = await request(t.app.server).get(`/api/v1/plans/${planId}/links?limit=1000`).set(bearer(demo.token));
  expect(res.status).toBe(200);
  fleet = res.body;
}, 600_000);

afterAll(async () => {
  await t?.close();
});

suite('exports open in GDAL/OGR at the API coordinates (RFC 7946, KML 2.2, RFC 4180)', () => {
  it('GeoJSON: one feature per node, gateway and site, [lon, lat] as the API has them', async () => {
    const file = await download(`/api/v1/plans/${planId}/export.geojson`, 'plan.geojson');
    expect(file.status).toBe(200);
    expect(file.headers['content-type']).toMatch(/application\/geo\+json/);
    expect(file.headers['content-disposition']).toMatch(/^attachment; filename="kestrel-flat-irrigation-and-meters-demo-export\.geojson"$/);
    const gateways = (await request(t.app.server).get(`/api/v1/plans/${planId}/gateways`).set(bearer(demo.token))).body.items as Array<{ id: string; lat: number; lon: number }>;
    const sites = (await request(t.app.server).get(`/api/v1/plans/${planId}/sites`).set(bearer(demo.token))).body.items as Array<{ id: string; lat: number; lon: number }>;
    expect(featureCount(file.path)).toBe(fleet.items.length + gateways.length + sites.length);
    const points = ogrPoints(file.path);
    for (const item of [...fleet.items.map((n) => ({ id: n.nodeId, lat: n.lat, lon: n.lon })), ...gateways, ...sites]) {
      const p = points.get(item.id);
      expect(p, item.id).toBeDefined();
      expect(p![0]).toBeCloseTo(item.lon, 9);
      expect(p![1]).toBeCloseTo(item.lat, 9);
    }
  });

  it('KML: the same features in one folder per kind', async () => {
    const file = await download(`/api/v1/plans/${planId}/export.kml`, 'plan.kml');
    expect(file.status).toBe(200);
    expect(featureCount(file.path, 'Nodes')).toBe(fleet.items.length);
    expect(featureCount(file.path, 'Gateways')).toBe(2);
    expect(featureCount(file.path, 'Sites')).toBe(5);
    const points = ogrPoints(file.path);
    for (const n of fleet.items) {
      expect(points.get(n.nodeId)![0]).toBeCloseTo(n.lon, 9);
      expect(points.get(n.nodeId)![1]).toBeCloseTo(n.lat, 9);
    }
  });

  it('CSV: one row per node (read by GDAL’s CSV driver), statuses as in GET /links', async () => {
    const file = await download(`/api/v1/plans/${planId}/export.csv`, 'fleet.csv');
    expect(file.status).toBe(200);
    expect(file.headers['content-type']).toMatch(/^text\/csv/);
    expect(featureCount(file.path)).toBe(fleet.items.length);
    const text = execFileSync('ogrinfo', ['-ro', '-al', '-q', file.path], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
    const statuses = [...text.matchAll(/^\s+status \(String\) = (\w+)/gm)].map((m) => m[1]);
    expect(statuses.filter((s) => s === 'served').length).toBe(fleet.counts.served);
    expect(statuses.filter((s) => s === 'unserved').length).toBe(fleet.counts.unserved);
  });

  it('bill of materials CSV: lines and totals', async () => {
    const file = await download(`/api/v1/plans/${planId}/bom.csv`, 'bom.csv');
    expect(file.status).toBe(200);
    const text = execFileSync('ogrinfo', ['-ro', '-al', '-q', file.path], { encoding: 'utf8' });
    // 22 soil probes carry the helical stub (server/demo.ts).
    expect(text).toMatch(/category \(String\) = antenna\s+name \(String\) = [^\n]+\s+quantity \(String\) = 22/);
    expect(text).toMatch(/name \(String\) = Gateway radio[^\n]*\s+quantity \(String\) = 2/);
    // Names, never catalog ids.
    expect(text).not.toMatch(/= helical-stub/);
  });

  it('other teams get 404, not the file', async () => {
    for (const path of ['export.geojson', 'export.kml', 'export.csv', 'bom.csv', 'report.pdf']) {
      const res = await request(t.app.server).get(`/api/v1/plans/${planId}/${path}`).set(bearer(t.tokens.planner));
      expect(res.status, path).toBe(404);
      expect(res.body.error.code).toBe('not_found');
    }
  });
});

suite('the report PDF (rendered by pdftoppm, read back by pdftotext)', () => {
  let text = '';
  it('renders, has at least 2 pages, states the fleet table’s counts, the kit cost and the cautions', async () => {
    const file = await download(`/api/v1/plans/${planId}/report.pdf`, 'report.pdf');
    expect(file.status).toBe(200);
    expect(file.headers['content-type']).toBe('application/pdf');
    execFileSync('pdftoppm', ['-png', '-r', '40', file.path, join(dir, 'page')]);
    const pages = readdirSync(dir).filter((name) => /^page-\d+\.png$/.test(name));
    expect(pages.length).toBeGreaterThanOrEqual(2);
    text = execFileSync('pdftotext', [file.path, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    expect(text).toContain(`Page 1 of ${pages.length}`);
    const total = fleet.items.length;
    const share = (n: number) => `${((n / total) * 100).toFixed(1)} %`;
    for (const s of ['served', 'marginal', 'unserved'] as const) expect(text).toContain(`${STATUS_WORDS[s].label} (${STATUS_WORDS[s].meaning}) ${fleet.counts[s]} (${share(fleet.counts[s])})`);
    // Kit cost from the catalog's prices, the same sum as GET /bom.csv's kit row.
    const bom = execFileSync('ogrinfo', ['-ro', '-al', '-q', join(dir, 'bom.csv')], { encoding: 'utf8' });
    const kit = Number(/name \(String\) = Kit cost \(nodes and gateways\)[\s\S]*?cost_usd \(String\) = ([\d.]+)/.exec(bom)![1]);
    expect(kit).toBeGreaterThan(0);
    expect(text).toContain(`Kit cost (nodes and gateways: antennas, feedlines, connectors, masts) ${kit.toLocaleString('en-US', { minimumFractionDigits: 2 })} USD`);
    expect(text).toContain('Gateway siting');
    for (const caution of installCautions(findBandPlan('us-902-928').cautions)) expect(text).toContain(caution.slice(0, 40));
    // σ and its source as the fleet table states them (the one planning spread).
    expect(text).toContain(`Location variability σ ${fleet.assumptions.sigmaDb.toFixed(1)} dB (${fleet.assumptions.sigmaSource}`);
  });
});

suite('one price: the summary view’s kit cost (GET /bom) is the report’s', () => {
  it('GET /bom equals bom.csv and the report’s bill of materials, line by line and in total', async () => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/bom`).set(bearer(demo.token));
    expect(res.status).toBe(200);
    const bom = res.body as { kitCostUsd: number; totalUsd: number; nodeKitCostUsd: number; gatewayKitCostUsd: number; lines: Array<{ category: string; name: string; quantity: number; costUsd: number }> };
    expect(bom.kitCostUsd).toBeGreaterThan(0);
    expect(bom.kitCostUsd).toBeCloseTo(bom.nodeKitCostUsd + bom.gatewayKitCostUsd, 2);
    // The report's own figures (planReport: the fleet pass and its BomBuilder).
    const { planReport } = await import('../../server/app/report.ts');
    const { findPlanById } = await import('../../server/db/repositories/links.ts');
    const report = await planReport(t.app.linkEngine, t.config, (await findPlanById(t.db, planId))!);
    expect(bom.kitCostUsd).toBe(report.figures.bom.kitCostUsd);
    expect(bom.totalUsd).toBe(report.figures.bom.totalUsd);
    expect(bom.lines).toEqual(report.figures.bom.lines);
    // And the PDF's text states that figure (pdftotext).
    const pdf = join(dir, 'report-one-price.pdf');
    writeFileSync(pdf, report.pdf);
    const text = execFileSync('pdftotext', [pdf, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    const usd = (v: number) => `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`;
    expect(text).toContain(`Kit cost (nodes and gateways: antennas, feedlines, connectors, masts) ${usd(bom.kitCostUsd)}`);
    expect(text).toContain(`Bill of materials total ${usd(bom.totalUsd)}`);
    // Connectors and the gateways' surge arrestors are in it (the kit price counts them).
    expect(bom.lines.some((l) => l.category === 'connector' && /surge/i.test(l.name))).toBe(true);
  });

  it('other teams get 404', async () => {
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/bom`).set(bearer(t.tokens.planner));
    expect(res.status).toBe(404);
  });
});

suite('the report’s gateway siting section states the stored siting run (pdftotext)', () => {
  it('chosen sites, cost and optimality status equal the latest done run’s stored result', async () => {
    const start = await request(t.app.server).post(`/api/v1/plans/${planId}/siting`).set(bearer(demo.token)).send({ requiredGateways: 1, candidates: { sites: true, terrainPoints: 0 }, keepExistingGateways: false });
    expect(start.status).toBe(202);
    let run: { status: string; error?: string | null; result: { selected: Array<{ rank: number; name: string; costUsd: number; nodesHeard: number }>; objective: { gateways: number; costUsd: number }; optimal: boolean; status: string; solver: string; nodesCoverable: number; nodesTotal: number; requiredGateways: number } } | null = null;
    for (let i = 0; i < 1200 && !run; i++) {
      const res = await request(t.app.server).get(`/api/v1/plans/${planId}/siting/${start.body.id}`).set(bearer(demo.token));
      if (['done', 'failed', 'cancelled'].includes(res.body.status)) run = res.body;
      else await new Promise((resolve) => setTimeout(resolve, 250));
    }
    expect(run?.status, String(run?.error)).toBe('done');
    const r = run!.result;
    expect(r.selected.length).toBeGreaterThan(0);
    const file = await download(`/api/v1/plans/${planId}/report.pdf`, 'report-siting.pdf');
    expect(file.status).toBe(200);
    const text = execFileSync('pdftotext', [file.path, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    // The section: from its heading (the one right before this run's row) to the risks that follow.
    const runAt = text.indexOf(`Run ${start.body.id}`);
    expect(runAt).toBeGreaterThan(0);
    expect(text.lastIndexOf('Gateway siting Figure Value', runAt)).toBeGreaterThan(runAt - 200);
    const section = text.slice(runAt, text.indexOf('Risks Named nodes', runAt));
    expect(section.length).toBeGreaterThan(100);
    const usd = (v: number) => `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`;
    expect(section).toContain(start.body.id);
    expect(section).toContain(`Gateways each node needs (k) ${r.requiredGateways}`);
    expect(section).toContain(`Chosen ${r.objective.gateways} gateway(s), ${usd(r.objective.costUsd)}`);
    expect(section).toContain(`Result ${r.optimal ? 'optimal (proven by the solver)' : r.status === 'feasible' ? 'feasible, not proven optimal' : 'infeasible'}`);
    expect(section).toContain(`solver ${r.solver}`);
    expect(section).toContain(`Nodes coverable ${r.nodesCoverable} of ${r.nodesTotal}`);
    // Every chosen site by rank, name, cost and nodes heard, as the run stored them.
    for (const x of r.selected) expect(section).toMatch(new RegExp(`${x.rank} ${x.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} \\([^)]*\\) [\\d.]+ m AGL ${usd(x.costUsd).replace(/[.]/g, '\\.')} ${x.nodesHeard} `));
    expect(section).toContain('not applied');
  }, 600_000);
});

suite('scenarios: copy a plan, delete a gateway, compare', () => {
  let copyId: string;
  it('copies every site, gateway, node and terrain layer in one audited write; 400 for a bad name', async () => {
    const bad = await request(t.app.server).post(`/api/v1/plans/${planId}/copy`).set(bearer(demo.token)).send({ name: '' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/name/);
    const extra = await request(t.app.server).post(`/api/v1/plans/${planId}/copy`).set(bearer(demo.token)).send({ name: 'x', nodes: [] });
    expect(extra.status).toBe(400);
    const other = await request(t.app.server).post(`/api/v1/plans/${planId}/copy`).set(bearer(t.tokens.planner)).send({ name: 'stolen' });
    expect(other.status).toBe(404);
    const res = await request(t.app.server).post(`/api/v1/plans/${planId}/copy`).set(bearer(demo.token)).send({ name: 'One gateway fewer' });
    expect(res.status).toBe(201);
    copyId = res.body.id;
    expect(res.body.copied).toEqual({ sites: 5, gateways: 2, nodes: fleet.items.length, terrainLayers: 1 });
    const audit = await t.db.prisma.auditEntry.findMany({ where: { entityId: copyId, action: 'copy' } });
    expect(audit).toHaveLength(1);
    const [source, copy] = await Promise.all([planId, copyId].map((id) => t.db.prisma.terrainLayer.findFirstOrThrow({ where: { planId: id } })));
    expect(copy.filePath).toBe(source.filePath);
  });

  it('deleting the copy’s terrain layer keeps the file the original still uses', async () => {
    const layer = await t.db.prisma.terrainLayer.findFirstOrThrow({ where: { planId: copyId } });
    const res = await request(t.app.server).delete(`/api/v1/plans/${copyId}/terrain/${layer.id}`).set(bearer(demo.token));
    expect(res.status).toBe(204);
    expect(existsSync(join(t.config.filesDir, layer.filePath))).toBe(true);
    // Put the layer back for the comparison (same file, a new row).
    const { id: _id, ...rest } = layer;
    await t.db.prisma.terrainLayer.create({ data: { ...rest, geoTransform: layer.geoTransform as never } });
  });

  it('with one gateway deleted the copy serves fewer or equal nodes; nodes pair by lineage', async () => {
    const gateways = (await request(t.app.server).get(`/api/v1/plans/${copyId}/gateways`).set(bearer(demo.token))).body.items as Array<{ id: string; name: string }>;
    const silo = gateways.find((g) => g.name === 'GW silo')!;
    expect((await request(t.app.server).delete(`/api/v1/plans/${copyId}/gateways/${silo.id}`).set(bearer(demo.token))).status).toBe(204);
    const res = await request(t.app.server).get(`/api/v1/plans/${planId}/compare/${copyId}`).set(bearer(demo.token));
    expect(res.status).toBe(200);
    expect(res.body.a.counts).toEqual(fleet.counts);
    expect(res.body.b.gateways).toBe(1);
    expect(res.body.b.counts.served).toBeLessThanOrEqual(res.body.a.counts.served);
    expect(res.body.b.costUsd).toBeLessThan(res.body.a.costUsd);
    expect(res.body.nodes).toHaveLength(fleet.items.length);
    for (const n of res.body.nodes) {
      expect(n.idA).not.toBeNull();
      expect(n.idB).not.toBeNull();
      expect(n.statusA).toBe(fleet.items.find((f) => f.nodeId === n.idA)!.status);
    }
    // The copy's own fleet table agrees with the comparison's b side.
    const copyFleet = await request(t.app.server).get(`/api/v1/plans/${copyId}/links?limit=1000`).set(bearer(demo.token));
    expect(res.body.b.counts).toEqual(copyFleet.body.counts);
  }, 300_000);

  it('compare across teams answers 404', async () => {
    const theirs = await request(t.app.server).post('/api/v1/plans').set(bearer(t.tokens.planner)).send({ name: 'Acme plan' });
    expect(theirs.status).toBe(201);
    expect((await request(t.app.server).get(`/api/v1/plans/${planId}/compare/${theirs.body.id}`).set(bearer(demo.token))).status).toBe(404);
    expect((await request(t.app.server).get(`/api/v1/plans/${theirs.body.id}/compare/${planId}`).set(bearer(t.tokens.planner))).status).toBe(404);
  });

  it('deleting the original plan keeps the terrain file its copy still uses', async () => {
    const layer = await t.db.prisma.terrainLayer.findFirstOrThrow({ where: { planId: copyId } });
    expect((await request(t.app.server).delete(`/api/v1/plans/${planId}`).set(bearer(demo.token))).status).toBe(204);
    expect(existsSync(join(t.config.filesDir, layer.filePath))).toBe(true);
  });
});
