// Token verification under load and attack: verified tokens are answered from a short-lived
// cache that still sees revocations made elsewhere (another process writing revokedAt directly)
// within a second; failed authentication is throttled per client address (429 with Retry-After,
// our error shape) in memory and, with Redis, shared between processes.
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { buildApp } from '../../server/api/app.ts';
import { memoryThrottle, redisThrottle } from '../../server/api/auth-throttle.ts';
import { issueToken, tokenRecheckMs } from '../../server/db/repositories/accounts.ts';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { REDIS_URL, inCi, redisReady } from '../helpers/queue-workers.ts';

// A pinned clock in the middle of a throttle window: the fixed windows reset at each boundary, and a
// sequence of slow wrong tokens that straddled one would start counting afresh.
const clock = { ms: 1_800_030_000 };
const pinnedNow = () => clock.ms;

const wrongToken = () => `esk_${randomBytes(8).toString('hex')}_${randomBytes(32).toString('base64url')}`;

describeEngines('token cache and failed-authentication throttle', (engine) => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp(engine);
  }, 180_000);
  afterAll(async () => t?.close());

  it('a token revoked by another process (revokedAt written straight to the row) stops working within the recheck interval', async () => {
    const http = request(t.app.server);
    const user = await t.db.prisma.user.findFirstOrThrow({ where: { teamId: t.teamId, role: 'viewer' } });
    const issued = await issueToken(t.db, { userId: user.id });
    expect((await http.get('/api/v1/plans').set(bearer(issued.token))).status).toBe(200);
    expect((await http.get('/api/v1/plans').set(bearer(issued.token))).status).toBe(200); // from the cache
    await t.db.raw.query('UPDATE "ApiToken" SET "revokedAt" = now() WHERE id = $1', [issued.id]);
    await new Promise((resolve) => setTimeout(resolve, tokenRecheckMs + 200));
    expect((await http.get('/api/v1/plans').set(bearer(issued.token))).status).toBe(401);
  });

  it('a deleted token (its user removed) stops working within the recheck interval', async () => {
    const http = request(t.app.server);
    const user = await t.db.prisma.user.create({ data: { teamId: t.teamId, name: 'temp installer', role: 'installer' } });
    const issued = await issueToken(t.db, { userId: user.id });
    expect((await http.get('/api/v1/plans').set(bearer(issued.token))).status).toBe(200);
    await t.db.prisma.user.delete({ where: { id: user.id } });
    await new Promise((resolve) => setTimeout(resolve, tokenRecheckMs + 200));
    expect((await http.get('/api/v1/plans').set(bearer(issued.token))).status).toBe(401);
  });

  it('after the allowed number of wrong tokens, an address gets 429 with Retry-After; missing tokens and cached good ones are not throttled', async () => {
    const app = await buildApp({ db: t.db, config: t.config, logger: false, authThrottle: memoryThrottle({ maxFailures: 5, windowMs: 60_000, now: pinnedNow }) });
    await app.ready();
    try {
      const http = request(app.server);
      expect((await http.get('/api/v1/plans').set(bearer(t.tokens.viewer))).status).toBe(200); // cached from here on
      const statuses: number[] = [];
      for (let i = 0; i < 8; i++) statuses.push((await http.get('/api/v1/plans').set(bearer(wrongToken()))).status);
      expect(statuses).toEqual([401, 401, 401, 401, 401, 429, 429, 429]);
      const throttled = await http.get('/api/v1/plans').set(bearer(wrongToken()));
      expect(throttled.status).toBe(429);
      expect(Number(throttled.headers['retry-after'])).toBeGreaterThan(0);
      expect(throttled.body).toEqual({ error: { code: 'rate_limited', message: expect.stringMatching(/failed sign-ins/) } });
      expect((await http.get('/api/v1/plans')).status).toBe(401); // no token: not a guess
      expect((await http.get('/api/v1/plans').set(bearer(t.tokens.viewer))).status).toBe(200);
      // The next window starts afresh: a wrong token is verified (401) again.
      clock.ms += 60_000;
      expect((await http.get('/api/v1/plans').set(bearer(wrongToken()))).status).toBe(401);
    } finally {
      await app.close();
    }
  }, 60_000);

  it('a concurrent burst of wrong tokens is cut at the limit (attempts count when they start)', async () => {
    const app = await buildApp({ db: t.db, config: t.config, logger: false, authThrottle: memoryThrottle({ maxFailures: 5, windowMs: 60_000, now: pinnedNow }) });
    await app.ready();
    try {
      const http = request(app.server);
      const answers = await Promise.all(Array.from({ length: 20 }, () => http.get('/api/v1/plans').set(bearer(wrongToken()))));
      const counts = answers.reduce<Record<number, number>>((acc, answer) => ({ ...acc, [answer.status]: (acc[answer.status] ?? 0) + 1 }), {});
      expect(counts).toEqual({ 401: 5, 429: 15 });
    } finally {
      await app.close();
    }
  }, 60_000);
});

describe.skipIf(!redisReady && !inCi)('the throttle through Redis is shared between processes', () => {
  it('failures counted by one API process throttle the same address in another', async () => {
    const prefix = `earshot-test-${randomBytes(4).toString('hex')}:`;
    const a = redisThrottle(REDIS_URL, prefix, { maxFailures: 3, windowMs: 60_000, now: pinnedNow });
    const b = redisThrottle(REDIS_URL, prefix, { maxFailures: 3, windowMs: 60_000, now: pinnedNow });
    try {
      for (let i = 0; i < 3; i++) expect((await a.begin('198.51.100.7')).allowed).toBe(true);
      expect((await b.begin('198.51.100.7')).allowed).toBe(false);
      expect((await b.begin('198.51.100.8')).allowed).toBe(true); // another address is not affected
      await a.succeeded('198.51.100.7');
      expect((await b.begin('198.51.100.7')).allowed).toBe(true);
    } finally {
      await a.close();
      await b.close();
    }
  });
});
