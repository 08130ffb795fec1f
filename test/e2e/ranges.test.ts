// One rule per physical input: the forms take their limits from GET /client-settings (the
// API's own FIELD_RANGES), so typing the API's limits into a form gives the API's answer.
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openSession, type Session } from './harness.ts';

let session: Session;
let page: Page;
let planId = '';

beforeAll(async () => {
  // Signed in with a planner token the CLI issues (exchanged for the cookie), on the demo plan.
  session = await openSession({ plan: 'demo', signIn: 'token', role: 'planner', pageTimeoutMs: 30_000 });
  ({ page, planId } = session);
}, 240_000);

afterAll(async () => {
  await session?.close();
});

type Range = { min: number; max: number; unit: string };

describe('field ranges: forms and API accept the same numbers (chromium)', () => {
  it('the coverage form uses the API ranges; the API limits typed into it pass, one step beyond is refused by both', async () => {
    await page.waitForSelector('#coverage-rx-height');
    expect(planId).not.toBe('');
    const ranges = (await page.evaluate(async () => (await (await fetch('/api/v1/client-settings')).json()).ranges)) as Record<string, Range>;
    const fields: Array<[string, string]> = [
      ['#coverage-rx-height', 'nodeAntennaHeightAglM'],
      ['#coverage-tx-power', 'nodeTxPowerDbm'],
      ['#coverage-feedline-length', 'nodeFeedlineLengthM'],
      ['#coverage-radius', 'coverageRadiusKm'],
      ['#coverage-margin', 'targetMarginDb'],
    ];
    for (const [selector, name] of fields) {
      const input = page.locator(selector);
      expect(Number(await input.getAttribute('min')), `${selector} min`).toBe(ranges[name].min);
      expect(Number(await input.getAttribute('max')), `${selector} max`).toBe(ranges[name].max);
    }
    // The API accepts a node at the limits and refuses one beyond them, naming the field.
    const post = (body: Record<string, unknown>) =>
      page.evaluate(
        async ([p, b]) => {
          const r = await fetch(`/api/v1/plans/${p}/nodes`, { method: 'POST', headers: { 'content-type': 'application/json', 'x-earshot-request': '1' }, body: JSON.stringify(b) });
          return { status: r.status, body: (await r.json()) as { error?: { message: string } } };
        },
        [planId, body] as const,
      );
    const base = { name: 'Range probe', deviceType: 'probe', lat: 44.33, lon: -118.15 };
    const h = ranges.nodeAntennaHeightAglM;
    const p = ranges.nodeTxPowerDbm;
    expect((await post({ ...base, antennaHeightAglM: h.max, txPowerDbm: p.max })).status).toBe(201);
    expect((await post({ ...base, antennaHeightAglM: h.min, txPowerDbm: p.min })).status).toBe(201);
    const tooHigh = await post({ ...base, antennaHeightAglM: h.max + 1 });
    expect(tooHigh.status).toBe(400);
    expect(tooHigh.body.error?.message).toMatch(/antennaHeightAglM/);
    expect((await post({ ...base, txPowerDbm: p.max + 1 })).status).toBe(400);
    // The form: one step beyond is refused before anything is sent, naming the field.
    await page.locator('#coverage-rx-height').fill(String(h.max + 1));
    await page.locator('#coverage-start').click();
    await expect.poll(async () => (await page.locator('#coverage-run').textContent()) ?? '').toContain(`Node antenna height (m): a number from ${h.min} to ${h.max}`);
    await page.locator('#coverage-rx-height').fill(String(h.max));
    await page.locator('#coverage-tx-power').fill(String(p.max + 1));
    await page.locator('#coverage-start').click();
    await expect.poll(async () => (await page.locator('#coverage-run').textContent()) ?? '').toMatch(/Node transmit power \(dBm\)/);
  }, 240_000);
});
