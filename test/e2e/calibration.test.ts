// The calibration view in a real browser (Debian chromium via playwright-core) against the real
// server with the demo plan: a drive-test CSV (made from the plan's own predictions + 4 dB +
// seeded noise) is checked (dry run), imported, fitted per environment; the residual chart, the
// figures with their intervals and the cross-validation show the server's numbers; apply and
// revert change what the plan predicts; the node panel lists the node's readings beside its
// prediction. Every step fails on a console error or a request that leaves the local server.
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { accessibilityProblems, buildWeb, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';
import { gaussianSource, seededRandom } from '../../server/calibration/stats.ts';

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let planId = '';
let readNodeId = '';

beforeAll(async () => {
  buildWeb();
  [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  context = await newContext(browser);
  page = await context.newPage();
  page.setDefaultTimeout(180_000);
  watch = guard(page, server.baseUrl);
}, 300_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

beforeEach(() => {
  watch?.reset();
});

async function api<T>(path: string, init?: { method: string; body?: string }): Promise<T> {
  return page.evaluate(
    async ([p, i]) => {
      const response = await fetch(`/api/v1${p}`, i ? { method: i.method, body: i.body, headers: { 'content-type': 'application/json' } } : undefined);
      return (await response.json()) as T;
    },
    [path, init ?? null] as const,
  );
}

describe('calibration view (chromium)', () => {
  it('imports a drive test (checked first), fits it per environment and shows the server’s figures and charts', async () => {
    watch.expectHttpError(/\/api\/v1\/me$/, 401);
    await page.goto(server.signInUrl);
    await page.locator('a.plan-link').first().click();
    await page.waitForURL(/#\/plan\//);
    planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(page.url())?.[1] ?? '');
    await page.locator('#calibration-h').waitFor();
    await page.locator('#calibration-none').waitFor();

    // Readings from the plan's own predictions: +4 dB and Gaussian noise of 5 dB (seeded).
    const nodes = (await api<{ items: Array<{ id: string; name: string }> }>(`/plans/${planId}/nodes?limit=1000`)).items.slice(0, 24);
    const gauss = gaussianSource(seededRandom(7));
    const lines = ['node_id,gateway,RSSI,SNR,datarate,time'];
    for (const [i, node] of nodes.entries()) {
      const links = (await api<{ links: Array<{ gatewayId: string; gatewayName?: string; rssiDbm: number; marginDb: number }> }>(`/plans/${planId}/nodes/${node.id}/links`)).links;
      for (const link of links.filter((l) => l.marginDb >= 0)) {
        if (!readNodeId) readNodeId = node.id;
        for (let k = 0; k < 3; k++) lines.push(`${node.id},${link.gatewayId},${(link.rssiDbm + 4 + 5 * gauss()).toFixed(1)},1.5,SF9BW125,2026-11-2${k}T0${i % 10}:00:00Z`);
      }
    }
    const rows = lines.length - 1;
    expect(rows).toBeGreaterThan(20);
    await page.locator('#calibration-file').setInputFiles({ name: 'drive-test.csv', mimeType: 'text/csv', buffer: Buffer.from(lines.join('\n')) });
    await page.locator('#calibration-import-status', { hasText: `${rows} rows checked: ${rows} new reading(s)` }).waitFor();
    await page.locator('#calibration-import-go', { hasText: `Import ${rows} reading(s)` }).click();
    await page.locator('#calibration-import-status', { hasText: `${rows} reading(s) stored` }).waitFor();

    await page.locator('#calibration-grouping').selectOption('environment');
    await page.locator('#calibration-fit').click();
    await page.locator('#calibration-figures').waitFor();
    const history = await api<{ items: Array<{ id: string; biasDb: number; sigmaDb: number; n: number; crossValidation: { rmseBeforeDb: number; rmseAfterDb: number } }> }>(`/plans/${planId}/calibration`);
    const fit = history.items[0];
    expect(fit.n).toBe(rows);
    expect(await page.locator('#calibration-bias').innerText()).toContain(`${fit.biasDb >= 0 ? '+' : ''}${fit.biasDb.toFixed(1)} dB`);
    expect(await page.locator('#calibration-sigma').innerText()).toContain(`${fit.sigmaDb.toFixed(1)} dB`);
    const cv = await page.locator('#calibration-cv').innerText();
    expect(cv).toContain(`${fit.crossValidation.rmseBeforeDb.toFixed(1)} dB`);
    expect(cv).toContain(`${fit.crossValidation.rmseAfterDb.toFixed(1)} dB`);
    // One marker per reading in the residual chart, and a group table.
    const markers = await page.locator('svg.calibration-chart').first().locator('circle, rect:not(:first-of-type), path').count();
    expect(markers).toBeGreaterThanOrEqual(rows);
    await page.locator('#calibration-groups tbody tr').first().waitFor();
    expect(await accessibilityProblems(page, '#calibration-h + *')).toEqual([]);
    await page.locator('svg.calibration-chart').first().scrollIntoViewIfNeeded();
    await screenshot(page, 'calibration-01-fit', true);
    watch.assertClean();
  }, 600_000);

  it('apply moves the prediction by the bias; revert restores it; the node panel lists the readings', async () => {
    const before = (await api<{ links: Array<{ rssiDbm: number }> }>(`/plans/${planId}/nodes/${readNodeId}/links`)).links[0].rssiDbm;
    await page.locator('#calibration-apply').click();
    await page.locator('#calibration-state', { hasText: 'Applied: bias' }).waitFor();
    const applied = (await api<{ items: Array<{ biasDb: number }>; appliedId: string | null }>(`/plans/${planId}/calibration`));
    expect(applied.appliedId).not.toBeNull();
    const after = (await api<{ links: Array<{ rssiDbm: number }> }>(`/plans/${planId}/nodes/${readNodeId}/links`)).links[0].rssiDbm;
    expect(after - before).toBeCloseTo(applied.items[0].biasDb, 6);
    await screenshot(page, 'calibration-02-applied', true);
    await page.locator('#calibration-revert').click();
    await page.locator('#calibration-none').waitFor();
    const reverted = (await api<{ links: Array<{ rssiDbm: number }> }>(`/plans/${planId}/nodes/${readNodeId}/links`)).links[0].rssiDbm;
    expect(reverted).toBeCloseTo(before, 9);

    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}?node=${encodeURIComponent(readNodeId)}`);
    await page.locator('#node-panel-title').waitFor();
    await page.locator('#node-readings tbody tr').first().waitFor();
    const count = await page.locator('#node-readings tbody tr').count();
    expect(count).toBeGreaterThanOrEqual(3);
    const cells = await page.locator('#node-readings tbody tr').first().locator('td').allInnerTexts();
    expect(cells[3]).toMatch(/dBm$/);
    expect(cells[4]).toMatch(/dBm$/);
    expect(cells[5]).toMatch(/dB$/);
    await screenshot(page, 'calibration-03-node-readings', true);
    watch.assertClean();
  }, 600_000);
});
