// The installer view with no signal, in a real browser (Debian chromium via playwright-core)
// against the real server and its demo plan: an installer keeps two nodes on the device,
// the browser goes offline (context.setOffline), the page reloads and still shows both
// nodes' kit, visit sheet and map tiles from the device; a reading saved offline waits as
// "not yet sent" and reaches the API once online; an install-status change made offline
// on a node someone else changed meanwhile comes back as a conflict (nothing overwritten).
// Signing out empties what the device holds. http://127.0.0.1 is a secure context, so the
// service worker runs.
import { afterAll, beforeAll, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { touchstone } from '../unit/tuning/series-rlc.ts';
import { buildWeb, cli, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let token = '';

/** The API as another device would call it (Node's fetch: not affected by the browser being offline). */
async function api<T>(method: string, path: string, body?: unknown): Promise<{ status: number; body: T }> {
  const response = await fetch(`${server.baseUrl}/api/v1${path}`, {
    method,
    headers: { authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'content-type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  return { status: response.status, body: (await response.json()) as T };
}

beforeAll(async () => {
  buildWeb();
  // A generous start-up limit: the shared machine can be loaded (the first PGlite start alone takes seconds).
  [server, browser] = await Promise.all([startServer(420_000), launchBrowser()]);
  token = (cli(server, ['token', 'issue', '--team', 'demo', '--role', 'installer']) as { token: string }).token;
  context = await newContext(browser, { width: 390, height: 844 }, { serviceWorkers: 'allow' });
  page = await context.newPage();
  page.setDefaultTimeout(30_000);
  watch = guard(page, server.baseUrl);
}, 600_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

async function keptTiles(): Promise<number> {
  await page.locator('#offline-map img[data-kept="yes"]').first().waitFor();
  return page.locator('#offline-map img[data-kept="yes"]').count();
}

it('an installer keeps two nodes, goes offline, reloads: kit, visit sheet and map tiles come from the device; queued changes are sent or shown as a conflict', async () => {
  watch.expectHttpError(/\/api\/v1\/me$/, 401);
  await page.goto(`${server.baseUrl}/`);
  await page.getByLabel('API token or sign-in link').fill(token);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.getByRole('heading', { name: 'Plans' }).waitFor();
  const plans = await api<{ items: Array<{ id: string }> }>('GET', '/plans');
  const planId = plans.body.items[0].id;
  const nodes = await api<{ items: Array<{ id: string; name: string }> }>('GET', `/plans/${planId}/nodes?limit=2`);
  const [a, b] = nodes.body.items;
  const open = async (nodeId: string) => {
    await page.evaluate((hash) => (location.hash = hash), `#/plan/${encodeURIComponent(planId)}/install/${encodeURIComponent(nodeId)}`);
    await page.locator('#install-coords').waitFor();
    await page.locator('#kit-h').waitFor();
  };

  // Keep both nodes (the service worker records what the view reads, then the tiles).
  for (const node of [a, b]) {
    await open(node.id);
    await expect.poll(() => page.locator('#offline-state').textContent()).toContain('Not kept');
    await page.locator('#offline-keep').click();
    await expect.poll(() => page.locator('#offline-state').textContent(), { timeout: 120_000 }).toMatch(/^Kept on this device/);
    expect(await keptTiles()).toBeGreaterThan(0);
  }
  // Antenna tuning in the installer view: a sweep file picked, the chart and the advice shown.
  await page.locator('#tune-file').setInputFiles({ name: 'roof.s1p', mimeType: 'text/plain', buffer: Buffer.from(touchstone({ resonanceMhz: 903.37, resistanceOhm: 42, inductanceNh: 100 }, 'DB', { fromMhz: 850, toMhz: 980, stepMhz: 1 })) });
  await page.locator('#tune-keep').uncheck();
  await page.getByRole('button', { name: 'Analyse the sweep' }).click();
  await page.locator('#tune-result svg.sweep-chart').waitFor();
  expect(await page.locator('#tune-resonance').textContent()).toMatch(/^903\.\d\d MHz \(VSWR 1\.19\)/);
  expect(await page.locator('#tune-result .sweep-band').count()).toBe(1);
  expect(await page.locator('#tune-result .sweep-resonance-mark').count()).toBe(1);
  await page.locator('#tune-form').scrollIntoViewIfNeeded();
  await screenshot(page, 'offline-00-tuning');
  expect(await page.locator('#offline-storage').textContent()).toMatch(/Storage used by earshot on this device: \d+\.\d\d MB \(map tiles \d+\.\d\d MB\)/);
  await screenshot(page, 'offline-01-kept', true);

  // No signal: reload, and both nodes open from the device.
  await context.setOffline(true);
  await page.reload();
  for (const node of [b, a]) {
    await open(node.id);
    expect(await page.locator('h1').textContent()).toContain(node.name);
    expect(await page.locator('#install-height').textContent()).toMatch(/m above ground/);
    expect(await page.locator('#visit-sheet').textContent()).toContain('What the gateways should hear');
    expect(await keptTiles()).toBeGreaterThan(0);
  }
  await screenshot(page, 'offline-02-offline-node', true);

  // A reading saved offline waits on the device.
  await page.locator('#reading-rssi').fill('-109.5');
  await page.locator('#reading-snr').fill('-4.5');
  await page.getByRole('button', { name: 'Save reading' }).click();
  await page.locator('#reading-queued').waitFor();
  // An install-status change offline, while someone else changes the same node online.
  await page.getByLabel('Install status of this node').selectOption('installed');
  await page.getByRole('button', { name: 'Save install status' }).click();
  await expect.poll(() => page.locator('#install-status-result').textContent()).toContain('Not yet sent');
  await expect.poll(() => page.locator('#outbox li.pending').count()).toBe(2);
  const current = await api<{ version: number }>('GET', `/plans/${planId}/nodes/${a.id}`);
  const other = await api<{ installStatus: string }>('PATCH', `/plans/${planId}/nodes/${a.id}`, { installStatus: 'needs-visit', version: current.body.version });
  expect(other.status).toBe(200);
  await screenshot(page, 'offline-03-not-yet-sent', true);

  // Signal again: the reading goes through; the status change meets the newer version and is shown as a conflict.
  watch.expectHttpError(new RegExp(`/nodes/${a.id}$`), 409);
  await context.setOffline(false);
  await page.locator('#outbox li.conflict').waitFor({ timeout: 60_000 });
  expect(await page.locator('#outbox li.conflict').textContent()).toContain('on the server its install status is now needs-visit');
  await expect.poll(() => page.locator('#outbox li.pending').count()).toBe(0);
  const readings = await api<{ items: Array<{ rssiDbm: number; snrDb: number }> }>('GET', `/plans/${planId}/nodes/${a.id}/readings`);
  expect(readings.body.items.some((r) => r.rssiDbm === -109.5 && r.snrDb === -4.5)).toBe(true);
  const after = await api<{ installStatus: string }>('GET', `/plans/${planId}/nodes/${a.id}`);
  expect(after.body.installStatus).toBe('needs-visit'); // nothing silently overwritten
  await screenshot(page, 'offline-04-conflict', true);

  // "Keep the server's" closes the conflict without writing.
  await page.getByRole('button', { name: "Keep the server's" }).click();
  await expect.poll(() => page.locator('#outbox li').count()).toBe(0);

  // Signing out empties the device.
  await page.getByRole('button', { name: 'Sign out' }).click();
  await expect
    .poll(() =>
      page.evaluate(
        () =>
          new Promise<number>((resolve) => {
            const open = indexedDB.open('earshot-offline');
            open.onsuccess = () => {
              const tx = open.result.transaction(['kept', 'responses', 'outbox'], 'readonly');
              let total = 0;
              let left = 3;
              for (const name of ['kept', 'responses', 'outbox']) {
                const count = tx.objectStore(name).count();
                count.onsuccess = () => {
                  total += count.result;
                  if (--left === 0) resolve(total);
                };
              }
            };
          }),
      ),
    )
    .toBe(0);
  watch.assertClean();
}, 420_000);
