// The web client's API types are generated from the server's OpenAPI document
// (scripts/api-schema.ts → web/src/generated/api-schema.ts, committed). This fails when the
// committed file is not what the current routes generate: run `npm run api-schema`.
import { readFileSync } from 'node:fs';
import { expect, it } from 'vitest';
import { apiSchemaPath, generateApiSchema } from '../../../scripts/api-schema.ts';

it('web/src/generated/api-schema.ts is what the current routes generate (else: npm run api-schema)', async () => {
  const fresh = await generateApiSchema();
  const committed = readFileSync(apiSchemaPath, 'utf8');
  expect(committed === fresh, 'web/src/generated/api-schema.ts is stale: run `npm run api-schema` and commit it').toBe(true);
}, 180_000);

it('the web client states no API shape by hand with a catch-all index signature', () => {
  const client = readFileSync(new URL('../../../web/src/api.ts', import.meta.url), 'utf8');
  expect(client.match(/\[key: string\]: unknown/g) ?? []).toEqual([]);
  expect(client).toMatch(/from '\.\/generated\/api-schema\.ts'/);
});
