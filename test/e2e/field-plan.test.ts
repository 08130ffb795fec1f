// A planner's and an installer's paths in a real browser (Debian chromium): a new plan gets its
// terrain by upload (progress, the server's own refusal of a bad file) and the map moves there;
// a node placed off the terrain warns first; a CSV import moves the map onto the imported nodes;
// an over-limit gateway shows the legal warning and the fitted cautions, in the edit dialog, the
// panel and the fleet table; one kit shows one price in the recommendation, the kit chooser, the
// installer view and the printable visit sheet; the visit sheet fits a 390 px phone.
import { join } from 'node:path';
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { vi, afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { buildWeb, guard, launchBrowser, newContext, screenshot, startServer, type Guard, type RunningServer } from './harness.ts';

// Browser steps on a loaded 2-core machine take tens of seconds each.
vi.setConfig({ testTimeout: 240_000 });

let server: RunningServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let watch: Guard;
let demoPlanId = '';

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
  demoPlanId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec(href)?.[1] ?? '');
}, 300_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.stop();
});

beforeEach(() => watch?.reset());

/** The map's centre, as the map writes it on every move (data-centre="lat,lon"). */
async function mapCentre(): Promise<{ lat: number; lng: number }> {
  const text = (await page.locator('#plan-map').getAttribute('data-centre')) ?? 'NaN,NaN';
  const [lat, lng] = text.split(',').map(Number);
  return { lat, lng };
}

describe('new plan: terrain by upload (chromium)', () => {
  it('a bad file shows the server’s error; the GeoTIFF uploads with progress and the map moves onto it; off-terrain placing warns; a CSV import moves the map', async () => {
    await page.goto(`${server.baseUrl}/#/plans`);
    await page.getByLabel('Plan name').fill('E2E new valley plan');
    await page.getByRole('button', { name: 'Create plan' }).click();
    await page.locator('#plan-map').waitFor();
    await page.locator('#terrain-note').waitFor();
    expect(await page.locator('#terrain-note').textContent()).toContain('no terrain layer yet');

    // Placing a node before there is terrain: the warning, and nothing is placed on Cancel.
    await page.getByRole('button', { name: 'Add node' }).click();
    await page.getByRole('button', { name: 'Place at map centre' }).click();
    await page.getByRole('heading', { name: 'This node would be off the terrain' }).waitFor();
    await screenshot(page, 'field-off-terrain-warning');
    await page.locator('dialog').getByRole('button', { name: 'Cancel' }).click();
    expect(await page.locator('.marker-nodes').count()).toBe(0);

    // A file that is not a GeoTIFF: the server's 415 answer is shown.
    const dir = mkdtempSync(join(tmpdir(), 'earshot-field-'));
    const bogus = join(dir, 'notes.tif');
    writeFileSync(bogus, 'this is not a tiff');
    watch.expectHttpError(/\/terrain\?/, 415);
    await page.locator('#terrain-upload-button').click();
    await page.locator('#terrain-file').setInputFiles(bogus);
    await page.locator('#terrain-send').click();
    await expect.poll(() => page.locator('#terrain-result').textContent()).toContain('not a TIFF file');

    // The real GeoTIFF (SRTM-derived sample, 49.44–50.19° N, 5.74–6.53° E).
    await page.locator('#terrain-file').setInputFiles('terrain-samples/elev.tif');
    await page.locator('#terrain-name').fill('Sample DEM (SRTM-derived)');
    const response = page.waitForResponse((r) => r.request().method() === 'POST' && /\/terrain\?/.test(r.url()));
    await page.locator('#terrain-send').click();
    expect((await response).status()).toBe(201);
    await page.locator('dialog').waitFor({ state: 'detached', timeout: 10_000 });
    await expect.poll(() => page.locator('img.leaflet-tile-loaded[src*="/terrain/tiles/"]').count(), { timeout: 30_000 }).toBeGreaterThan(0);
    const centre = await mapCentre();
    expect(centre.lat).toBeGreaterThan(49.4);
    expect(centre.lat).toBeLessThan(50.2);
    expect(centre.lng).toBeGreaterThan(5.7);
    expect(centre.lng).toBeLessThan(6.6);
    expect(await page.locator('#terrain-note').textContent()).toContain('Sample DEM');
    await page.waitForTimeout(300);
    await screenshot(page, 'field-new-plan-terrain');

    // On the terrain now: placing at the centre needs no confirmation.
    await page.getByRole('button', { name: 'Add node' }).click();
    await page.getByRole('button', { name: 'Place at map centre' }).click();
    await expect.poll(() => page.locator('.marker-nodes').count(), { timeout: 20_000 }).toBe(1);
    expect(await page.getByRole('heading', { name: /off the terrain/ }).count()).toBe(0);

    // A CSV import elsewhere on the terrain moves the map onto the imported nodes.
    await page.locator('#import-button').click();
    await page.locator('#import-text').fill(['name,lat,lon,deviceType,antennaHeightAglM,environment', 'North probe,50.10,6.40,soil probe,1.5,outdoor', 'North tank,50.12,6.45,tank level,2,outdoor'].join('\n'));
    await page.locator('#import-preview').click();
    await page.locator('#import-commit:not([disabled])').waitFor();
    await page.locator('#import-commit').click();
    await expect.poll(() => page.locator('#import-result').textContent(), { timeout: 20_000 }).toContain('Imported 2');
    await page.locator('dialog button[aria-label="Close dialog"]').click();
    await expect.poll(() => page.locator('.marker-nodes').count(), { timeout: 30_000 }).toBe(3);
    await page.waitForTimeout(500);
    const moved = await mapCentre();
    expect(moved.lat).toBeGreaterThan(50.05);
    expect(moved.lng).toBeGreaterThan(6.35);
    watch.assertClean();
  }, 240_000);
});

describe('gateways: EIRP and the legal check (chromium)', () => {
  it('36 dBm into an 8 dBi antenna: the edit dialog, the panel and the fleet table say it is over the US limit, with the fitted cautions', async () => {
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(demoPlanId)}`);
    const marker = page.locator('[aria-label="Gateway GW silo"]');
    await marker.waitFor();
    await marker.focus();
    await page.keyboard.press('Enter');
    await page.locator('#gateway-check:not([aria-busy]) .gateway-eirp').waitFor();
    expect(await page.locator('#gateway-check .gateway-legal').textContent()).toContain('Within the');
    await page.locator('#detail-panel').getByRole('button', { name: 'Edit' }).click();
    await page.locator('dialog select[name=antennaDesignId]').selectOption('collinear-fibreglass-8dbi');
    await page.locator('dialog input[name=txPowerDbm]').fill('36');
    await page.locator('dialog input[name=feedlineLengthM]').fill('0');
    await expect.poll(() => page.locator('#gateway-live-check .gateway-legal').textContent(), { timeout: 20_000 }).toContain('Over the legal limit');
    const live = (await page.locator('#gateway-live-check').textContent()) ?? '';
    expect(live).toMatch(/4\d\.\d dBm EIRP/); // 36 dBm − 0.2 dB mismatch + 8 dBi
    expect(live).toContain('36.0 dBm EIRP');
    expect(live).toContain('Legal power:');
    expect(live).toContain('Work at height:'); // GW silo's antenna is 22 m up
    expect(live).toContain('RF exposure:');
    await page.locator('dialog').screenshot({ path: 'test-artefacts/screenshots/field-gateway-over-limit-dialog.png' });
    await page.locator('dialog button[type=submit]').click();
    await page.locator('dialog').waitFor({ state: 'detached' });
    await expect.poll(() => page.locator('#gateway-check .gateway-legal').textContent(), { timeout: 20_000 }).toContain('Over the legal limit');
    expect(await page.locator('#gateway-check').textContent()).toContain('Legal power:');
    await screenshot(page, 'field-gateway-over-limit-panel');

    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(demoPlanId)}/fleet`);
    const row = page.locator('#fleet-gateways tr', { hasText: 'GW silo' });
    await row.waitFor();
    expect(await row.textContent()).toMatch(/NO, \d+\.\d dB over/);
    watch.assertClean();
  }, 240_000);
});

describe('one kit, one price (chromium)', () => {
  it('recommendation, kit chooser, installer view and printable visit sheet show the same total', async () => {
    const nodeId = await page.evaluate(async (plan) => {
      const fleet = (await (await fetch(`/api/v1/plans/${plan}/links?limit=1000`)).json()) as { items: Array<{ id?: string; nodeId?: string; status: string }> };
      const row = fleet.items.find((r) => r.status !== 'served') ?? fleet.items[0];
      return row.nodeId ?? row.id ?? '';
    }, demoPlanId);
    expect(nodeId).not.toBe('');
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(demoPlanId)}?node=${encodeURIComponent(nodeId)}`);
    const first = page.locator('#rec-list li').first();
    await first.waitFor({ timeout: 90_000 });
    const recCost = ((await first.locator('.rec-cost').textContent()) ?? '').replace('cost ', '');
    expect(recCost).toMatch(/^\d+\.\d\d USD$/);
    await first.getByRole('button', { name: 'Try it in the kit chooser' }).click();
    await expect.poll(() => page.locator('#kit-cost').textContent(), { timeout: 60_000 }).toBe(recCost);
    await screenshot(page, 'field-one-price-chooser');

    // The installer view and the sheet say the same for the recommended kit.
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(demoPlanId)}/install/${encodeURIComponent(nodeId)}`);
    await page.locator('#visit-sheet:not([aria-busy])').waitFor({ timeout: 60_000 });
    const installRec = page.locator('#install-rec-cost');
    if ((await installRec.count()) > 0) expect(await installRec.textContent()).toBe(recCost);
    const sheetJson = await page.evaluate(async ([plan, node]) => (await (await fetch(`/api/v1/plans/${plan}/nodes/${node}/visit-sheet?format=json`)).json()) as { kit: { recommended: { price: { totalUsd: number; lines: Array<{ name: string }> } } | null; price: { totalUsd: number } } }, [demoPlanId, nodeId]);
    expect(sheetJson.kit.recommended).not.toBeNull();
    expect(`${sheetJson.kit.recommended?.price.totalUsd.toFixed(2)} USD`).toBe(recCost);
    expect(await page.locator('#install-kit-cost').textContent()).toBe(`${sheetJson.kit.price.totalUsd.toFixed(2)} USD`);

    // The printable sheet on a 390 px phone: names (no catalog ids), the same total, no sideways scroll.
    const phone = await newContext(browser, { width: 390, height: 844 });
    try {
      await phone.addCookies(await context.cookies());
      const sheet = await phone.newPage();
      const sheetWatch = guard(sheet, server.baseUrl);
      await sheet.goto(`${server.baseUrl}/api/v1/plans/${demoPlanId}/nodes/${nodeId}/visit-sheet?tz=Europe/Luxembourg`);
      const text = (await sheet.locator('body').textContent()) ?? '';
      expect(text).toContain(`Kit total`);
      expect(text).toContain(recCost);
      expect(text).not.toMatch(/yagi-5-element|collinear-fibreglass|low-loss-half-inch|stake-1-5m/);
      expect(text).not.toMatch(/\d{4}-\d\d-\d\dT\d\d:\d\d/);
      const overflow = await sheet.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
      expect(overflow).toBeLessThanOrEqual(0);
      await screenshot(sheet, 'field-visit-sheet-390', true);
      sheetWatch.assertClean();
    } finally {
      await phone.close();
    }
    watch.assertClean();
  }, 240_000);
});
