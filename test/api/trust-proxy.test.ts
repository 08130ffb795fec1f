// The session cookie is `Secure` when the request came over TLS: directly, or through a proxy
// we were told to trust (EARSHOT_TRUST_PROXY) that says so in X-Forwarded-Proto. Without that
// setting the header is anybody's to send and is ignored (and the client address is the peer's).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from '../helpers/test-app.ts';

async function signInCookie(t: TestApp, headers: Record<string, string>): Promise<string> {
  const answer = await t.app.inject({ method: 'POST', url: '/signin', headers: { 'x-earshot-request': '1', 'content-type': 'application/json', ...headers }, payload: { token: t.tokens.viewer } });
  expect(answer.statusCode).toBeLessThan(400);
  const cookie = answer.headers['set-cookie'];
  const line = (Array.isArray(cookie) ? cookie : [cookie ?? '']).find((c) => c.startsWith('earshot_session='));
  expect(line).toBeDefined();
  return line as string;
}

describe('trustProxy and Secure cookies', () => {
  let trusting: TestApp;
  let plain: TestApp;
  beforeAll(async () => {
    trusting = await createTestApp('pglite', { env: { EARSHOT_TRUST_PROXY: 'loopback' } });
    plain = await createTestApp('pglite');
  }, 120_000);
  afterAll(async () => {
    await trusting?.close();
    await plain?.close();
  });

  it('behind a trusted TLS proxy (X-Forwarded-Proto: https) the cookie is Secure; over plain HTTP it is not', async () => {
    expect(await signInCookie(trusting, { 'x-forwarded-proto': 'https' })).toMatch(/;\s*Secure/i);
    expect(await signInCookie(trusting, {})).not.toMatch(/;\s*Secure/i);
    expect(await signInCookie(trusting, { 'x-forwarded-proto': 'https' })).toMatch(/HttpOnly/i);
  });

  it('without EARSHOT_TRUST_PROXY the forwarded header is ignored', async () => {
    expect(await signInCookie(plain, { 'x-forwarded-proto': 'https' })).not.toMatch(/;\s*Secure/i);
  });
});
