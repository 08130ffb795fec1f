// Every route of the published OpenAPI document declares what it answers: each operation has a
// 2xx application/json response schema that describes something (properties, items or variants),
// unless it is listed below as answering no JSON (204, a file download, a PNG tile or a server-sent
// event stream), with what it answers instead. So a new route without a response schema fails here,
// and the web client's types (web/src/generated/api-schema.ts) cover every JSON route.
// The document is the one GET /api/v1/openapi.json serves, built in memory (scripts/api-schema.ts).
import { beforeAll, expect, it } from 'vitest';
import { openApiDocument } from '../../scripts/api-schema.ts';

interface JsonSchema {
  type?: string | string[];
  properties?: Record<string, unknown>;
  items?: unknown;
  anyOf?: unknown[];
  oneOf?: unknown[];
  $ref?: string;
}
interface Operation {
  responses?: Record<string, { content?: Record<string, { schema?: JsonSchema }> }>;
}
type OpenApi = { paths: Record<string, Record<string, Operation>>; components?: { schemas?: Record<string, JsonSchema> } };

/** Operations that answer no JSON body on success, with what they answer instead. */
const NOT_JSON: Record<string, string> = {
  'POST /auth/signout': '204',
  'DELETE /tokens/{id}': '204',
  'DELETE /kit/antenna-designs/{id}': '204',
  'DELETE /kit/feedlines/{id}': '204',
  'DELETE /kit/masts/{id}': '204',
  'DELETE /plans/{planId}': '204',
  'DELETE /plans/{planId}/sites/{id}': '204',
  'DELETE /plans/{planId}/gateways/{id}': '204',
  'DELETE /plans/{planId}/nodes/{id}': '204',
  'DELETE /plans/{planId}/terrain/{layerId}': '204',
  'GET /plans/{planId}/report.pdf': 'application/pdf download',
  'GET /plans/{planId}/bom.csv': 'text/csv download',
  'GET /plans/{planId}/export.csv': 'text/csv download',
  'GET /plans/{planId}/export.geojson': 'application/geo+json download',
  'GET /plans/{planId}/export.kml': 'application/vnd.google-earth.kml+xml download',
  'GET /plans/{planId}/terrain/tiles/{z}/{x}/{y}.png': 'image/png',
  'GET /plans/{planId}/coverage/{runId}/tiles/{z}/{x}/{y}': 'image/png',
  'GET /plans/{planId}/coverage/{runId}/events': 'text/event-stream',
  'GET /plans/{planId}/siting/{runId}/events': 'text/event-stream',
};

let doc: OpenApi;
beforeAll(async () => {
  doc = (await openApiDocument()) as unknown as OpenApi;
}, 180_000);

function resolve(schema: JsonSchema | undefined): JsonSchema | undefined {
  if (schema?.$ref) return resolve(doc.components?.schemas?.[schema.$ref.split('/').pop() as string]);
  return schema;
}

/** True when the schema says something about the answer (not an empty `{}` that any value passes). */
function describesSomething(schema: JsonSchema | undefined): boolean {
  const s = resolve(schema);
  if (!s) return false;
  return (s.properties !== undefined && Object.keys(s.properties).length > 0) || s.items !== undefined || (s.anyOf?.length ?? 0) > 0 || (s.oneOf?.length ?? 0) > 0;
}

const operations = () =>
  Object.entries(doc.paths).flatMap(([fullPath, methods]) =>
    Object.entries(methods).map(([method, operation]) => ({ key: `${method.toUpperCase()} ${fullPath.replace(/^\/api\/v1/, '')}`, operation })),
  );

it('every JSON operation declares a 2xx application/json response schema that describes its answer', () => {
  const all = operations();
  // The routes this contract was written for are among them (a path typo would otherwise pass).
  for (const must of ['GET /plans/{planId}/nodes/{nodeId}/links', 'GET /plans/{planId}/nodes/{nodeId}/check', 'POST /plans/{planId}/nodes/{nodeId}/recommend', 'GET /plans/{planId}/nodes/{nodeId}/visit-sheet', 'GET /plans/{planId}/recommend/{runId}', 'POST /plans/{planId}/readings/import']) {
    expect(all.map((o) => o.key)).toContain(must);
  }
  expect(all.length).toBeGreaterThan(90);
  const missing: string[] = [];
  for (const { key, operation } of all) {
    if (NOT_JSON[key]) continue;
    const success = Object.entries(operation.responses ?? {}).filter(([code]) => /^2\d\d$/.test(code));
    if (!success.some(([, response]) => describesSomething(response.content?.['application/json']?.schema))) missing.push(key);
  }
  expect(missing, 'routes answering JSON without a response schema (add `response: { 200: … }` to the route)').toEqual([]);
});

it('the routes listed as answering no JSON exist and declare no JSON answer', () => {
  const byKey = new Map(operations().map((o) => [o.key, o.operation]));
  for (const [key, answer] of Object.entries(NOT_JSON)) {
    const operation = byKey.get(key);
    expect(operation, `${key} is listed but no longer exists`).toBeDefined();
    const json = Object.entries(operation?.responses ?? {}).find(([code, response]) => /^2\d\d$/.test(code) && response.content?.['application/json']);
    expect(json, `${key} is listed as ${answer} but declares a JSON answer (remove it from NOT_JSON)`).toBeUndefined();
  }
});
