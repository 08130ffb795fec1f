// Every file of the hostile set (test/helpers/hostile-tiffs.ts) is refused with a 4xx in our
// error shape within 5 s, nothing is stored, and the server keeps answering; a valid DEM in
// every compression is still accepted. Also the bounded decoders on their own.
import { existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { sweepIncomingFiles } from '../../server/db/files.ts';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { BoundedLzwDecoder, BoundedPackBitsDecoder } from '../../server/terrain/tiff-decoders.ts';
import { hostileSet, validDem } from '../helpers/hostile-tiffs.ts';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

describe('bounded decoders', () => {
  const parameters = { tileWidth: 16, tileHeight: 16, predictor: 1, bitsPerSample: [8], planarConfiguration: 1 };
  it('PackBits: decodes TIFF 6.0 §9 runs, refuses output beyond the block', () => {
    // The §9 example: literal run of 3 then a repeat run.
    const decoded = new Uint8Array(new BoundedPackBitsDecoder(parameters).decodeBlock(new Uint8Array([0x02, 1, 2, 3, 0xfe, 9]).buffer) as ArrayBuffer);
    expect([...decoded]).toEqual([1, 2, 3, 9, 9, 9]);
    const bomb = new Uint8Array(20).fill(0x81);
    expect(() => new BoundedPackBitsDecoder(parameters).decodeBlock(bomb.buffer)).toThrow(/expands beyond/);
  });
  it('LZW: a stream of Clear + repeated codes that would outgrow the block is refused', () => {
    // 9-bit codes: Clear, 0, 258, 259, 260, ... each adding one byte more (KwKwK growth).
    const codes = [256, 0];
    for (let c = 258; c < 300; c++) codes.push(c);
    let bits = '';
    for (const code of codes) bits += code.toString(2).padStart(9, '0');
    const bytes = new Uint8Array(Math.ceil(bits.length / 8));
    for (let i = 0; i < bits.length; i++) if (bits[i] === '1') bytes[i >> 3] |= 0x80 >> (i & 7);
    // 1 + 2 + 3 + ... + 43 bytes = 946 > 256 + 16.
    expect(() => new BoundedLzwDecoder(parameters).decodeBlock(bytes.buffer)).toThrow(/expands beyond/);
  });
});

describe('hostile GeoTIFF uploads', () => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  let planId: string;
  beforeAll(async () => {
    t = await createTestApp('pglite');
    http = request(t.app.server);
    planId = (await http.post('/api/v1/plans').set(bearer(t.tokens.planner)).send({ name: 'Hostile files' })).body.id;
  }, 180_000);
  afterAll(async () => t?.close());

  const upload = (bytes: Buffer) => http.post(`/api/v1/plans/${planId}/terrain`).set(bearer(t.tokens.planner)).set('Content-Type', 'image/tiff').send(bytes);

  for (const file of hostileSet()) {
    it(`refuses: ${file.name}`, async () => {
      const started = Date.now();
      const answer = await upload(file.bytes);
      const elapsedMs = Date.now() - started;
      expect(answer.status, JSON.stringify(answer.body)).toBeGreaterThanOrEqual(400);
      expect(answer.status).toBeLessThan(500);
      expect(answer.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) });
      expect(elapsedMs).toBeLessThan(5000);
      expect((await http.get('/api/v1/health')).status).toBe(200);
    }, 20_000);
  }

  it('nothing of them is stored, and no .incoming file is left', async () => {
    expect(await t.db.prisma.terrainLayer.count()).toBe(0);
    const dir = join(t.config.filesDir, 'terrain', planId);
    expect(existsSync(dir) ? readdirSync(dir) : []).toEqual([]);
  });

  for (const compression of ['none', 'deflate', 'lzw', 'packbits'] as const) {
    it(`still accepts a valid DEM (${compression})`, async () => {
      const answer = await upload(validDem(compression));
      expect(answer.status, JSON.stringify(answer.body)).toBe(201);
    }, 20_000);
  }
});

describe('interrupted uploads', () => {
  it('.incoming files not written to for 2 minutes are removed at start; fresh ones and stored layers stay', async () => {
    const root = mkdtempSync(join(tmpdir(), 'earshot-incoming-'));
    const dir = join(root, 'plan1');
    mkdirSync(dir);
    const old = join(dir, '.incoming-0f3c2a1b-1111-2222-3333-444455556666.tif');
    const fresh = join(dir, '.incoming-aa3c2a1b-1111-2222-3333-444455556666.tif');
    const layer = join(dir, 'abcdef.tif');
    for (const path of [old, fresh, layer]) writeFileSync(path, 'x');
    const past = new Date(Date.now() - 10 * 60 * 1000);
    utimesSync(old, past, past);
    utimesSync(layer, past, past);
    expect(await sweepIncomingFiles(root, 2 * 60 * 1000)).toEqual([old]);
    expect(readdirSync(dir).sort()).toEqual(['.incoming-aa3c2a1b-1111-2222-3333-444455556666.tif', 'abcdef.tif']);
    rmSync(root, { recursive: true, force: true });
  });
});
