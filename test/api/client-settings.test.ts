// GET /api/v1/client-settings: the online base layer is null unless EARSHOT_BASE_LAYER_URL is
// set; when set, the configured template is handed to the map as is. The band plans and
// propagation methods it lists are accepted by PATCH /plans/:id. Signed-in roles only;
// the route is listed in the OpenAPI document with its response schema.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

describe('client settings API [pglite]', () => {
  const template = 'https://tiles.example.invalid/{z}/{x}/{y}.png';
  let plain: TestApp;
  let configured: TestApp;
  beforeAll(async () => {
    [plain, configured] = await Promise.all([createTestApp('pglite'), createTestApp('pglite', { env: { EARSHOT_BASE_LAYER_URL: template } })]);
  }, 120_000);
  afterAll(async () => {
    await Promise.all([plain?.close(), configured?.close()]);
  });

  it('without EARSHOT_BASE_LAYER_URL: onlineBaseLayer is null (offline map) for every role', async () => {
    for (const who of ['planner', 'installer', 'viewer'] as const) {
      const response = await request(plain.app.server).get('/api/v1/client-settings').set(bearer(plain.tokens[who]));
      expect(response.status, who).toBe(200);
      expect(response.body.onlineBaseLayer).toBeNull();
    }
  });

  it('with EARSHOT_BASE_LAYER_URL: the configured URL template, unchanged', async () => {
    const response = await request(configured.app.server).get('/api/v1/client-settings').set(bearer(configured.tokens.viewer));
    expect(response.status).toBe(200);
    expect(response.body.onlineBaseLayer).toEqual({ urlTemplate: template });
    // The same origin is the one the CSP opens for images.
    expect(response.headers['content-security-policy']).toContain('https://tiles.example.invalid');
  });

  it('lists the band plans and propagation methods PATCH /plans/:id accepts', async () => {
    const settings = await request(plain.app.server).get('/api/v1/client-settings').set(bearer(plain.tokens.planner));
    expect(settings.status).toBe(200);
    const ids = (settings.body.bandPlans as Array<{ id: string; name: string }>).map((b) => b.id);
    expect(ids).toEqual(expect.arrayContaining(['us-902-928', 'eu-863-870']));
    expect(settings.body.propagationMethods).toContain('p1812');
    // Every listed value is accepted by the plan PATCH (and an unlisted band plan is refused).
    const http = request(plain.app.server);
    const created = await http.post('/api/v1/plans').set(bearer(plain.tokens.planner)).send({ name: 'Settings choices plan' });
    expect(created.status).toBe(201);
    let version = created.body.version as number;
    for (const bandPlanId of ids) {
      const r = await http.patch(`/api/v1/plans/${created.body.id}`).set(bearer(plain.tokens.planner)).send({ bandPlanId, version });
      expect(r.status, bandPlanId).toBe(200);
      version = r.body.version;
    }
    for (const propagationMethod of settings.body.propagationMethods as string[]) {
      const r = await http.patch(`/api/v1/plans/${created.body.id}`).set(bearer(plain.tokens.planner)).send({ propagationMethod, version });
      expect(r.status, propagationMethod).toBe(200);
      version = r.body.version;
    }
    const bad = await http.patch(`/api/v1/plans/${created.body.id}`).set(bearer(plain.tokens.planner)).send({ bandPlanId: 'mars-433', version });
    expect(bad.status).toBe(400);
  });

  it('refuses anonymous callers with 401', async () => {
    const response = await request(configured.app.server).get('/api/v1/client-settings');
    expect(response.status).toBe(401);
    expect(response.body.error.code).toBe('unauthorized');
  });

  it('is in the OpenAPI document under the client tag with a response schema', async () => {
    const response = await request(plain.app.server).get('/api/v1/openapi.json');
    expect(response.status).toBe(200);
    const operation = response.body.paths['/api/v1/client-settings']?.get;
    expect(operation?.tags).toEqual(['client']);
    expect(operation?.responses?.['200']?.content?.['application/json']?.schema?.properties).toHaveProperty('onlineBaseLayer');
  });
});
