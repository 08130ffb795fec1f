// Row answers list their fields and nothing else: the response schemas are not loose, so a key
// the schema does not list never reaches the client (a column added to a table stays off the
// wire until its route lists it, and then the generated web types know it).
import request from 'supertest';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import Fastify from 'fastify';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';
import { planResponse } from '../../server/api/routes/plans.ts';
import { siteResponse } from '../../server/api/routes/sites.ts';
import { gatewayResponse } from '../../server/api/routes/gateways.ts';
import { nodeResponse } from '../../server/api/routes/nodes.ts';
import { terrainLayerResponse } from '../../server/api/routes/terrain.ts';
import { coverageRunResponse } from '../../server/api/routes/coverage.ts';
import { auditEntryResponse } from '../../server/api/routes/audit.ts';
import { antennaResponse, feedlineResponse, mastResponse } from '../../server/api/routes/kit.ts';

const rowSchemas = { planResponse, siteResponse, gatewayResponse, nodeResponse, terrainLayerResponse, coverageRunResponse, auditEntryResponse, antennaResponse, feedlineResponse, mastResponse };

it('no row schema is loose, and the serializer drops a key its schema does not list', async () => {
  for (const [name, schema] of Object.entries(rowSchemas)) expect(schema.def.catchall, `${name} passes unlisted keys through`).toBeUndefined();
  const app = Fastify().withTypeProvider<ZodTypeProvider>();
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  const audit = { id: 'a1', teamId: 't1', userId: null, tokenId: null, action: 'create', entity: 'plan', entityId: 'p1', detail: {}, at: new Date(0) };
  app.get('/row', { schema: { response: { 200: auditEntryResponse } } }, async () => ({ ...audit, internalPath: '/srv/secret' }) as typeof audit);
  await app.ready();
  const body = JSON.parse((await app.inject({ method: 'GET', url: '/row' })).body) as Record<string, unknown>;
  expect(body.internalPath).toBeUndefined();
  expect(Object.keys(body).sort()).toEqual(Object.keys(auditEntryResponse.shape).sort());
  await app.close();
});

describeEngines('routes answer only listed fields', (engine) => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp(engine);
  }, 120_000);
  afterAll(async () => t?.close());

  it('plan, site and node answers hold exactly the fields of their schemas', async () => {
    const http = request(t.app.server);
    const auth = bearer(t.tokens.planner);
    const plan = await http.post('/api/v1/plans').set(auth).send({ name: 'strict answers' });
    expect(plan.status).toBe(201);
    expect(Object.keys(plan.body).sort()).toEqual(Object.keys(planResponse.shape).sort());
    const site = await http.post(`/api/v1/plans/${plan.body.id}/sites`).set(auth).send({ name: 'hill', lat: 47.1, lon: 8.1 });
    expect(site.status).toBe(201);
    expect(Object.keys(site.body).sort()).toEqual(Object.keys(siteResponse.shape).sort());
    const node = await http.post(`/api/v1/plans/${plan.body.id}/nodes`).set(auth).send({ name: 'meter 1', lat: 47.11, lon: 8.11, deviceType: 'water-meter' });
    expect(node.status).toBe(201);
    // originId is a column the node answer lists; nothing else the table holds leaks out.
    expect(Object.keys(node.body).sort()).toEqual(Object.keys(nodeResponse.shape).sort());
    const listed = await http.get(`/api/v1/plans/${plan.body.id}/nodes`).set(auth);
    expect(Object.keys(listed.body.items[0]).sort()).toEqual(Object.keys(nodeResponse.shape).sort());
  });
});
