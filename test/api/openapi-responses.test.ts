// The published OpenAPI document declares what the foundation routes answer: every JSON operation
// of terrain, coverage, kit, audit, auth (me/tokens), health, plans, sites and nodes has a 2xx
// response schema with properties and (except health) the shared 4xx error shape. Operations that
// answer no JSON (204, PNG tiles, server-sent events) are listed by name below, so a new route
// without a schema fails here. A second check reads real answers and finds every key they hold
// among the schema's properties (a response schema strips keys it does not list).
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { createCoverageRun } from '../../server/db/repositories/coverage-runs.ts';

interface JsonSchema {
  type?: string | string[];
  properties?: Record<string, JsonSchema>;
  items?: JsonSchema;
  anyOf?: JsonSchema[];
  $ref?: string;
}
interface Operation {
  responses?: Record<string, { content?: Record<string, { schema?: JsonSchema }> }>;
}
type OpenApi = { paths: Record<string, Record<string, Operation>>; components?: { schemas?: Record<string, JsonSchema> } };

/** Path prefixes (after /api/v1) whose operations this test covers. */
const COVERED = [/^\/plans\/\{planId\}\/terrain/, /^\/plans\/\{planId\}\/coverage/, /^\/coverage\//, /^\/kit\//, /^\/audit$/, /^\/me$/, /^\/tokens/, /^\/auth\//, /^\/health$/, /^\/plans(\/\{planId\})?$/, /^\/plans\/\{planId\}\/sites/, /^\/plans\/\{planId\}\/nodes(\/\{id\})?$/, /^\/plans\/\{planId\}\/capacity$/];

/** Operations that answer no JSON body on success, with what they answer instead. */
const NOT_JSON: Record<string, string> = {
  'DELETE /plans/{planId}/terrain/{layerId}': '204',
  'GET /plans/{planId}/terrain/tiles/{z}/{x}/{y}.png': 'image/png',
  'GET /plans/{planId}/coverage/{runId}/events': 'text/event-stream',
  'GET /plans/{planId}/coverage/{runId}/tiles/{z}/{x}/{y}': 'image/png',
  'DELETE /kit/antenna-designs/{id}': '204',
  'DELETE /kit/feedlines/{id}': '204',
  'DELETE /kit/masts/{id}': '204',
  'POST /auth/signout': '204',
  'DELETE /tokens/{id}': '204',
  'DELETE /plans/{planId}': '204',
  'DELETE /plans/{planId}/sites/{id}': '204',
  'DELETE /plans/{planId}/nodes/{id}': '204',
};

function resolve(doc: OpenApi, schema: JsonSchema | undefined): JsonSchema | undefined {
  if (schema?.$ref) return resolve(doc, doc.components?.schemas?.[schema.$ref.split('/').pop() as string]);
  return schema;
}

function jsonSchemaOf(doc: OpenApi, operation: Operation, status: (code: string) => boolean): JsonSchema | undefined {
  for (const [code, response] of Object.entries(operation.responses ?? {})) {
    if (!status(code)) continue;
    const schema = resolve(doc, response.content?.['application/json']?.schema);
    if (schema) return schema;
  }
  return undefined;
}

/** Keys of `value` (recursively through objects and the first array item) missing from `schema`'s properties. */
function unlisted(doc: OpenApi, schema: JsonSchema | undefined, value: unknown, path = ''): string[] {
  const s = resolve(doc, schema);
  if (!s || value === null || typeof value !== 'object') return [];
  const variants = s.anyOf ? s.anyOf.map((v) => resolve(doc, v)) : [s];
  if (Array.isArray(value)) {
    const arraySchema = variants.find((v) => v?.items);
    return value.length > 0 && arraySchema ? unlisted(doc, arraySchema.items, value[0], `${path}[0]`) : [];
  }
  const objectSchema = variants.find((v) => v?.properties);
  if (!objectSchema?.properties) return [`${path || '(root)'}: no properties`];
  const missing: string[] = [];
  for (const [key, child] of Object.entries(value as Record<string, unknown>)) {
    const childSchema = objectSchema.properties[key];
    if (!childSchema) missing.push(`${path}.${key}`);
    // Free-form JSON columns (no type in the schema) are not descended into.
    else if (resolve(doc, childSchema)?.type !== undefined || resolve(doc, childSchema)?.anyOf) missing.push(...unlisted(doc, childSchema, child, `${path}.${key}`));
  }
  return missing;
}

describeEngines('OpenAPI response schemas', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  let doc: OpenApi;
  beforeAll(async () => {
    t = await createTestApp(engine);
    http = request(t.app.server);
    const response = await http.get('/api/v1/openapi.json');
    expect(response.status).toBe(200);
    doc = response.body as OpenApi;
  });
  afterAll(async () => t?.close());

  const covered = () =>
    Object.entries(doc.paths).flatMap(([fullPath, methods]) => {
      const path = fullPath.replace(/^\/api\/v1/, '');
      if (!COVERED.some((pattern) => pattern.test(path))) return [];
      return Object.entries(methods).map(([method, operation]) => ({ key: `${method.toUpperCase()} ${path}`, path, operation }));
    });

  it('every covered JSON operation has a 2xx schema with properties and the 4xx error shape; the rest are the listed non-JSON ones', () => {
    const operations = covered();
    // All the routes named in the task are present (a typo in COVERED would otherwise pass silently).
    for (const must of ['GET /plans/{planId}/terrain', 'POST /plans/{planId}/coverage', 'GET /coverage/legend', 'GET /kit/masts', 'GET /audit', 'GET /me', 'POST /tokens', 'GET /health']) {
      expect(operations.map((o) => o.key)).toContain(must);
    }
    expect(operations.length).toBeGreaterThan(35);
    const problems: string[] = [];
    for (const { key, path, operation } of operations) {
      const success = jsonSchemaOf(doc, operation, (code) => /^2\d\d$/.test(code));
      if (NOT_JSON[key]) {
        if (success) problems.push(`${key}: listed as ${NOT_JSON[key]} but declares a JSON 2xx schema (remove it from NOT_JSON)`);
        continue;
      }
      if (!success?.properties || Object.keys(success.properties).length === 0) problems.push(`${key}: no 2xx JSON response schema with properties`);
      if (path === '/health') continue; // no sign-in, no input: its failure answer is the declared 503
      const failure = jsonSchemaOf(doc, operation, (code) => /^4(\d\d|XX)$/i.test(code));
      const inner = resolve(doc, failure?.properties?.error);
      if (!inner?.properties?.code || !inner.properties.message) problems.push(`${key}: no 4xx { error: { code, message } } schema`);
    }
    expect(problems).toEqual([]);
    // The NOT_JSON list names only operations that exist.
    for (const key of Object.keys(NOT_JSON)) expect(operations.map((o) => o.key)).toContain(key);
  });

  it('real answers hold no key their schema does not list (nothing is stripped); errors keep their shape', async () => {
    const as = bearer(t.tokens.planner);
    const plan = await http.post('/api/v1/plans').set(as).send({ name: 'OpenAPI check plan (synthetic)' });
    expect(plan.status).toBe(201);
    const planId = plan.body.id as string;
    expect((await http.post(`/api/v1/plans/${planId}/sites`).set(as).send({ name: 'Mast', lat: 49.8, lon: 6.1 })).status).toBe(201);
    const width = 40;
    const data = new Int16Array(width * width).map((_, i) => 300 + (i % width));
    const tif = Buffer.from(writeGeoTiff({ widthPx: width, heightPx: width, data, geoTransform: [290500, 30, 0, 5520500, 0, -30], epsg: 32632, noData: -32768 }));
    const layer = await http.post(`/api/v1/plans/${planId}/terrain`).set(as).set('Content-Type', 'image/tiff').send(tif);
    expect(layer.status, JSON.stringify(layer.body)).toBe(201);
    const run = await createCoverageRun(t.db, planId, { gatewayIds: ['g1'], params: { mode: 'fast', radiusKm: 1, sf: 10, targetMarginDb: 10 }, createdById: null });
    const antenna = await http.post('/api/v1/kit/antenna-designs').set(as).send({ name: 'Ground plane', kind: 'ground-plane', gainDbi: 2.1, fromMhz: 860, toMhz: 930 });
    expect(antenna.status, JSON.stringify(antenna.body)).toBe(201);
    const token = await http.post('/api/v1/tokens').set(as).send({ role: 'viewer', label: 'openapi check', expiresInDays: 2 });
    expect(token.status, JSON.stringify(token.body)).toBe(201);

    const checks: Array<[string, string, string, number]> = [
      ['get', `/plans/${planId}/terrain`, '/plans/{planId}/terrain', 200],
      ['get', `/plans/${planId}/coverage`, '/plans/{planId}/coverage', 200],
      ['get', `/plans/${planId}/coverage/${run.id}`, '/plans/{planId}/coverage/{runId}', 200],
      ['get', '/coverage/legend', '/coverage/legend', 200],
      ['get', '/kit/antenna-designs', '/kit/antenna-designs', 200],
      ['get', '/kit/feedlines', '/kit/feedlines', 200],
      ['get', '/kit/masts', '/kit/masts', 200],
      ['get', '/audit', '/audit', 200],
      ['get', '/me', '/me', 200],
      ['get', '/tokens', '/tokens', 200],
      ['get', '/health', '/health', 200],
    ];
    for (const [method, url, path, status] of checks) {
      const response = await http.get(`/api/v1${url}`).set(as);
      expect(response.status, url).toBe(status);
      if (Array.isArray(response.body.items)) expect(response.body.items.length, url).toBeGreaterThan(0);
      const schema = jsonSchemaOf(doc, doc.paths[`/api/v1${path}`][method], (code) => code === String(status));
      expect(unlisted(doc, schema, response.body), url).toEqual([]);
    }
    // Answers of writes: the upload, the new kit row and the issued token, against their 201 schemas.
    for (const [response, path, method] of [[layer, '/plans/{planId}/terrain', 'post'], [antenna, '/kit/antenna-designs', 'post'], [token, '/tokens', 'post']] as const) {
      expect(unlisted(doc, jsonSchemaOf(doc, doc.paths[`/api/v1${path}`][method], (code) => code === '201'), response.body), path).toEqual([]);
    }
    expect(token.body.token).toMatch(/\S{20,}/);
    // A 409 keeps currentVersion through the 4xx schema; a 404 keeps its code and message.
    const stale = await http.patch(`/api/v1/kit/antenna-designs/${antenna.body.id}`).set(as).send({ name: 'Renamed', version: 99 });
    expect(stale.status).toBe(409);
    expect(stale.body).toEqual({ error: { code: 'version_conflict', message: expect.any(String), currentVersion: 1 } });
    const missing = await http.get(`/api/v1/plans/${planId}/coverage/nope`).set(as);
    expect(missing.status).toBe(404);
    expect(missing.body).toEqual({ error: { code: 'not_found', message: 'coverage run not found' } });
  });
});
