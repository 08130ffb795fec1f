// Antenna patterns are checked where they come in and where they are read back: a design
// without a pattern is stored as an explicit omni of its gain; a malformed one is refused
// with 400 naming the field; a stored row with the `{}` older versions wrote reads as an omni;
// any other unusable stored pattern is a named error (422), never a 500 in an engine.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { toRadioAntennaDesign } from '../../server/db/repositories/kit.ts';
import { InvalidPatternError, omniPattern, parseStoredPattern } from '../../server/radio/pattern-schema.ts';
import { cutValueDb } from '../../server/radio/antennas.ts';
import { bearer, createTestApp, type TestApp } from '../helpers/test-app.ts';

describe('stored patterns', () => {
  it('no pattern ({} or null) is an omni of the stated gain: 0 dB relative at every elevation', () => {
    for (const stored of [{}, null, undefined]) {
      const pattern = parseStoredPattern(stored, 'old design');
      expect(pattern).toEqual(omniPattern());
      for (const angle of [-90, -10, 0, 5, 90]) expect(cutValueDb(pattern.elevation, angle)).toBe(0);
    }
  });
  it('an unusable stored pattern is a named InvalidPatternError', () => {
    expect(() => parseStoredPattern({ kind: 'directional', elevation: { angleDeg: [-90, 90], relativeDb: [0, 0] } }, 'Yagi A')).toThrow(InvalidPatternError);
    expect(() => parseStoredPattern({ foo: 1 }, 'Yagi A')).toThrow(/antenna design "Yagi A": stored pattern is not usable/);
  });
  it('toRadioAntennaDesign parses the row pattern', () => {
    const row = { id: 'x', teamId: 't', name: 'legacy', kind: 'custom', gainDbi: 3, pattern: {}, polarization: 'vertical', fromMhz: 860, toMhz: 930, typicalVswr: 1.5, costUsd: 10, homemade: false, buildSheetId: null, notes: '', details: {} } as unknown as Parameters<typeof toRadioAntennaDesign>[0];
    expect(toRadioAntennaDesign(row).pattern).toEqual(omniPattern());
  });
});

describe('antenna design API', () => {
  let t: TestApp;
  let http: ReturnType<typeof request>;
  beforeAll(async () => {
    t = await createTestApp('pglite');
    http = request(t.app.server);
  }, 180_000);
  afterAll(async () => t?.close());
  const design = { name: 'Ground plane 868', kind: 'custom', gainDbi: 2.1, fromMhz: 863, toMhz: 870 };

  it('a design without a pattern is stored as an omni of its gain', async () => {
    const created = await http.post('/api/v1/kit/antenna-designs').set(bearer(t.tokens.planner)).send(design);
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    expect(created.body.pattern).toEqual(omniPattern());
    const row = await t.db.prisma.antennaDesign.findUniqueOrThrow({ where: { id: created.body.id } });
    expect(row.pattern).toEqual(omniPattern());
  });

  it('malformed patterns answer 400 naming the field', async () => {
    const cases: [unknown, RegExp][] = [
      [{ kind: 'directional', elevation: { angleDeg: [-90, 90], relativeDb: [0, 0] } }, /pattern\.azimuth: required for a directional pattern/],
      [{ kind: 'omni', elevation: { angleDeg: [-90, 0, 90], relativeDb: [0, 0] } }, /pattern\.elevation\.relativeDb: needs one value per angle/],
      [{ kind: 'omni', elevation: { angleDeg: [0, -90], relativeDb: [0, 0] } }, /pattern\.elevation\.angleDeg\.1: angles must increase/],
      [{ kind: 'omni', elevation: { angleDeg: [-90, 90], relativeDb: [0, 6] } }, /pattern\.elevation\.relativeDb\.1: must be ≤ 0 dB/],
      [{}, /pattern\.kind/],
    ];
    for (const [pattern, message] of cases) {
      const answer = await http.post('/api/v1/kit/antenna-designs').set(bearer(t.tokens.planner)).send({ ...design, pattern });
      expect(answer.status, JSON.stringify(pattern)).toBe(400);
      expect(answer.body.error.message).toMatch(message);
    }
  });
});
