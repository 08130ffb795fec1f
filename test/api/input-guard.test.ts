// The input sanitation layer (server/api/input-guard.ts) and the error shapes around it, on both
// engines: each of these inputs answered 500 before (PostgreSQL refuses NUL in text and JSONB; an
// INTEGER column refuses 2³¹; a cursor of 1e300 reached the query; 10 000-deep JSON overflowed the
// stack; a multipart body without boundary or truncated reached busboy's errors) and now answers
// 400 naming the field. Nothing is stored.
import { connect } from 'node:net';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import request from 'supertest';
import { redactUrl } from '../../server/api/app.ts';
import { checkRequestInput } from '../../server/api/input-guard.ts';
import { decodeCursor, encodeCursor } from '../../server/db/repositories/pagination.ts';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

const cursorOf = (text: string) => Buffer.from(text, 'utf8').toString('base64url');

function deep(levels: number): unknown {
  let value: unknown = 1;
  for (let i = 0; i < levels; i++) value = { a: value };
  return value;
}

describe('the guard itself', () => {
  it('names the field and the character; keeps tabs and line breaks in free text', () => {
    expect(() => checkRequestInput({ params: {}, query: {}, body: { name: 'ok', notes: 'line 1\nline 2\tx' } })).not.toThrow();
    expect(() => checkRequestInput({ params: {}, query: {}, body: { settings: { label: 'a\u0000b' } } })).toThrow('body.settings.label: control character U+0000 is not allowed');
    expect(() => checkRequestInput({ params: {}, query: {}, body: { list: ['x', '\u001b[2J'] } })).toThrow('body.list[1]: control character U+001B');
    expect(() => checkRequestInput({ params: { id: 'x\ny' }, query: {}, body: undefined })).toThrow('path.id: control character U+000A');
    expect(() => checkRequestInput({ params: {}, query: { q: '\ud800' }, body: undefined })).toThrow('query.q: an unpaired UTF-16 surrogate');
    expect(() => checkRequestInput({ params: {}, query: {}, body: 'name,lat\nok,1\nbad\u0000,2\n' })).toThrow('body (line 3, column 4): control character U+0000');
    expect(() => checkRequestInput({ params: {}, query: {}, body: deep(33) })).toThrow('nested deeper than 32 levels');
    expect(() => checkRequestInput({ params: {}, query: {}, body: { 'k\u0000': 1 } })).toThrow('(the key): control character U+0000');
    expect(() => checkRequestInput({ params: {}, query: {}, body: { emoji: '📡 ok' } })).not.toThrow();
  });

  it('cursors: only the decimal offsets the server hands out', () => {
    expect(decodeCursor(encodeCursor(200))).toBe(200);
    expect(decodeCursor(undefined)).toBe(0);
    for (const text of ['1e300', String(2 ** 63), '-1', '1.5', ' 7', '0x10', '2147483648']) expect(() => decodeCursor(cursorOf(text)), text).toThrow('cursor');
    expect(() => decodeCursor('!!')).toThrow('cursor');
  });

  it('log redaction works on parsed query parameter names, not on a substring', () => {
    for (const url of ['/signin?token=esk_1_abc', '/signin?%74oken=esk_1_abc', '/signin?TOKEN=esk_1_abc', '/signin?x=1&%74%6F%6B%65%6E=esk_1_abc', '/signin?to%6ben=esk_1_abc', '/a?access_token=esk_1_abc']) {
      const redacted = redactUrl(url);
      expect(redacted, url).not.toContain('esk_1_abc');
      expect(redacted).toContain('[redacted]');
    }
    expect(redactUrl('/api/v1/plans?limit=5&cursor=MA')).toBe('/api/v1/plans?limit=5&cursor=MA');
  });
});

describeEngines('hostile input answers 400 naming the field', (engine) => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  beforeAll(async () => {
    t = await createTestApp(engine);
    http = request(t.app.server);
  }, 180_000);
  afterAll(async () => t?.close());
  beforeEach(async () => t.reset());
  const planner = () => bearer(t.tokens.planner);

  async function plan() {
    const created = await http.post('/api/v1/plans').set(planner()).send({ name: 'Ridge farm' });
    expect(created.status).toBe(201);
    return created.body as { id: string; version: number };
  }
  function expect400(answer: request.Response, field: RegExp | string) {
    expect(answer.status, JSON.stringify(answer.body)).toBe(400);
    expect(answer.body.error.code).toMatch(/^invalid_/);
    expect(answer.body.error.message).toMatch(field);
  }

  it('NUL in a body text, a JSON field, a path id and a query value', async () => {
    expect400(await http.post('/api/v1/plans').set(planner()).send({ name: 'a\u0000b' }), /^body\.name: control character U\+0000/);
    expect400(await http.post('/api/v1/plans').set(planner()).send({ name: 'x', settings: { note: 'a\u0000' } }), 'body.settings.note');
    expect400(await http.get('/api/v1/plans/ab%00cd').set(planner()), 'path.planId');
    expect400(await http.get('/api/v1/plans?cursor=%00').set(planner()), 'query.cursor');
    expect(await t.db.prisma.plan.count()).toBe(0);
  });

  it('integers beyond the column: version 2147483648 on PATCH', async () => {
    const created = await plan();
    expect400(await http.patch(`/api/v1/plans/${created.id}`).set(planner()).send({ version: 2147483648, name: 'y' }), /version: must be ≤ 2147483647/);
    expect400(await http.patch(`/api/v1/plans/${created.id}`).set(planner()).send({ version: 1e300 }), 'version');
  });

  it('cursors that decode to 1e300, 2⁶³ or junk', async () => {
    await plan();
    for (const cursor of [cursorOf('1e300'), cursorOf(String(2 ** 63)), cursorOf('-5'), 'not*base64']) {
      expect400(await http.get(`/api/v1/plans?cursor=${encodeURIComponent(cursor)}`).set(planner()), 'cursor');
    }
    const fine = await http.get(`/api/v1/plans?cursor=${encodeCursor(0)}`).set(planner());
    expect(fine.status).toBe(200);
  });

  it('JSON nested 10 000 deep (and 13 deep in a free-form field) is refused before anything walks it', async () => {
    const hugeDepth = `{"name":"x","settings":${'{"a":'.repeat(10_000)}1${'}'.repeat(10_000)}}`;
    expect400(await http.post('/api/v1/plans').set(planner()).set('content-type', 'application/json').send(hugeDepth), 'nested deeper than 32 levels');
    expect400(await http.post('/api/v1/plans').set(planner()).send({ name: 'x', settings: deep(13) }), /settings: must be nested at most 12 levels/);
    const ok = await http.post('/api/v1/plans').set(planner()).send({ name: 'x', settings: deep(11) });
    expect(ok.status).toBe(201);
  });

  it('CSV import: a NUL cell names its line; 0x10 is not a latitude', async () => {
    const created = await plan();
    const nul = await http.post(`/api/v1/plans/${created.id}/nodes/import?dryRun=true`).set(planner()).set('content-type', 'text/csv').send('name,lat,lon\nmeter 1,49.8,6.1\nmeter\u00002,49.8,6.1\n');
    expect400(nul, /body \(line 3, column 6\): control character U\+0000/);
    const hex = await http.post(`/api/v1/plans/${created.id}/nodes/import`).set(planner()).set('content-type', 'text/csv').send('name,lat,lon,deviceType\nmeter 1,0x10,6.1,water meter\n');
    expect(hex.status).toBe(400);
    expect(hex.body.error.message).toMatch(/row 1 lat: must be a number/);
    const dry = await http.post(`/api/v1/plans/${created.id}/nodes/import?dryRun=true`).set(planner()).set('content-type', 'text/csv').send('name,lat,lon,deviceType\nmeter 1,1e1,6.1,water meter\nmeter 2,+49.5,-.5,water meter\n');
    expect(dry.status).toBe(200);
    expect(dry.body.valid, JSON.stringify(dry.body.errors)).toBe(true);
    expect(await t.db.prisma.node.count()).toBe(0);
  });

  it('multipart without a boundary, truncated, or with a NUL in a field → 400', async () => {
    const created = await plan();
    const url = `/api/v1/plans/${created.id}/terrain`;
    const noBoundary = await http.post(url).set(planner()).set('content-type', 'multipart/form-data').send('--x\r\n');
    expect(noBoundary.status).toBe(400);
    expect(noBoundary.body.error.code).toMatch(/invalid_multipart|bad_request/);
    const truncated = await http
      .post(url)
      .set(planner())
      .set('content-type', 'multipart/form-data; boundary=XyZ')
      .send('--XyZ\r\nContent-Disposition: form-data; name="file"; filename="a.tif"\r\nContent-Type: image/tiff\r\n\r\nII*\u0000\u0008\u0000');
    expect(truncated.status).toBe(400);
    expect(truncated.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) });
    const field = await http
      .post(url)
      .set(planner())
      .set('content-type', 'multipart/form-data; boundary=XyZ')
      .send('--XyZ\r\nContent-Disposition: form-data; name="name"\r\n\r\nbad\u0000name\r\n--XyZ--\r\n');
    expect400(field, /^name: control character U\+0000/);
    expect(await t.db.prisma.terrainLayer.count()).toBe(0);
  });
});

describe('414 and 431 in our error shape', () => {
  let t: TestApp;
  let port: number;
  beforeAll(async () => {
    t = await createTestApp('pglite');
    await t.app.listen({ port: 0, host: '127.0.0.1' });
    port = (t.app.server.address() as AddressInfo).port;
  }, 180_000);
  afterAll(async () => t?.close());

  function raw(text: string): Promise<{ status: number; body: string }> {
    return new Promise((resolve, reject) => {
      const socket = connect(port, '127.0.0.1', () => socket.write(text));
      let data = '';
      socket.on('data', (chunk) => (data += chunk.toString('utf8')));
      socket.on('error', () => undefined);
      socket.on('close', () => {
        const status = Number(/^HTTP\/1\.1 (\d{3})/.exec(data)?.[1] ?? 0);
        resolve({ status, body: data.slice(data.indexOf('\r\n\r\n') + 4) });
      });
      setTimeout(() => reject(new Error('no answer')), 5000);
    });
  }

  it('a path id longer than the router accepts → 414 { error }', async () => {
    const answer = await request(t.app.server).get(`/api/v1/plans/${'a'.repeat(300)}`).set(bearer(t.tokens.viewer));
    expect(answer.status).toBe(414);
    expect(answer.body).toEqual({ error: { code: 'uri_too_long', message: expect.any(String) } });
  });

  it('headers larger than the parser accepts → 431 { error }', async () => {
    const answer = await raw(`GET /api/v1/health HTTP/1.1\r\nHost: x\r\nX-Big: ${'a'.repeat(20_000)}\r\n\r\n`);
    expect(answer.status).toBe(431);
    expect(JSON.parse(answer.body)).toEqual({ error: { code: 'headers_too_large', message: expect.any(String) } });
  });

  it('a malformed percent escape → 400 { error }', async () => {
    const answer = await raw(`GET /api/v1/plans/%zz HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n`);
    expect(answer.status).toBe(400);
    expect(JSON.parse(answer.body).error.code).toBeTypeOf('string');
  });
});
