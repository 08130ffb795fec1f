// The gateway siting view in a real browser (Debian chromium via playwright-core) against the
// real server with the demo plan: choose k and candidate sources, follow the run, the chosen
// sites ranked on a map and in a table with the nodes only they serve, the uncovered nodes by
// name with the reason, before/after counts, apply (creates the gateways) and undo.
// Every step fails on a console error or a request that leaves the local server.
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { accessibilityProblems, buildWeb, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let planId = '';

beforeAll(async () => {
  buildWeb();
  // A loaded shared machine can take minutes to start the server (PGlite + demo seeding).
  [server, browser] = await Promise.all([startServer(420_000), launchBrowser()]);
  context = await newContext(browser);
  page = await context.newPage();
  page.setDefaultTimeout(180_000);
  watch = guard(page, server.baseUrl);
}, 600_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

beforeEach(() => {
  watch?.reset();
});

interface Run {
  id: string;
  status: string;
  result: { selected: Array<{ name: string; rank: number; kept: boolean }>; uncovered: Array<{ name: string }>; objective: { gateways: number }; before: { gateways: number }; after: { gateways: number } };
}

async function api<T>(path: string): Promise<T> {
  return page.evaluate(async (p) => (await (await fetch(`/api/v1${p}`)).json()) as T, path);
}

describe('gateway siting view (chromium)', () => {
  it('runs k = 2 over the candidate sites, shows the ranked answer the server computed, applies it and undoes it', async () => {
    watch.expectHttpError(/\/api\/v1\/me$/, 401);
    await page.goto(server.signInUrl);
    await page.locator('a.plan-link').first().waitFor();
    await page.locator('a.plan-link').first().click();
    await page.waitForURL(/#\/plan\//);
    planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(page.url())?.[1] ?? '');
    await page.getByRole('link', { name: 'Gateway siting' }).click();
    await page.getByRole('heading', { name: 'Gateway siting', level: 1 }).waitFor();
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    await page.locator('#siting-k').selectOption('2');
    await page.locator('#siting-keep').uncheck();
    await page.locator('#siting-run').click();
    await page.locator('#siting-summary').waitFor();
    const runs = await api<{ items: Run[] }>(`/plans/${planId}/siting`);
    const run = runs.items[0];
    expect(run.status).toBe('done');
    // The table shows the server's chosen set, in rank order.
    const rows = page.locator('#siting-table tbody tr');
    expect(await rows.count()).toBe(run.result.selected.length);
    expect(await rows.first().locator('td').first().innerText()).toContain(run.result.selected[0].name);
    expect(await page.locator('#siting-summary h2').innerText()).toContain(`${run.result.objective.gateways} gateway(s)`);
    // Ranks on the map.
    expect(await page.locator('#siting-map .siting-rank-badge').count()).toBe(run.result.selected.length);
    // Uncovered nodes listed by name with the reason.
    if (run.result.uncovered.length > 0) {
      const text = await page.locator('#siting-uncovered').innerText();
      expect(text).toContain(run.result.uncovered[0].name);
      expect(text).toMatch(/no candidate hears it/);
    }
    expect(await page.locator('#siting-before-after').innerText()).toContain(`after applying: ${run.result.after.gateways}`);
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    await screenshot(page, 'siting-01-answer', true);
    // Apply: the gateways exist; undo deletes them again.
    const before = (await api<{ total: number }>(`/plans/${planId}/gateways`)).total;
    await page.locator('#siting-apply').click();
    await page.locator('#siting-undo').waitFor();
    const afterApply = (await api<{ total: number }>(`/plans/${planId}/gateways`)).total;
    expect(afterApply - before).toBe(run.result.selected.filter((s) => !s.kept).length);
    expect(await page.locator('#siting-apply-box').innerText()).toMatch(/Fleet before: \d+ served/);
    await screenshot(page, 'siting-02-applied', true);
    await page.locator('#siting-undo').click();
    await page.getByText('The created gateways were deleted again').waitFor();
    expect((await api<{ total: number }>(`/plans/${planId}/gateways`)).total).toBe(before);
    watch.assertClean();
  }, 600_000);

  it('the nodes-per-gateway field takes its limits from /client-settings (FIELD_RANGES); beyond them the form and the API refuse; within them the run gets the cap', async () => {
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/siting`);
    await page.reload();
    await page.getByRole('heading', { name: 'Gateway siting', level: 1 }).waitFor();
    const range = (await page.evaluate(async () => (await (await fetch('/api/v1/client-settings')).json()).ranges.maxNodesPerGateway)) as { min: number; max: number; step: number; unit: string };
    const input = page.locator('#siting-max-per-gateway');
    expect(Number(await input.getAttribute('min'))).toBe(range.min);
    expect(Number(await input.getAttribute('max'))).toBe(range.max);
    expect(Number(await input.getAttribute('step'))).toBe(range.step);
    // Units and range in the help text, from the same served range.
    const hint = await page.locator('#siting-max-per-gateway-hint').innerText();
    expect(hint).toContain(`${range.min} to ${range.max}`);
    expect(hint).toContain(range.unit);
    expect(await page.getByLabel('Nodes per gateway, at most (optional)').count()).toBe(1);
    // One step beyond: the form refuses before sending (no new run), and so does the API, naming the field.
    const runsBefore = (await api<{ total: number }>(`/plans/${planId}/siting`)).total;
    await input.fill(String(range.max + range.step));
    await page.locator('#siting-run').click();
    await expect.poll(async () => (await page.locator('#siting-status').textContent()) ?? '').toContain(`Nodes per gateway, at most (optional): a number from ${range.min} to ${range.max}`);
    await input.fill(String(range.min - range.step));
    await page.locator('#siting-run').click();
    await expect.poll(async () => (await page.locator('#siting-status').textContent()) ?? '').toContain(`a number from ${range.min} to ${range.max}`);
    expect((await api<{ total: number }>(`/plans/${planId}/siting`)).total).toBe(runsBefore);
    watch.expectHttpError(/\/siting$/, 400);
    const refused = await page.evaluate(
      async ([p, cap]) => {
        const r = await fetch(`/api/v1/plans/${p}/siting`, { method: 'POST', headers: { 'content-type': 'application/json', 'x-earshot-request': '1' }, body: JSON.stringify({ requiredGateways: 1, candidates: { sites: true, terrainPoints: 0 }, keepExistingGateways: true, maxNodesPerGateway: cap }) });
        return { status: r.status, body: (await r.json()) as { error?: { message: string } } };
      },
      [planId, range.max + range.step] as const,
    );
    expect(refused.status).toBe(400);
    expect(refused.body.error?.message).toMatch(/maxNodesPerGateway/);
    // Within the range: the run is started with the cap, and the answer homes at most that many nodes on each chosen gateway.
    await input.fill('4');
    await page.locator('#siting-max-gateways').fill('2');
    await page.locator('#siting-run').click();
    await page.locator('#siting-summary').waitFor();
    const runs = await api<{ items: Array<Run & { params: { maxNodesPerGateway?: number } }> }>(`/plans/${planId}/siting`);
    expect(runs.items[0].params.maxNodesPerGateway).toBe(4);
    expect(runs.items[0].status).toBe('done');
    const covered = (runs.items[0].result as unknown as { coveredNodeIds: string[] }).coveredNodeIds.length;
    expect(covered).toBeLessThanOrEqual(4 * runs.items[0].result.objective.gateways);
    expect(await page.locator('#siting-summary').innerText()).toContain(`Covers ${covered} of`);
    watch.assertClean();
  }, 600_000);
});
