// The map front end in a real browser (Debian chromium via playwright-core)
// against the real server with the demo plan: sign in, the map with nodes
// and gateways, the node panel's kit chooser, a CSV import with a bad row,
// a coverage run, the fleet table and summary, and an installer recording a
// reading on a phone-sized screen. Every step fails on a console error or a
// request that leaves the local server. Screenshots: test-artefacts/screenshots/.
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page, Route } from 'playwright-core';
import { accessibilityProblems, buildWeb, cli, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let planId = '';

beforeAll(async () => {
  buildWeb();
  [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  context = await newContext(browser);
  page = await context.newPage();
  page.setDefaultTimeout(30_000);
  watch = guard(page, server.baseUrl);
}, 240_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

beforeEach(() => {
  watch?.reset();
});

async function textOf(selector: string): Promise<string> {
  return (await page.locator(selector).first().textContent()) ?? '';
}

/**
 * Someone else changes the open node (a PATCH from "another tab"), then our edit form,
 * opened on the older version, is refused with 409 and the conflict dialog explains it.
 */
async function staleEditRefused(otherTabNotes: string, ourName: string): Promise<string> {
  const nodeId = new URLSearchParams(page.url().split('?')[1] ?? '').get('node') ?? '';
  expect(nodeId).not.toBe('');
  const status = await page.evaluate(
    async ([p, n, notes]) => {
      const current = (await (await fetch(`/api/v1/plans/${p}/nodes/${n}`)).json()) as { version: number };
      const r = await fetch(`/api/v1/plans/${p}/nodes/${n}`, {
        method: 'PATCH',
        headers: { 'content-type': 'application/json', 'x-earshot-request': '1' },
        body: JSON.stringify({ notes, version: current.version }),
      });
      return r.status;
    },
    [planId, nodeId, otherTabNotes],
  );
  expect(status).toBe(200);
  watch.expectHttpError(new RegExp(`/nodes/${nodeId}$`), 409);
  await page.getByRole('button', { name: 'Edit node' }).click();
  await page.locator('dialog input[name=name]').fill(ourName);
  await page.locator('dialog button[type=submit]').click();
  await page.getByRole('heading', { name: 'Someone else changed this first' }).waitFor();
  return nodeId;
}

describe('map front end (chromium)', () => {
  it('signs in with the one-time link printed by the server and lists the plans', async () => {
    // Before signing in the app probes /api/v1/me and gets 401: that one is expected.
    watch.expectHttpError(/\/api\/v1\/me$/, 401);
    await page.goto(`${server.baseUrl}/`);
    await page.getByRole('heading', { name: 'Sign in' }).waitFor();
    await screenshot(page, '01-sign-in');
    await page.goto(server.signInUrl);
    await page.getByRole('heading', { name: 'Plans' }).waitFor();
    await page.locator('a.plan-link').first().waitFor();
    const planLinks = page.locator('a.plan-link');
    expect(await planLinks.count()).toBeGreaterThan(0);
    // The card names the plan's band plan by its label (the row's bandPlanId, labels from /client-settings).
    expect(await page.locator('.plan-band').first().textContent()).toMatch(/^US 902–928 MHz ISM · target margin [\d.]+ dB$/);
    await expect.poll(() => textOf('.role-badge'), { timeout: 10_000 }).toContain('planner');
    await screenshot(page, '02-plan-list');
    watch.assertClean();
  });

  it('opens the demo plan: hillshade, nodes and gateways on the map', async () => {
    await page.locator('a.plan-link').first().click();
    await page.waitForSelector('#plan-map');
    planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(page.url())?.[1] ?? '');
    expect(planId).not.toBe('');
    await expect.poll(() => page.locator('.marker-nodes').count(), { timeout: 30_000 }).toBeGreaterThanOrEqual(40);
    expect(await page.locator('.marker-gateways').count()).toBeGreaterThanOrEqual(1);
    // The demo DEM is named SYNTHETIC: the map says so (read from the layer's name).
    expect(await page.locator('#terrain-note').textContent()).toContain('synthetic demo terrain');
    expect(await page.locator('.marker-sites').count()).toBeGreaterThanOrEqual(3);
    // The base layer is the plan's own hillshade, served by the local server; with no
    // EARSHOT_BASE_LAYER_URL (GET /client-settings says null) there is no online layer toggle.
    expect(await page.getByLabel('Online base layer').count()).toBe(0);
    await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/terrain/tiles/"]').count(), { timeout: 30_000 }).toBeGreaterThan(0);
    await expect.poll(() => textOf('#fleet-counts'), { timeout: 30_000 }).toMatch(/\d+ served/);
    await page.waitForTimeout(300);
    await screenshot(page, '03-plan-map');
    // Controls labelled, text contrast at least WCAG AA (sidebar and top bar).
    expect(await accessibilityProblems(page, '.sidebar')).toEqual([]);
    expect(await accessibilityProblems(page, '.topbar')).toEqual([]);
    // Keyboard: a node marker takes focus and Enter opens its panel.
    await page.locator('.marker-nodes').first().focus();
    await page.keyboard.press('Enter');
    await page.locator('#node-panel-title').waitFor();
    watch.assertClean();
  });

  it('node panel: link check and profile; a different mast height changes the margin', async () => {
    const finder = page.locator('#node-finder');
    const options = await finder.locator('option').evaluateAll((els) => els.map((e) => ({ value: (e as HTMLOptionElement).value, label: e.textContent ?? '' })));
    // Prefer a node that is not comfortably served: height matters most there.
    const pick = options.find((o) => /marginal|unserved/i.test(o.label)) ?? options.find((o) => o.value !== '');
    expect(pick).toBeDefined();
    await finder.selectOption(pick?.value ?? '');
    await page.locator('#node-panel-title').waitFor();
    await page.locator('#links-table tbody tr').first().waitFor();
    await page.locator('svg.profile-chart').waitFor();
    await page.locator('#kit-margin').waitFor();
    const before = await textOf('#kit-margin');
    expect(before).toMatch(/-?\d+\.\d dB/);
    const height = Number(await page.locator('#kit-height').inputValue());
    await page.locator('#kit-height').fill(String(height < 6 ? 9 : 1));
    await expect.poll(() => textOf('#kit-margin'), { timeout: 20_000 }).not.toBe(before);
    expect(await textOf('#kit-margin')).toMatch(/-?\d+\.\d dB/);
    await page.locator('#links-h').scrollIntoViewIfNeeded();
    await screenshot(page, '04-node-panel');
    await page.locator('#kit-h').scrollIntoViewIfNeeded();
    await screenshot(page, '04b-kit-chooser');
    watch.assertClean();
  });

  it('CSV import: a bad row is reported with its row number and field, nothing is imported; the fixed file imports', async () => {
    const nodesBefore = await page.locator('.marker-nodes').count();
    await page.locator('#import-button').click();
    const centre = await page.evaluate(() => {
      const markers = Array.from(document.querySelectorAll('.marker-nodes'));
      return markers.length;
    });
    expect(centre).toBe(nodesBefore);
    const csvGood1 = 'E2E probe A,LAT1,LON1,soil probe,1.5,outdoor';
    const csvBad = 'E2E probe B,95.5,LON1,soil probe,1.5,outdoor';
    const csvGood2 = 'E2E probe C,LAT2,LON2,tank level,2,outdoor';
    // Put the new rows next to an existing node of the plan.
    const at = await page.evaluate(async (id) => {
      const r = await fetch(`/api/v1/plans/${id}/nodes?limit=1`, { credentials: 'same-origin' });
      const body = (await r.json()) as { items: Array<{ lat: number; lon: number }> };
      return body.items[0];
    }, planId);
    const fill = (row: string): string =>
      row
        .replace('LAT1', (at.lat + 0.001).toFixed(6))
        .replace('LON1', (at.lon + 0.001).toFixed(6))
        .replace('LAT2', (at.lat - 0.001).toFixed(6))
        .replace('LON2', (at.lon - 0.001).toFixed(6));
    const header = 'name,lat,lon,deviceType,antennaHeightAglM,environment';
    await page.locator('#import-text').fill([header, fill(csvGood1), fill(csvBad), fill(csvGood2)].join('\n'));
    await page.locator('#import-preview').click();
    await page.locator('#import-errors').waitFor();
    const errors = await textOf('#import-errors');
    expect(errors).toContain('lat');
    expect(await page.locator('#import-errors tbody tr').first().locator('td').first().textContent()).toBe('2');
    expect(await page.locator('#import-commit').isDisabled()).toBe(true);
    await page.locator('dialog').screenshot({ path: 'test-artefacts/screenshots/05-import-errors.png' });
    expect(await accessibilityProblems(page, 'dialog')).toEqual([]);
    // fix the row, check again, import
    await page.locator('#import-text').fill([header, fill(csvGood1), fill(csvGood2)].join('\n'));
    await page.locator('#import-preview').click();
    await expect.poll(() => textOf('#import-result'), { timeout: 20_000 }).toContain('valid');
    await page.locator('#import-commit').click();
    await expect.poll(() => textOf('#import-result'), { timeout: 20_000 }).toContain('Imported 2');
    await page.locator('dialog button[aria-label="Close dialog"]').click();
    await expect.poll(() => page.locator('.marker-nodes').count(), { timeout: 30_000 }).toBe(nodesBefore + 2);
    watch.assertClean();
  });

  it('editing: add at map centre, edit, undo, a concurrent change gives the 409 dialog, drag to move', async () => {
    const count = (): Promise<number> => page.locator('.marker-nodes').count();
    const start = await count();
    await page.getByRole('button', { name: 'Add node' }).click();
    await page.getByRole('button', { name: 'Place at map centre' }).click();
    await expect.poll(() => textOf('#node-panel-title'), { timeout: 20_000 }).toMatch(/New node/);
    await expect.poll(count, { timeout: 20_000 }).toBe(start + 1);
    expect(await textOf('#undo-button')).toContain('added node');
    // edit, then undo the edit
    await page.getByRole('button', { name: 'Edit node' }).click();
    await page.locator('dialog input[name=name]').fill('E2E renamed probe');
    await page.locator('dialog button[type=submit]').click();
    await expect.poll(() => textOf('#node-panel-title'), { timeout: 20_000 }).toContain('E2E renamed probe');
    await page.locator('#undo-button').click();
    await expect.poll(() => textOf('#node-panel-title'), { timeout: 20_000 }).toMatch(/New node/);
    // someone else changes the node: our stale edit is refused with 409 and explained
    await staleEditRefused('changed in another tab', 'E2E stale edit');
    await page.locator('dialog').screenshot({ path: 'test-artefacts/screenshots/05b-conflict-409.png' });
    await page.getByRole('button', { name: 'Reload the plan' }).click();
    await expect.poll(() => textOf('#node-panel-title'), { timeout: 20_000 }).toMatch(/New node/);
    // drag a marker
    // Pick a node marker that nothing covers at its centre (markers overlap when the map is
    // zoomed out), so the press lands on the marker we drag. The map redraws its markers when
    // a fleet refresh arrives (the undo above starts one); a redraw between finding the marker
    // and pressing it replaces the element, so the drag is tried again on the fresh markers.
    let moved = false;
    for (let attempt = 0; attempt < 5 && !moved; attempt++) {
      const freeIndex = await page.locator('.marker-nodes').evaluateAll((elements) =>
        elements.findIndex((element) => {
          const rect = element.getBoundingClientRect();
          const hit = document.elementFromPoint(rect.left + rect.width / 2, rect.top + rect.height / 2);
          return rect.width > 0 && hit !== null && (hit === element || element.contains(hit));
        }),
      );
      expect(freeIndex).toBeGreaterThanOrEqual(0);
      const box = await page.locator('.marker-nodes').nth(freeIndex).boundingBox();
      if (!box) continue;
      await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
      await page.mouse.down();
      await page.mouse.move(box.x + 50, box.y + 35, { steps: 8 });
      await page.mouse.up();
      const deadline = Date.now() + 5_000;
      while (Date.now() < deadline && !moved) {
        moved = /^Moved /.test(await textOf('.tool-status'));
        if (!moved) await page.waitForTimeout(200);
      }
    }
    await expect.poll(() => textOf('.tool-status'), { timeout: 20_000 }).toMatch(/^Moved /);
    watch.assertClean();
  });

  // Issue 8 (was skipped as a known defect): deleting the open node and undoing at once
  // sometimes left one marker too many (68 for 67), and the panel's requests for the deleted id
  // came back 404. Causes: (1) a plan reload that read the node list before the delete (here:
  // "Reload the plan" after a 409) assigned that stale list after the delete, so the old node came
  // back beside the undo's re-created one (which has a new id); (2) the node panel's links / check /
  // recommendation / kit-preview requests were never stopped, so those answered after the DELETE
  // were 404s. Fixed in web/src/plan-store.ts (generation counters: a load that overlaps a write
  // reads again; an older fleet answer is ignored), web/src/views/map.ts (one marker per id; the
  // panel's requests aborted before the delete, on deselect and when another object opens) and
  // web/src/views/node-panel.ts (an AbortSignal on every request). The scenario forces both races
  // instead of waiting for an unlucky timing: the reload's catalog answer and the panel's check and
  // recommendation answers are held back (page.route) until after the delete.
  it('editing: delete the open node, undo at once, while a reload and the panel requests are in flight: exact count, no 404', async () => {
    const count = (): Promise<number> => page.locator('.marker-nodes').count();
    const serverNodes = (): Promise<number> =>
      page.evaluate(async (p) => ((await (await fetch(`/api/v1/plans/${p}/nodes?limit=1`)).json()) as { total: number }).total, planId);
    let held = 0;
    const holdBack = (ms: number) => async (route: Route): Promise<void> => {
      held += 1;
      await new Promise((resolve) => setTimeout(resolve, ms));
      // An aborted request cannot be continued: that is the point (nothing reaches the server).
      await route.continue().catch(() => undefined);
      held -= 1;
    };
    const openNode = async (value: string): Promise<void> => {
      await page.locator('#node-finder').selectOption(value);
      await page.locator('#node-panel-title').waitFor();
    };
    const nodeValues = (): Promise<string[]> =>
      page.locator('#node-finder option').evaluateAll((els) => els.map((e) => (e as HTMLOptionElement).value).filter((v) => v !== ''));
    const deleteOpenNodeAndUndo = async (start: number): Promise<void> => {
      await page.getByRole('button', { name: 'Delete node' }).click();
      await page.locator('dialog button.danger').click();
      await expect.poll(count, { timeout: 20_000 }).toBe(start - 1);
      expect(await textOf('#undo-button')).toContain('deleted node');
      // At once: the delete's fleet refresh (and here the reload) is still running.
      await page.locator('#undo-button').click();
      await expect.poll(count, { timeout: 20_000 }).toBe(start);
    };
    const start = await count();
    expect(start).toBe(await serverNodes());
    try {
      // 1. A plan reload in flight across the delete: change the open node in "another tab",
      //    make a stale edit (409), "Reload the plan" with the catalog answer held back 2.5 s.
      await openNode((await nodeValues())[1]);
      await staleEditRefused('changed in another tab (delete/undo scenario)', 'E2E stale edit before delete');
      // The reload's answer lands after the delete and before the undo's re-create answers
      // (the POST is held 4 s): the case that used to show one marker too many.
      await page.route('**/api/v1/kit/**', holdBack(2_500));
      const holdCreate = holdBack(4_000);
      await page.route('**/api/v1/plans/*/nodes', (route) => (route.request().method() === 'POST' ? holdCreate(route) : route.continue()));
      await page.getByRole('button', { name: 'Reload the plan' }).click();
      await expect.poll(() => held, { timeout: 10_000 }).toBeGreaterThan(0);
      await deleteOpenNodeAndUndo(start);
      await expect.poll(() => held, { timeout: 30_000 }).toBe(0);
      await page.unroute('**/api/v1/kit/**');
      await page.unroute('**/api/v1/plans/*/nodes');
      await page.waitForTimeout(1_000);
      expect(await count()).toBe(start);
      // 2. Three rounds with the panel's check and recommendation answers held back 1.5 s, so
      //    they are still open when the node is deleted.
      await page.route('**/api/v1/plans/*/nodes/*/check', holdBack(1_500));
      await page.route('**/api/v1/plans/*/nodes/*/recommend', holdBack(1_500));
      for (let round = 0; round < 3; round++) {
        await openNode((await nodeValues())[round + 2]);
        await deleteOpenNodeAndUndo(start);
      }
      await expect.poll(() => held, { timeout: 30_000 }).toBe(0);
    } finally {
      await page.unroute('**/api/v1/kit/**');
      await page.unroute('**/api/v1/plans/*/nodes');
      await page.unroute('**/api/v1/plans/*/nodes/*/check');
      await page.unroute('**/api/v1/plans/*/nodes/*/recommend');
    }
    // Let the background refreshes answer, then check again: no stale answer brings a marker back.
    await expect.poll(() => page.locator('#undo-button').isDisabled(), { timeout: 20_000 }).toBe(false);
    await page.waitForTimeout(3_000);
    expect(await count()).toBe(start);
    expect(await serverNodes()).toBe(start);
    watch.assertClean();
  });

  it('plan settings (planner): change target margin and σ, saved and shown; a concurrent change gives the 409 dialog', async () => {
    const readPlan = (): Promise<{ targetMarginDb: number; locationSigmaDb: number | null; description: string; version: number }> =>
      page.evaluate(async (p) => (await (await fetch(`/api/v1/plans/${p}`)).json()) as { targetMarginDb: number; locationSigmaDb: number | null; description: string; version: number }, planId);
    const before = await readPlan();
    const newMargin = before.targetMarginDb + 2;
    await page.getByRole('button', { name: 'Plan settings' }).click();
    await page.getByRole('heading', { name: 'Plan settings' }).waitFor();
    expect(await accessibilityProblems(page, 'dialog')).toEqual([]);
    // Choices come from GET /client-settings: more than one band plan and method to pick from.
    expect(await page.locator('#plan-band option').count()).toBeGreaterThan(1);
    expect(await page.locator('#plan-method option').count()).toBeGreaterThan(1);
    await page.getByLabel('Target margin (dB)').fill(String(newMargin));
    await page.getByLabel('Location variability σL (dB)').fill('7.5');
    await page.locator('dialog').screenshot({ path: 'test-artefacts/screenshots/05c-plan-settings.png' });
    await page.getByRole('button', { name: 'Save plan settings' }).click();
    await page.getByRole('heading', { name: 'Plan settings' }).waitFor({ state: 'detached' });
    await expect.poll(() => textOf('#plan-settings-line'), { timeout: 20_000 }).toContain(`Target margin ${newMargin} dB`);
    expect(await textOf('#plan-settings-line')).toContain('σL 7.5 dB');
    const after = await readPlan();
    expect(after.targetMarginDb).toBe(newMargin);
    expect(after.locationSigmaDb).toBe(7.5);
    expect(after.version).toBeGreaterThan(before.version);
    // Someone else changes the plan: our stale settings form is refused with 409 and explained.
    const status = await page.evaluate(
      async ([p, version]) => {
        const r = await fetch(`/api/v1/plans/${p}`, {
          method: 'PATCH',
          headers: { 'content-type': 'application/json', 'x-earshot-request': '1' },
          body: JSON.stringify({ description: 'changed in another tab (plan settings scenario)', targetMarginDb: 9, version }),
        });
        return r.status;
      },
      [planId, after.version] as const,
    );
    expect(status).toBe(200);
    watch.expectHttpError(new RegExp(`/api/v1/plans/${planId}$`), 409);
    await page.getByRole('button', { name: 'Plan settings' }).click();
    await page.getByLabel('Target margin (dB)').fill(String(newMargin + 1.5));
    await page.getByRole('button', { name: 'Save plan settings' }).click();
    await page.getByRole('heading', { name: 'Someone else changed this first' }).waitFor();
    expect(await textOf('dialog')).toContain('the plan settings');
    await page.getByRole('button', { name: 'Reload the plan' }).click();
    // The map now shows the stored values (the other tab's 9 dB), not our refused ones.
    await expect.poll(() => textOf('#plan-settings-line'), { timeout: 20_000 }).toContain('Target margin 9 dB');
    expect((await readPlan()).targetMarginDb).toBe(9);
    watch.assertClean();
  });

  it('coverage: a run shows its progress (server-sent events, polling when the stream drops), then the overlay and its legend', async () => {
    // Which requests follow the runs: the event stream or GET .../coverage/<id> polls.
    const streams: string[] = [];
    const polls: string[] = [];
    const onRequest = (request: { url(): string }): void => {
      const path = new URL(request.url()).pathname;
      const events = /\/coverage\/([^/]+)\/events$/.exec(path);
      if (events) streams.push(events[1]);
      const poll = /\/coverage\/([^/.]+)$/.exec(path);
      if (poll && poll[1] !== 'legend') polls.push(poll[1]);
    };
    page.on('request', onRequest);
    const runIdOf = async (): Promise<string> => {
      const response = await page.waitForResponse((r) => r.request().method() === 'POST' && /\/coverage$/.test(new URL(r.url()).pathname));
      return ((await response.json()) as { id: string }).id;
    };
    try {
      const gateways = await page.locator('#coverage-gateway option').evaluateAll((els) => els.map((e) => (e as HTMLOptionElement).value));
      await page.locator('#coverage-gateway').selectOption(gateways.find((v) => v !== '') ?? '');
      await page.locator('#coverage-mode').selectOption('fast');
      await page.locator('#coverage-radius').fill('3');
      const firstRun = runIdOf();
      await page.locator('#coverage-start').click();
      const first = await firstRun;
      // Progress: the bar appears while the run is queued or running.
      await page.locator('#coverage-progress').waitFor({ state: 'attached', timeout: 15_000 });
      await page.locator('#coverage-run').screenshot({ path: 'test-artefacts/screenshots/06-coverage-progress.png' });
      await expect.poll(() => textOf('#coverage-state'), { timeout: 120_000 }).toContain('finished');
      await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/coverage/"]').count(), { timeout: 20_000 }).toBeGreaterThan(0);
      expect(await page.locator('#coverage-legend li').count()).toBeGreaterThan(1);
      // Followed by its event stream: one stream, and one read of the finished run (no polling).
      expect(streams.filter((id) => id === first).length).toBe(1);
      expect(polls.filter((id) => id === first).length).toBeLessThanOrEqual(1);
      await page.locator('#coverage-opacity').fill('0.4');
      await page.waitForTimeout(400);
      await screenshot(page, '07-coverage-overlay');
      // The stream drops at once (an empty event stream that closes): the panel falls back to polling.
      await page.route('**/api/v1/plans/*/coverage/*/events', (route) => route.fulfill({ status: 200, contentType: 'text/event-stream', body: ': closed by the test\n\n' }));
      await page.locator('#coverage-radius').fill('2');
      const secondRun = runIdOf();
      await page.locator('#coverage-start').click();
      const second = await secondRun;
      await expect.poll(() => textOf('#coverage-state'), { timeout: 120_000 }).toContain('finished');
      expect(streams.filter((id) => id === second).length).toBe(1);
      expect(polls.filter((id) => id === second).length).toBeGreaterThanOrEqual(1);
      await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/coverage/"]').count(), { timeout: 20_000 }).toBeGreaterThan(0);
      watch.assertClean();
    } finally {
      page.off('request', onRequest);
      await page.unroute('**/api/v1/plans/*/coverage/*/events');
    }
  });

  it('fleet table: sorts, filters by status and links back to the map', async () => {
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/fleet`);
    await page.locator('#fleet-table tbody tr').first().waitFor();
    const all = await page.locator('#fleet-table tbody tr').count();
    expect(all).toBeGreaterThanOrEqual(40);
    await page.getByRole('button', { name: /^Margin \(dB\)/ }).click();
    const margins = await page.locator('#fleet-table tbody tr td:nth-child(4)').allTextContents();
    const values = margins.map((t) => Number.parseFloat(t)).filter((v) => Number.isFinite(v));
    expect(values.length).toBeGreaterThan(0);
    for (let i = 1; i < values.length; i++) expect(values[i]).toBeGreaterThanOrEqual(values[i - 1]);
    await screenshot(page, '08-fleet-table');
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    await page.locator('#fleet-filter').selectOption('served');
    const served = await page.locator('#fleet-table tbody tr').count();
    expect(served).toBeLessThanOrEqual(all);
    const statuses = await page.locator('#fleet-table tbody tr td:nth-child(2)').allTextContents();
    for (const s of statuses) expect(s.trim()).toBe('served');
    await page.locator('#fleet-filter').selectOption('');
    await page.locator('#fleet-table tbody tr').first().getByRole('link').click();
    await page.locator('#node-panel-title').waitFor();
    watch.assertClean();
  });

  it('manager summary: shares served / marginal / unserved, redundancy and kit cost', async () => {
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/summary`);
    await page.locator('#summary-shares').waitFor();
    expect(await textOf('#summary-shares')).toMatch(/Served/);
    expect(await textOf('#summary-cost-total')).toMatch(/USD/);
    await page.waitForTimeout(200);
    await screenshot(page, '09-summary');
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    watch.assertClean();
  });

  it('installer on a phone-sized screen: signs in with a token, opens a node and records a reading', async () => {
    const issued = cli(server, ['token', 'issue', '--team', 'demo', '--role', 'installer']) as { token: string };
    expect(typeof issued.token).toBe('string');
    const phone = await newContext(browser, { width: 390, height: 844 });
    const p = await phone.newPage();
    p.setDefaultTimeout(30_000);
    const w = guard(p, server.baseUrl);
    w.expectHttpError(/\/api\/v1\/me$/, 401);
    try {
      await p.goto(`${server.baseUrl}/`);
      await p.getByLabel('API token or sign-in link').fill(issued.token);
      await p.getByRole('button', { name: 'Sign in' }).click();
      await p.getByRole('heading', { name: 'Plans' }).waitFor();
      await p.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/install`);
      await p.locator('.node-choice a').first().click();
      await p.locator('#install-coords').waitFor();
      await p.locator('#visit-sheet:not([aria-busy])').waitFor({ timeout: 60_000 });
      expect(await p.locator('#install-height').textContent()).toMatch(/m above ground/);
      expect(await p.locator('#install-coords').textContent()).toMatch(/°/);
      await screenshot(p, '10-installer-node', true);
      expect(await accessibilityProblems(p, 'main')).toEqual([]);
      await p.locator('#reading-rssi').fill('-108.5');
      await p.locator('#reading-snr').fill('-4.2');
      await p.getByRole('button', { name: 'Save reading' }).click();
      await p.locator('#reading-saved').waitFor();
      expect(await p.locator('#reading-saved').textContent()).toContain('-108.5 dBm');
      await p.locator('#reading-form').scrollIntoViewIfNeeded();
      await screenshot(p, '11-installer-reading-saved');
      // The installer sets the node's install status (installers may change installStatus).
      const installNodeId = decodeURIComponent(/\/install\/([^/?]+)/.exec(p.url())?.[1] ?? '');
      expect(installNodeId).not.toBe('');
      await p.getByLabel('Install status of this node').selectOption('installed');
      await p.getByRole('button', { name: 'Save install status' }).click();
      await expect.poll(() => p.locator('#install-status-result').textContent(), { timeout: 20_000 }).toContain('now installed');
      expect(await p.locator('#install-status-line').textContent()).toContain('install status: installed');
      const stored = await p.evaluate(
        async ([plan, node]) => {
          // The pasted token was exchanged for the session cookie (POST /signin).
          const r = await fetch(`/api/v1/plans/${plan}/nodes/${node}`);
          return ((await r.json()) as { installStatus: string }).installStatus;
        },
        [planId, installNodeId],
      );
      expect(stored).toBe('installed');
      await p.locator('#install-status').scrollIntoViewIfNeeded();
      await screenshot(p, '12-installer-status-saved');
      expect(await accessibilityProblems(p, 'main')).toEqual([]);
      // The layout fits the phone: no horizontal scrolling.
      const overflow = await p.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
      expect(overflow).toBeLessThanOrEqual(0);
      w.assertClean();
    } finally {
      await phone.close();
    }
  });
});
