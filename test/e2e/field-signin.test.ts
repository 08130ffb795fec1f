// Team sign-in in a real browser (Debian chromium): a planner invites a viewer from the Team
// page (one-time link + QR code), an admin issues an installer link from the CLI, and a viewer
// and an installer paste API tokens. Each of the four sees hillshade and coverage tiles (no
// 4xx in the page's requests), opens the visit sheet and downloads a GeoTIFF; sign-out ends
// the session on the server so a reload shows the sign-in page. Screenshots at laptop size
// and 390 px go to test-artefacts/screenshots/field-*.png.
import { readFileSync } from 'node:fs';
import { vi, afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { accessibilityProblems, buildWeb, cli, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

// Browser steps on a loaded 2-core machine take tens of seconds each.
vi.setConfig({ testTimeout: 240_000 });

let server: RunningServer;
let browser: Browser;
let planner: BrowserContext;
let plannerPage: Page;
let plannerWatch: Guard;
let planId = '';

const laptop = { width: 1400, height: 900 };
const phone = { width: 390, height: 844 };

beforeAll(async () => {
  buildWeb();
  [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  planner = await newContext(browser, laptop);
  plannerPage = await planner.newPage();
  plannerPage.setDefaultTimeout(30_000);
  plannerWatch = guard(plannerPage, server.baseUrl);
  await plannerPage.goto(server.signInUrl);
  await plannerPage.getByRole('heading', { name: 'Plans' }).waitFor();
  const href = (await plannerPage.locator('a.plan-link').first().getAttribute('href')) ?? '';
  planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(href)?.[1] ?? '');
  // A finished coverage run for the viewers' overlay and GeoTIFF download.
  const runId = await plannerPage.evaluate(async (plan) => {
    const gateways = (await (await fetch(`/api/v1/plans/${plan}/gateways`)).json()) as { items: Array<{ id: string }> };
    const r = await fetch(`/api/v1/plans/${plan}/coverage`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-earshot-request': '1' },
      body: JSON.stringify({ gatewayIds: [gateways.items[0].id], mode: 'fast', radiusKm: 2 }),
    });
    return ((await r.json()) as { id: string }).id;
  }, planId);
  const deadline = Date.now() + 180_000;
  for (;;) {
    const state = await plannerPage.evaluate(async ([plan, run]) => ((await (await fetch(`/api/v1/plans/${plan}/coverage/${run}`)).json()) as { status: string }).status, [planId, runId]);
    if (state === 'done') break;
    if (state === 'failed' || state === 'cancelled' || Date.now() > deadline) throw new Error(`coverage run ${state}`);
    await plannerPage.waitForTimeout(1000);
  }
}, 400_000);

afterAll(async () => {
  await planner?.close();
  await browser?.close();
  await server?.stop();
});

/** The map's hillshade and coverage tiles load, the visit sheet opens, a GeoTIFF downloads. */
async function walkAsTeammate(page: Page, context: BrowserContext, label: string): Promise<void> {
  await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}`);
  await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/terrain/tiles/"]').count(), { timeout: 30_000 }).toBeGreaterThan(0);
  await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/coverage/"]').count(), { timeout: 30_000 }).toBeGreaterThan(0);
  await page.waitForTimeout(300);
  await screenshot(page, `field-${label}-map`);
  // GeoTIFF download through the session cookie.
  const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'margin (dB)' }).click()]);
  expect(await download.failure()).toBeNull();
  const bytes = readFileSync((await download.path()) as string);
  expect(bytes.subarray(0, 4).toString('latin1')).toMatch(/^(II\*\0|MM\0\*)$/);
  // Visit sheet: the installer view, then the printable sheet in a new tab.
  await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/install`);
  await page.locator('.node-choice a').first().click();
  await page.locator('#visit-sheet:not([aria-busy])').waitFor({ timeout: 60_000 });
  const [sheet] = await Promise.all([context.waitForEvent('page'), page.locator('#visit-sheet-link').click()]);
  const sheetWatch = guard(sheet, server.baseUrl);
  await sheet.waitForLoadState('load');
  expect(await sheet.title()).toMatch(/^Visit sheet: /);
  expect(await sheet.locator('h2', { hasText: 'What to bring' }).count()).toBe(1);
  await sheet.close();
  sheetWatch.assertClean();
}

async function horizontalOverflow(page: Page): Promise<number> {
  return page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
}

describe('earshot plans / nodes while the server runs', () => {
  it('plans --json lists the demo plan; nodes --plan lists its nodes and gateways with ids and names', () => {
    const plans = cli(server, ['plans']) as { items: Array<{ id: string; name: string; team: string; nodes: number }> };
    const demo = plans.items.find((p) => p.id === planId);
    expect(demo).toMatchObject({ team: 'demo', name: expect.stringContaining('(demo)') });
    const nodes = cli(server, ['nodes', '--plan', planId]) as { items: Array<{ id: string; name: string }>; gateways: Array<{ id: string; name: string }> };
    expect(nodes.items.length).toBe(demo?.nodes);
    expect(nodes.items[0]).toMatchObject({ id: expect.any(String), name: expect.any(String) });
    expect(nodes.gateways.length).toBeGreaterThan(0);
  });
});

describe('team sign-in (chromium)', () => {
  it('a planner invites a viewer from the Team page: link, QR code, listed with its state', async () => {
    plannerWatch.reset();
    await plannerPage.goto(`${server.baseUrl}/#/team`);
    await plannerPage.getByRole('heading', { name: 'Invite a teammate' }).waitFor();
    await plannerPage.getByLabel('Name').fill('Vera (viewer)');
    await plannerPage.getByLabel('Role').selectOption('viewer');
    await plannerPage.getByRole('button', { name: 'Create sign-in link' }).click();
    const linkField = plannerPage.locator('#invite-link');
    await linkField.waitFor();
    const link = await linkField.inputValue();
    expect(link).toMatch(/\/signin\?token=esk_/);
    expect(await plannerPage.locator('#invite-qr svg').count()).toBe(1);
    await expect.poll(() => plannerPage.locator('#team-people').textContent()).toContain('Vera (viewer)');
    expect(await plannerPage.locator('#team-people').textContent()).toContain('sign-in link, not used yet');
    expect(await plannerPage.locator('#team-audit').textContent()).toContain('invited “Vera (viewer)” (viewer)');
    await screenshot(plannerPage, 'field-team-invite', true);
    expect(await accessibilityProblems(plannerPage, 'main')).toEqual([]);
    plannerWatch.assertClean();

    // The viewer opens the link on a laptop.
    const viewer = await newContext(browser, laptop);
    const page = await viewer.newPage();
    page.setDefaultTimeout(30_000);
    const watch = guard(page, server.baseUrl);
    try {
      await page.goto(`${server.baseUrl}${new URL(link).pathname}${new URL(link).search}`);
      await page.getByRole('heading', { name: 'Plans' }).waitFor();
      expect(await page.locator('.role-badge').textContent()).toContain('viewer');
      await walkAsTeammate(page, viewer, 'viewer-link');
      watch.assertClean();
      // The link worked once: a second use is refused.
      const again = await page.request.get(link.replace(new URL(link).origin, server.baseUrl), { maxRedirects: 0 });
      expect(again.status()).toBe(401);
      // Sign-out ends the session on the server: a reload shows the sign-in page.
      watch.expectHttpError(/\/api\/v1\/me$/, 401);
      await page.getByRole('button', { name: 'Sign out' }).click();
      await page.getByRole('heading', { name: 'Sign in' }).waitFor();
      await page.reload();
      await page.getByRole('heading', { name: 'Sign in' }).waitFor();
      const me = await page.evaluate(async () => (await fetch('/api/v1/me')).status);
      expect(me).toBe(401);
      watch.assertClean();
    } finally {
      await viewer.close();
    }
    // The planner's list now shows the viewer's session as ended (no live access).
    await plannerPage.reload();
    await plannerPage.locator('#team-people table').waitFor();
    const row = plannerPage.locator('#team-people tr', { hasText: 'Vera (viewer)' });
    expect(await row.textContent()).toContain('no live access');
  });

  it('an installer signs in on a phone with a CLI invitation link (token issue --link): tiles, visit sheet, GeoTIFF, no sideways scroll', async () => {
    const issued = cli(server, ['token', 'issue', '--team', 'demo', '--role', 'installer', '--name', 'Ines (installer)', '--link']) as { token: string; link: string };
    expect(issued.link).toBe(`${server.baseUrl}/signin?token=${issued.token}`);
    const context = await newContext(browser, phone);
    const page = await context.newPage();
    page.setDefaultTimeout(30_000);
    const watch = guard(page, server.baseUrl);
    try {
      await page.goto(issued.link);
      await page.getByRole('heading', { name: 'Plans' }).waitFor();
      expect(await horizontalOverflow(page)).toBeLessThanOrEqual(0);
      const bar = await page.locator('header.topbar').boundingBox();
      expect(bar?.height ?? 999).toBeLessThanOrEqual(60);
      await screenshot(page, 'field-installer-phone-plans');
      await walkAsTeammate(page, context, 'installer-link');
      expect(await horizontalOverflow(page)).toBeLessThanOrEqual(0);
      await screenshot(page, 'field-installer-phone-install', true);
      watch.assertClean();
    } finally {
      await context.close();
    }
  });

  for (const [role, viewport] of [
    ['viewer', laptop],
    ['installer', phone],
  ] as const) {
    it(`a ${role} pastes an API token: the token is exchanged for the session cookie, so tiles and downloads work`, async () => {
      const issued = cli(server, ['token', 'issue', '--team', 'demo', '--role', role]) as { token: string };
      const context = await newContext(browser, viewport);
      const page = await context.newPage();
      page.setDefaultTimeout(30_000);
      const watch = guard(page, server.baseUrl);
      watch.expectHttpError(/\/api\/v1\/me$/, 401);
      const urls: string[] = [];
      page.on('request', (r) => urls.push(r.url()));
      try {
        await page.goto(`${server.baseUrl}/`);
        await page.getByLabel('API token or sign-in link').fill(issued.token);
        await page.getByRole('button', { name: 'Sign in' }).click();
        await page.getByRole('heading', { name: 'Plans' }).waitFor();
        // The token went in a request body, never into a URL; the tab keeps no copy.
        expect(urls.filter((u) => u.includes(issued.token))).toEqual([]);
        expect(await page.evaluate(() => sessionStorage.getItem('earshot.token'))).toBeNull();
        await walkAsTeammate(page, context, `${role}-token`);
        if (viewport === phone) expect(await horizontalOverflow(page)).toBeLessThanOrEqual(0);
        watch.assertClean();
      } finally {
        await context.close();
      }
    });
  }
});
