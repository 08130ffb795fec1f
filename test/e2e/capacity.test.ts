// The network-load view in a real browser (Debian chromium via playwright-core) against the
// real server with the demo plan: per-gateway load bars per SF and channel, the fleet figures
// the server computed, the what-if of a higher reporting rate, the simulation, and the
// delivery-with-load figures beside the link-only ones in the fleet table and the summary.
// Every step fails on a console error or a request that leaves the local server.
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { accessibilityProblems, openSession, screenshot, type Guard, type RunningServer, type Session } from './harness.ts';

let session: Session;
let server: RunningServer;
let page: Page;
let watch: Guard;
let planId = '';

beforeAll(async () => {
  // Signed in by the start-up link, on the demo plan.
  session = await openSession({ plan: 'demo', signIn: 'link' });
  ({ server, page, watch, planId } = session);
}, 300_000);

afterAll(async () => {
  await session?.close();
});

beforeEach(() => {
  watch?.reset();
});

const percentOf = (text: string): number => Number(/([\d.]+)\s*%/.exec(text)?.[1] ?? Number.NaN);

interface CapacityAnswer {
  totals: { meanDeliveryRatio: number; meanLinkDeliveryProbability: number; overBudgetNodes: number; nodes: number; transmissions: number | null };
  gateways: Array<{ gatewayName: string; perSf: unknown[]; offeredLoadErlangPerChannel: number[]; offeredLoadErlang: number }>;
  channels: number;
}

async function capacityFromApi(query: string): Promise<CapacityAnswer> {
  return page.evaluate(async ([p, q]) => (await (await fetch(`/api/v1/plans/${p}/capacity?${q}`)).json()) as CapacityAnswer, [planId, query]);
}

describe('network load view (chromium)', () => {
  it('opens from the plan menu and shows per-gateway load bars per SF and channel with the server’s figures', async () => {
    expect(page.url()).toContain(`#/plan/${encodeURIComponent(planId)}`);
    await page.getByRole('link', { name: 'Network load' }).click();
    await page.getByRole('heading', { name: 'Network load', level: 1 }).waitFor();
    await page.locator('#capacity-totals').waitFor();
    const api = await capacityFromApi('model=capture');
    expect(api.totals.nodes).toBeGreaterThan(0);
    const shown = percentOf(await page.locator('#capacity-mean-delivery').innerText());
    expect(Math.abs(shown - api.totals.meanDeliveryRatio * 100)).toBeLessThan(0.051);
    expect(await page.locator('section.capacity-gateway').count()).toBe(api.gateways.length);
    // One bar per SF row and one per channel, with the erlang figure written on it.
    const first = page.locator('section.capacity-gateway').first();
    expect(await first.locator('tbody tr').count()).toBe(api.gateways[0].perSf.length);
    expect(await first.locator('.channel-bars li').count()).toBe(api.channels);
    const label = (await first.locator('.channel-bars .load-bar').first().getAttribute('aria-label')) ?? '';
    expect(label).toMatch(/channel 1: [\d.]+ erlang/);
    expect(Number(/([\d.]+) erlang/.exec(label)?.[1])).toBeCloseTo(api.gateways[0].offeredLoadErlangPerChannel[0], 3);
    await page.locator('#capacity-over').waitFor();
    expect(await page.locator('.cautions').innerText()).toMatch(/not legal advice/);
    expect(await accessibilityProblems(page, 'main')).toEqual([]);
    await screenshot(page, 'capacity-01-view', true);
    watch.assertClean();
  }, 300_000);

  it('what-if: ten times the reporting rate raises the load and lowers the delivery ratio', async () => {
    const before = percentOf(await page.locator('#capacity-mean-delivery').innerText());
    await page.locator('#capacity-rate').fill('10');
    await page.getByRole('button', { name: 'Compute' }).click();
    await page.locator('#capacity-status', { hasText: 'Done' }).waitFor();
    await page.waitForFunction((b) => {
      const el = document.querySelector('#capacity-mean-delivery');
      const v = Number(/([\d.]+)\s*%/.exec(el?.textContent ?? '')?.[1]);
      return Number.isFinite(v) && v !== b;
    }, before);
    const after = percentOf(await page.locator('#capacity-mean-delivery').innerText());
    const api = await capacityFromApi('model=capture&rateScale=10');
    expect(after).toBeLessThan(before);
    expect(Math.abs(after - api.totals.meanDeliveryRatio * 100)).toBeLessThan(0.051);
    await screenshot(page, 'capacity-02-what-if', true);
    watch.assertClean();
  }, 300_000);

  it('the simulation runs from the view and reports the frames it simulated', async () => {
    await page.locator('#capacity-rate').fill('1');
    await page.locator('#capacity-model').selectOption('simulate');
    await page.getByRole('button', { name: 'Compute' }).click();
    await page.locator('#capacity-totals', { hasText: 'Frames simulated' }).waitFor();
    expect(await page.locator('#capacity-totals').innerText()).toMatch(/\d+ in 3600 s \(seed 1\)/);
    watch.assertClean();
  }, 300_000);

  it('the fleet table and the summary show delivery with network load beside the link-only figure', async () => {
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/fleet`);
    await page.locator('#fleet-table').waitFor();
    await page.locator('#fleet-load-note', { hasText: 'link-only figure' }).waitFor();
    const headers = await page.locator('#fleet-table thead th').allInnerTexts();
    const link = headers.findIndex((t) => t.startsWith('Delivery') && !t.includes('load'));
    const load = headers.findIndex((t) => t.includes('Delivery with network load'));
    expect(load).toBe(link + 1);
    const cells = await page.locator('#fleet-table tbody td[data-col="delivery-load"]').allInnerTexts();
    expect(cells.length).toBeGreaterThan(0);
    expect(cells.every((c) => /%$/.test(c.trim()))).toBe(true);
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}/summary`);
    await page.locator('#summary-delivery-load').waitFor();
    const api = await capacityFromApi('model=capture');
    expect(Math.abs(percentOf(await page.locator('#summary-delivery-load').innerText()) - api.totals.meanDeliveryRatio * 100)).toBeLessThan(0.051);
    await screenshot(page, 'capacity-03-summary', true);
    watch.assertClean();
  }, 300_000);
});
