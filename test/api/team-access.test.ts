// Team access over HTTP: invitations (one-time link + QR code, planners only, audited with the
// user), POST /signin exchanging a pasted API token or a one-time token for the session cookie
// (the API token stays valid, the one-time token is used up, a foreign page is refused),
// sign-out revoking the session on the server, and the team-access list.
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import request from 'supertest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

function sessionCookie(setCookie: string[] | string | undefined): string {
  const list = Array.isArray(setCookie) ? setCookie : setCookie ? [setCookie] : [];
  const cookie = list.find((c) => c.startsWith('earshot_session='));
  expect(cookie).toBeDefined();
  expect(cookie).toMatch(/HttpOnly/i);
  expect(cookie).toMatch(/SameSite=Strict/i);
  return (cookie as string).split(';')[0];
}

describeEngines('team access', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  beforeAll(async () => {
    t = await createTestApp(engine);
    http = request(t.app.server);
  });
  afterAll(async () => t?.close());
  beforeEach(async () => t.reset());

  it('a planner invites a teammate: a one-time link for a new user with the role, a QR code, an audit entry', async () => {
    const answer = await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).set('Host', 'field.example:8443').send({ role: 'installer', userName: 'Ana (field)', expiresInDays: 3 });
    expect(answer.status).toBe(201);
    expect(answer.body.link).toBe(`http://field.example:8443/signin?token=${encodeURIComponent(answer.body.token)}`);
    expect(answer.body.qrSvg).toMatch(/^<svg[^>]*xmlns="http:\/\/www.w3.org\/2000\/svg"/);
    expect(answer.body).toMatchObject({ userName: 'Ana (field)', role: 'installer' });
    const days = (new Date(answer.body.expiresAt).getTime() - Date.now()) / 86_400_000;
    expect(days).toBeGreaterThan(2.99);
    expect(days).toBeLessThan(3.01);
    const audit = await t.db.prisma.auditEntry.findFirstOrThrow({ where: { action: 'invite', entityId: answer.body.id } });
    expect(audit.detail).toMatchObject({ role: 'installer', name: 'Ana (field)' });
    // Viewers and installers cannot invite; bad input names the field.
    expect((await http.post('/api/v1/invitations').set(bearer(t.tokens.installer)).send({ role: 'viewer' })).status).toBe(403);
    const bad = await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).send({ role: 'admin', expiresInDays: 90 });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toMatch(/role/);
    // An existing user of another role is refused, and another team's user is 404.
    const viewer = await t.db.prisma.user.findFirstOrThrow({ where: { teamId: t.teamId, role: 'viewer' } });
    const mismatch = await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).send({ role: 'planner', userId: viewer.id });
    expect(mismatch.status).toBe(400);
    expect(mismatch.body.error.message).toMatch(/^role: /);
    const foreign = await t.db.prisma.user.findFirstOrThrow({ where: { NOT: { teamId: t.teamId } } });
    expect((await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).send({ role: foreign.role, userId: foreign.id })).status).toBe(404);

    // The link signs in once.
    const path = new URL(answer.body.link).pathname + new URL(answer.body.link).search;
    const first = await http.get(path);
    expect(first.status).toBe(303);
    const cookie = sessionCookie(first.headers['set-cookie']);
    const me = await http.get('/api/v1/me').set('Cookie', cookie);
    expect(me.body).toMatchObject({ user: { name: 'Ana (field)' }, role: 'installer' });
    expect((await http.get(path)).status).toBe(401);
  });

  it('POST /signin exchanges a pasted API token for a session cookie; the token stays valid; sign-out ends only the session', async () => {
    const refused = await http.post('/signin').send({ token: t.tokens.viewer });
    expect(refused.status).toBe(403); // no X-Earshot-Request header: a foreign page's form
    const wrong = await http.post('/signin').set('X-Earshot-Request', '1').send({ token: `esk_0000000000000000_${'a'.repeat(43)}` });
    expect(wrong.status).toBe(401);
    expect(wrong.body.error.message).toMatch(/^token: /);
    const empty = await http.post('/signin').set('X-Earshot-Request', '1').send({ token: '' });
    expect(empty.status).toBe(400);

    const exchanged = await http.post('/signin').set('X-Earshot-Request', '1').send({ token: t.tokens.viewer });
    expect(exchanged.status).toBe(204);
    const cookie = sessionCookie(exchanged.headers['set-cookie']);
    expect(cookie).not.toContain(t.tokens.viewer);
    expect((await http.get('/api/v1/me').set('Cookie', cookie)).body.role).toBe('viewer');
    const signout = await http.post('/api/v1/auth/signout').set('Cookie', cookie).set('X-Earshot-Request', '1');
    expect(signout.status).toBe(204);
    expect((await http.get('/api/v1/me').set('Cookie', cookie)).status).toBe(401);
    // The pasted API token itself is untouched.
    expect((await http.get('/api/v1/me').set(bearer(t.tokens.viewer))).status).toBe(200);
    const audit = await t.db.prisma.auditEntry.findMany({ where: { action: { in: ['signin', 'signout'] } }, orderBy: { at: 'asc' } });
    expect(audit.map((a) => a.action)).toEqual(['signin', 'signout']);
    expect(audit[0].detail).toMatchObject({ via: 'api token' });
  });

  it('POST /signin also takes a one-time token (a pasted invitation link), once', async () => {
    const invitation = (await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).send({ role: 'viewer', userName: 'Vic' })).body as { token: string };
    const first = await http.post('/signin').set('X-Earshot-Request', '1').send({ token: invitation.token });
    expect(first.status).toBe(204);
    sessionCookie(first.headers['set-cookie']);
    expect((await http.post('/signin').set('X-Earshot-Request', '1').send({ token: invitation.token })).status).toBe(401);
    // A one-time token is never a bearer token.
    expect((await http.get('/api/v1/me').set(bearer(invitation.token))).status).toBe(401);
  });

  it('the team-access list shows members with their live tokens, sessions and unused links (planners only); revoking works', async () => {
    const invitation = (await http.post('/api/v1/invitations').set(bearer(t.tokens.planner)).send({ role: 'viewer', userName: 'Pending Pat' })).body as { id: string };
    expect((await http.get('/api/v1/team/access').set(bearer(t.tokens.viewer))).status).toBe(403);
    const list = await http.get('/api/v1/team/access').set(bearer(t.tokens.planner));
    expect(list.status).toBe(200);
    const pat = list.body.items.find((m: { name: string }) => m.name === 'Pending Pat');
    expect(pat).toMatchObject({ role: 'viewer', access: [{ id: invitation.id, kind: 'sign-in-link', current: false }] });
    const planner = list.body.items.find((m: { role: string; access: Array<{ current: boolean }> }) => m.role === 'planner' && m.access.some((a) => a.current));
    expect(planner).toBeDefined();
    // Other teams' members are not listed.
    const names = list.body.items.map((m: { name: string }) => m.name);
    const foreign = await t.db.prisma.user.findMany({ where: { NOT: { teamId: t.teamId } } });
    for (const user of foreign) expect(names).not.toContain(user.name);
    expect((await http.delete(`/api/v1/tokens/${invitation.id}`).set(bearer(t.tokens.planner))).status).toBe(204);
    const after = await http.get('/api/v1/team/access').set(bearer(t.tokens.planner));
    expect(after.body.items.find((m: { name: string }) => m.name === 'Pending Pat').access).toEqual([]);
  });
});

describe('signInLink', () => {
  it('builds the link from the public base URL', async () => {
    const { publicBaseUrl, signInLink } = await import('../../server/app/team-access.ts');
    expect(signInLink(publicBaseUrl({ publicBaseUrl: 'https://plan.example/', host: '0.0.0.0' }, 8080), 'esk_a_b')).toBe('https://plan.example/signin?token=esk_a_b');
    expect(publicBaseUrl({ publicBaseUrl: undefined, host: '0.0.0.0' }, 8080)).toBe('http://localhost:8080');
  });
});
