// Authentication is decided on the route the router matched, not on the raw URL: every
// operation of /api/v1/openapi.json, reached through percent-encoded, double-slashed,
// dot-segment, case-changed and trailing-slash spellings of its path, answers 401 without a
// token (with our error shape), never 200 or 500. Requests go over a real socket with the
// path bytes exactly as written (node's http client does not normalise them).
import { request as httpRequest } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { normalisedPath } from '../../server/api/auth.ts';
import { createTestApp, type TestApp } from '../helpers/test-app.ts';

interface Answer {
  status: number;
  body: string;
}

function send(port: number, method: string, path: string, body?: string): Promise<Answer> {
  return new Promise((resolve, reject) => {
    const req = httpRequest({ host: '127.0.0.1', port, method, path, headers: body ? { 'content-type': 'application/json', 'content-length': Buffer.byteLength(body) } : {} }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (chunk: Buffer) => chunks.push(chunk));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8') }));
    });
    req.on('error', reject);
    if (body) req.write(body);
    req.end();
  });
}

const encodeChar = (c: string) => `%${c.charCodeAt(0).toString(16).padStart(2, '0')}`;

/** Spellings of one concrete path that a lenient router (or a proxy) might map onto it. */
export function variantsOf(path: string): string[] {
  const segments = path.split('/').filter(Boolean);
  const join = (parts: string[], sep = '/') => sep + parts.join(sep);
  const firstEncoded = segments.map((s) => encodeChar(s[0]) + s.slice(1));
  const allEncoded = segments.map((s) => [...s].map(encodeChar).join(''));
  const upperHex = segments.map((s) => encodeChar(s[0]).toUpperCase() + s.slice(1));
  const doubleEncoded = segments.map((s) => `%25${s.charCodeAt(0).toString(16)}${s.slice(1)}`);
  return [
    join(firstEncoded),
    join(allEncoded),
    join(upperHex),
    join(doubleEncoded),
    `/${encodeChar('a')}pi/v1/${segments.slice(2).join('/')}`,
    join(segments, '//'),
    `/${path}`,
    `/api/./v1/${segments.slice(2).join('/')}`,
    `/api/v1/zz/../${segments.slice(2).join('/')}`,
    `/api/v1/%2e/${segments.slice(2).join('/')}`,
    `/api/v1/zz/%2e%2e/${segments.slice(2).join('/')}`,
    `/api%2fv1%2f${segments.slice(2).join('%2f')}`,
    path.toUpperCase(),
    `/Api/V1/${segments.slice(2).join('/')}`,
    `${path}/`,
    `${path}?token=x`,
  ];
}

describe('normalisedPath', () => {
  it('decodes, collapses slashes, resolves dot segments and lower-cases', () => {
    expect(normalisedPath('/%61pi//v1/./x/../plans?x=1')).toBe('/api/v1/plans');
    expect(normalisedPath('/%2561pi/v1')).toBe('/api/v1');
    expect(normalisedPath('/API%2FV1%2Fplans')).toBe('/api/v1/plans');
    expect(normalisedPath('/../../api/v1')).toBe('/api/v1');
  });
});

describe('every operation of the OpenAPI document needs a token under every spelling of its path', () => {
  let t: TestApp;
  let port: number;
  let operations: { method: string; path: string }[];
  beforeAll(async () => {
    t = await createTestApp('pglite');
    await t.app.listen({ port: 0, host: '127.0.0.1' });
    port = (t.app.server.address() as AddressInfo).port;
    const doc = JSON.parse((await send(port, 'GET', '/api/v1/openapi.json')).body) as { paths: Record<string, Record<string, { security?: unknown[] }>> };
    operations = [];
    for (const [template, item] of Object.entries(doc.paths)) {
      for (const [method, operation] of Object.entries(item)) {
        if (Array.isArray(operation.security) && operation.security.length === 0) continue; // declared public (health)
        operations.push({ method: method.toUpperCase(), path: template.replace(/\{[^}]+\}/g, 'a1b2c3') });
      }
    }
  }, 180_000);
  afterAll(async () => t?.close());

  it('walks at least the core operations', () => {
    expect(operations.length).toBeGreaterThan(40);
    expect(operations).toContainEqual({ method: 'GET', path: '/api/v1/plans' });
    expect(operations).toContainEqual({ method: 'GET', path: '/api/v1/client-settings' });
  });

  it('answers 401 (our error shape) for every variant without a token', async () => {
    const failures: string[] = [];
    let checked = 0;
    for (const { method, path } of operations) {
      for (const variant of [path, ...variantsOf(path)]) {
        const answer = await send(port, method, variant, method === 'GET' || method === 'DELETE' || method === 'HEAD' ? undefined : '{}');
        checked++;
        let shaped = false;
        try {
          const body = JSON.parse(answer.body) as { error?: { code?: unknown; message?: unknown } };
          shaped = typeof body.error?.code === 'string' && typeof body.error?.message === 'string';
        } catch {
          shaped = false;
        }
        if (answer.status !== 401 || !shaped) failures.push(`${method} ${variant} → ${answer.status} ${answer.body.slice(0, 80)}`);
      }
    }
    expect(checked).toBeGreaterThan(40 * 16);
    expect(failures).toEqual([]);
  }, 120_000);
});
