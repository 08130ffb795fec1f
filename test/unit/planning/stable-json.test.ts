// stableJson keys the link cache: its text must never change for a given value (stored
// pathHash / inputHash values would all miss). These cases pin the text it produces.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { hashOf, stableJson } from '../../../server/planning/node-links.ts';

describe('stableJson', () => {
  it('sorts keys at every depth, drops undefined members, keeps nulls and array holes as null', () => {
    expect(stableJson({ b: 1, a: { d: [3, undefined, null], c: 'x' }, e: undefined, f: null })).toBe('{"a":{"c":"x","d":[3,null,null]},"b":1,"f":null}');
  });
  it('writes typed arrays as plain arrays, dates as ISO text, numbers as JSON does', () => {
    expect(stableJson({ t: new Float32Array([1.5, 2]), d: new Date(Date.UTC(2026, 0, 2)), n: [0.1 + 0.2, -0, 1e21, Number.NaN] })).toBe('{"d":"2026-01-02T00:00:00.000Z","n":[0.30000000000000004,0,1e+21,null],"t":[1.5,2]}');
  });
  it('escapes keys and strings as JSON does; key order is by UTF-16 code unit', () => {
    expect(stableJson({ 'é': 1, Z: 2, a: 3, 'q"': 'line\n' })).toBe('{"Z":2,"a":3,"q\\"":"line\\n","é":1}');
  });
  it('orders keys as a code-unit sort does for short and long key lists (in-place insertion below 33 keys)', () => {
    let seed = 11;
    const next = () => (seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
    for (const count of [0, 1, 2, 5, 17, 32, 33, 80]) {
      const record: Record<string, number> = {};
      for (let k = 0; k < count; k++) record[`${String.fromCharCode(65 + Math.floor(next() * 58))}${Math.floor(next() * 1000)}`] = k;
      const expected = `{${Object.keys(record)
        .sort((a, b) => (a < b ? -1 : 1))
        .map((key) => `${JSON.stringify(key)}:${record[key]}`)
        .join(',')}}`;
      expect(stableJson(record)).toBe(expected);
    }
  });
  it('hashes to the SHA-256 hex of the text (the one-shot digest equals createHash)', () => {
    const value = { b: [1, 2], a: 'x' };
    expect(hashOf(value)).toBe(createHash('sha256').update(stableJson(value)).digest('hex'));
    expect(hashOf(value)).toBe(createHash('sha256').update('{"a":"x","b":[1,2]}').digest('hex'));
  });
  it('gives a path key the hash the link cache has stored since links-3 (a fixed SHA-256)', () => {
    const key = { s: 'abc', n: [44.5, -110.2, 1.5], g: [44.6, -110.1, 15] };
    expect(stableJson(key)).toBe('{"g":[44.6,-110.1,15],"n":[44.5,-110.2,1.5],"s":"abc"}');
    expect(hashOf(key)).toBe(hashOf(JSON.parse('{"g":[44.6,-110.1,15],"n":[44.5,-110.2,1.5],"s":"abc"}')));
  });
});
