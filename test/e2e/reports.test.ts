// Reports, exports and scenarios in a real browser (Debian chromium via playwright-core)
// against the real server with the demo plan: the summary's "Report (PDF)" button downloads
// the server's PDF, the compare view copies the plan and shows both plans' figures as the
// API computes them, and `earshot export` / `earshot report` go through the running server.
// Every step fails on a console error or a request that leaves the local server.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { accessibilityProblems, buildWeb, cli, guard, launchBrowser, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let planId = '';

beforeAll(async () => {
  buildWeb();
  [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  context = await browser.newContext({ viewport: { width: 1400, height: 900 }, acceptDownloads: true });
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

describe('reports, exports and scenarios (chromium)', () => {
  it('the summary’s Report (PDF) button downloads the server’s report', async () => {
    watch.expectHttpError(/\/api\/v1\/me$/, 401);
    await page.goto(server.signInUrl);
    await page.locator('a.plan-link').first().waitFor();
    await page.locator('a.plan-link').first().click();
    await page.waitForURL(/#\/plan\//);
    planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(page.url())?.[1] ?? '');
    await page.getByRole('link', { name: 'Summary' }).click();
    await page.locator('#summary-report').waitFor();
    const [download] = await Promise.all([page.waitForEvent('download'), page.locator('#summary-report').click()]);
    expect(download.suggestedFilename()).toMatch(/-report\.pdf$/);
    const path = await download.path();
    expect(readFileSync(path).subarray(0, 5).toString()).toBe('%PDF-');
    await page.locator('#report-status', { hasText: 'Downloaded' }).waitFor();
    watch.assertClean();
  }, 300_000);

  it('the compare view copies the plan and shows both plans’ figures as the API computes them', async () => {
    await page.getByRole('link', { name: 'Compare' }).click();
    await page.getByRole('heading', { name: /Compare scenarios/, level: 1 }).waitFor();
    await page.locator('#copy-name').fill('Demo, scenario B');
    await page.locator('#copy-plan').click();
    await page.waitForURL(/\/compare\?with=/);
    await page.locator('#compare-figures').waitFor();
    const otherId = decodeURIComponent(/with=([^&]+)/.exec(page.url())?.[1] ?? '');
    const api = await page.evaluate(async ([a, b]) => (await (await fetch(`/api/v1/plans/${a}/compare/${b}`)).json()) as { a: { counts: Record<string, number> }; b: { counts: Record<string, number> } }, [planId, otherId]);
    const served = page.locator('#compare-figures tr', { hasText: 'Served (target margin met)' });
    const cells = await served.locator('td').allInnerTexts();
    expect(cells.slice(0, 2)).toEqual([String(api.a.counts.served), String(api.b.counts.served)]);
    expect(cells[2]).toBe('±0');
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    await screenshot(page, 'reports-01-compare', true);
    watch.assertClean();
  }, 600_000);

  it('earshot export and earshot report go through the running server', async () => {
    const out = join(server.dataDir, 'fleet.geojson');
    const answer = cli(server, ['export', '--plan', planId, '--format', 'geojson', '--out', out]) as { out: string; bytes: number };
    const json = JSON.parse(readFileSync(answer.out, 'utf8')) as { features: Array<{ properties: { kind: string } }> };
    expect(json.features.filter((f) => f.properties.kind === 'node')).toHaveLength(64);
    const pdf = cli(server, ['report', '--plan', planId, '--out', join(server.dataDir, 'r.pdf')]) as { counts: Record<string, number> };
    expect(Object.values(pdf.counts).reduce((a, b) => a + b, 0)).toBe(64);
  }, 600_000);
});
