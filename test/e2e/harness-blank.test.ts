// The e2e harness's other set-up: a new blank plan of the demo team, signed in with a planner
// token the CLI issues (exchanged for the session cookie), on a phone-sized page.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { openSession, type Session } from './harness.ts';

let session: Session;

beforeAll(async () => {
  session = await openSession({ plan: 'blank', signIn: 'token', role: 'planner', viewport: { width: 390, height: 844 } });
}, 300_000);

afterAll(async () => {
  await session?.close();
});

it('opens a new blank plan, signed in by a CLI token (the session cookie), with nothing in it', async () => {
  const { page, planId, watch } = session;
  expect(page.url()).toContain(`#/plan/${encodeURIComponent(planId)}`);
  const answer = await page.evaluate(async (id) => {
    const plan = (await (await fetch(`/api/v1/plans/${id}`)).json()) as { name: string };
    const nodes = (await (await fetch(`/api/v1/plans/${id}/nodes`)).json()) as { total: number };
    const me = (await (await fetch('/api/v1/me')).json()) as { role: string };
    return { name: plan.name, nodes: nodes.total, role: me.role };
  }, planId);
  expect(answer).toEqual({ name: 'Blank plan (e2e)', nodes: 0, role: 'planner' });
  await expect.poll(async () => (await page.locator('body').textContent()) ?? '').toContain('Blank plan (e2e)');
  watch.assertClean();
}, 120_000);
