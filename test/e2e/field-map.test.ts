// The plan map's tools and freshness in a real browser (Debian chromium): go to typed
// coordinates (with the validation message); a candidate site under its gateway stays
// reachable through the chooser; after a gateway moves the open node panel shows the new
// distance and the coverage overlay says it is out of date; undo survives a change of view;
// a new node's panel does not say "Not predicted yet" beside its link table; redundancy
// badges do not overlap. Screenshots go to test-artefacts/screenshots/field-map-*.png.
import { vi, afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { buildWeb, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

// Browser steps on a loaded 2-core machine take tens of seconds each.
vi.setConfig({ testTimeout: 300_000 });

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let planId = '';
interface Thing {
  id: string;
  name: string;
  lat: number;
  lon: number;
}
let gateway: Thing;
let node: Thing;
const siteName = 'E2E site under the gateway';

const api = <T>(path: string, method = 'GET', body?: unknown): Promise<T> =>
  page.evaluate(
    async ([p, m, b]) => {
      const r = await fetch(`/api/v1${p}`, {
        method: m,
        headers: b === undefined ? {} : { 'content-type': 'application/json', 'x-earshot-request': '1' },
        body: b === undefined ? undefined : JSON.stringify(b),
      });
      if (!r.ok) throw new Error(`${m} ${p}: ${r.status} ${await r.text()}`);
      return (await r.json()) as T;
    },
    [path, method, body] as const,
  );

const textOf = async (selector: string): Promise<string> => (await page.locator(selector).first().textContent()) ?? '';

beforeAll(async () => {
  buildWeb();
  [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  context = await newContext(browser, { width: 1400, height: 900 });
  page = await context.newPage();
  page.setDefaultTimeout(30_000);
  watch = guard(page, server.baseUrl);
  await page.goto(server.signInUrl);
  await page.getByRole('heading', { name: 'Plans' }).waitFor();
  const href = (await page.locator('a.plan-link').first().getAttribute('href')) ?? '';
  planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(href)?.[1] ?? '');
  gateway = (await api<{ items: Thing[] }>(`/plans/${planId}/gateways`)).items[0];
  node = (await api<{ items: Thing[] }>(`/plans/${planId}/nodes?limit=1`)).items[0];
  // A candidate site exactly under the gateway: the stacked-markers case.
  await api(`/plans/${planId}/sites`, 'POST', { name: siteName, lat: gateway.lat, lon: gateway.lon });
  // A finished coverage run of that gateway, for the freshness mark.
  const run = await api<{ id: string }>(`/plans/${planId}/coverage`, 'POST', { gatewayIds: [gateway.id], mode: 'fast', radiusKm: 1 });
  const deadline = Date.now() + 200_000;
  for (;;) {
    const { status } = await api<{ status: string }>(`/plans/${planId}/coverage/${run.id}`);
    if (status === 'done') break;
    if (status === 'failed' || status === 'cancelled' || Date.now() > deadline) throw new Error(`coverage run ${status}`);
    await page.waitForTimeout(1000);
  }
}, 400_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

beforeEach(() => watch?.reset());

async function openMap(): Promise<void> {
  await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}`);
  await page.locator('.marker-gateways').first().waitFor();
}

async function goTo(text: string): Promise<string> {
  await page.locator('#goto-coords').fill(text);
  await page.locator('#goto-button').click();
  return textOf('#goto-message');
}

/** The "Distance" cell of the open node panel's link table for one gateway. */
async function distanceTo(gatewayName: string): Promise<string> {
  return page.locator('#links-table').evaluate((table, name) => {
    const heads = Array.from(table.querySelectorAll('thead th')).map((th) => th.textContent ?? '');
    const column = heads.indexOf(name);
    const row = Array.from(table.querySelectorAll('tbody tr')).find((tr) => tr.querySelector('th')?.textContent === 'Distance');
    return column > 0 && row ? (row.children[column]?.textContent ?? '') : '';
  }, gatewayName);
}

describe('map tools (chromium)', () => {
  it('go to coordinates: a typing mistake is named; valid coordinates move the map there', async () => {
    await openMap();
    expect(await goTo('abc')).toMatch(/Two numbers are needed/);
    expect(await page.locator('#goto-coords').getAttribute('aria-invalid')).toBe('true');
    expect(await goTo('95, 6')).toMatch(/Latitude 95 is outside −90…90°/);
    expect(await goTo(`${node.lat.toFixed(5)}, ${node.lon.toFixed(5)}`)).toMatch(/^Map centred on /);
    const [lat, lon] = ((await page.locator('#plan-map').getAttribute('data-centre')) ?? '').split(',').map(Number);
    expect(Math.abs(lat - node.lat)).toBeLessThan(1e-4);
    expect(Math.abs(lon - node.lon)).toBeLessThan(1e-4);
    expect(await page.locator('#goto-coords').getAttribute('aria-invalid')).toBeNull();
    await screenshot(page, 'field-map-goto');
    watch.assertClean();
  });

  it('a candidate site under its gateway: a click on the spot offers both, and the site opens', async () => {
    await openMap();
    await goTo(`${gateway.lat}, ${gateway.lon}`);
    await page.locator(`.marker-gateways[title="Gateway ${gateway.name}"]`).click();
    const chooser = page.locator('#marker-chooser');
    await chooser.waitFor();
    const choices = await chooser.locator('button').allTextContents();
    expect(choices).toContain(`Gateway ${gateway.name}`);
    expect(choices).toContain(`Candidate site ${siteName}`);
    await screenshot(page, 'field-map-chooser');
    await chooser.getByRole('button', { name: `Candidate site ${siteName}` }).click();
    await expect.poll(() => textOf('#detail-title')).toBe(`Candidate site: ${siteName}`);
    // The gateway is one click away too (the first chooser fades out in 200 ms first).
    await expect.poll(() => page.locator('#marker-chooser').count()).toBe(0);
    await page.locator(`.marker-gateways[title="Gateway ${gateway.name}"]`).click();
    await expect.poll(() => page.locator('#marker-chooser').count()).toBe(1);
    await page.locator('#marker-chooser').getByRole('button', { name: `Gateway ${gateway.name}` }).click();
    await expect.poll(() => textOf('#detail-title')).toBe(`Gateway: ${gateway.name}`);
    watch.assertClean();
  });

  it('redundancy badges overlap neither each other nor another badge when shown', async () => {
    await openMap();
    await page.getByLabel('Redundancy: gateways hearing each node').check();
    await expect.poll(() => page.locator('.leaflet-marker-pane .redundancy-badge').count(), { timeout: 30_000 }).toBeGreaterThan(1);
    const overlaps = await page.locator('.leaflet-marker-pane .redundancy-badge').evaluateAll((badges) => {
      const rects = badges.map((b) => b.getBoundingClientRect()).filter((r) => r.width > 0);
      let count = 0;
      for (let i = 0; i < rects.length; i++)
        for (let j = i + 1; j < rects.length; j++) {
          const a = rects[i];
          const b = rects[j];
          if (a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1) count++;
        }
      return count;
    });
    expect(overlaps).toBe(0);
    await screenshot(page, 'field-map-badges');
    await page.getByLabel('Redundancy: gateways hearing each node').uncheck();
    watch.assertClean();
  });
});

describe('freshness (chromium)', () => {
  it('a gateway moves: the open node panel shows the new distance, the coverage overlay is out of date; undo survives a change of view', async () => {
    await openMap();
    // The overlay of the finished run is on the map and matches the plan.
    await page.locator('#coverage-fresh').waitFor({ timeout: 30_000 });
    expect(await page.locator('#coverage-stale-badge').isHidden()).toBe(true);
    // Open the node, read its distance to the gateway.
    await page.locator('#node-finder').selectOption(node.id);
    await page.locator('#links-table').waitFor({ timeout: 60_000 });
    const before = await distanceTo(gateway.name);
    expect(before).not.toBe('');
    // Drag the gateway (the topmost marker at its spot) while the node panel is open: the map
    // centred on it first; a redraw between finding the marker and pressing it replaces the
    // element (a fleet refresh), so the drag is tried again on the fresh marker.
    await goTo(`${gateway.lat}, ${gateway.lon}`);
    let moved = false;
    for (let attempt = 0; attempt < 5 && !moved; attempt++) {
      const box = await page.locator(`.marker-gateways[title="Gateway ${gateway.name}"]`).boundingBox();
      if (!box) continue;
      await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
      await page.mouse.down();
      await page.mouse.move(box.x + box.width / 2 + 120, box.y + box.height / 2 + 80, { steps: 10 });
      await page.mouse.up();
      const deadline = Date.now() + 8_000;
      while (Date.now() < deadline && !moved) {
        moved = /^Moved /.test(await textOf('.tool-status'));
        if (!moved) await page.waitForTimeout(200);
      }
    }
    await expect.poll(() => textOf('.tool-status'), { timeout: 20_000 }).toMatch(/^Moved /);
    // The node panel is drawn again from the moved gateway.
    await expect.poll(() => distanceTo(gateway.name), { timeout: 60_000 }).not.toBe(before);
    await expect.poll(() => textOf('#node-panel-title')).toContain(node.name);
    // The coverage overlay says it no longer shows the plan.
    await expect.poll(() => textOf('#coverage-stale'), { timeout: 20_000 }).toMatch(/Out of date: gateway .* changed after this run/);
    expect(await page.locator('#coverage-stale-badge').isVisible()).toBe(true);
    await screenshot(page, 'field-map-stale-overlay');

    // Undo survives a change of view (map → fleet table → map).
    await page.getByRole('link', { name: 'Fleet table' }).click();
    await page.locator('table').first().waitFor();
    await page.getByRole('link', { name: 'Map', exact: true }).click();
    await page.locator('.marker-gateways').first().waitFor();
    await expect.poll(() => textOf('#undo-button')).toContain(`moved gateway ${gateway.name}`);
    // Reopened after the move: the overlay is still out of date (by the gateway's timestamp).
    await expect.poll(() => textOf('#coverage-stale'), { timeout: 30_000 }).toMatch(/Out of date/);
    await page.locator('#undo-button').click();
    await expect.poll(() => textOf('.tool-status'), { timeout: 20_000 }).toContain(`Undone: moved gateway ${gateway.name}`);
    const back = await api<Thing>(`/plans/${planId}/gateways/${gateway.id}`);
    expect(back.lat).toBeCloseTo(gateway.lat, 6);
    expect(back.lon).toBeCloseTo(gateway.lon, 6);
    watch.assertClean();
  });

  it('a new node: its panel does not say "Not predicted yet" beside its link table', async () => {
    await openMap();
    await goTo(`${node.lat}, ${node.lon}`);
    await page.getByRole('button', { name: 'Add node' }).click();
    await page.getByRole('button', { name: 'Place at map centre' }).click();
    await expect.poll(() => textOf('#node-panel-title'), { timeout: 20_000 }).toMatch(/New node/);
    await page.locator('#links-table').waitFor({ timeout: 60_000 });
    expect(await textOf('#node-status-line')).not.toMatch(/Not predicted yet/);
    // The fleet refresh that follows agrees (the heading is not set back).
    await page.waitForTimeout(2000);
    expect(await textOf('#node-status-line')).not.toMatch(/Not predicted yet/);
    watch.assertClean();
  });
});
