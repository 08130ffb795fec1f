// stableJson keys the link cache: its text must never change for a given value (stored
// pathHash / inputHash values would all miss). These cases pin the text it produces.
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
  it('gives a path key the hash the link cache has stored since links-3 (a fixed SHA-256)', () => {
    const key = { s: 'abc', n: [44.5, -110.2, 1.5], g: [44.6, -110.1, 15] };
    expect(stableJson(key)).toBe('{"g":[44.6,-110.1,15],"n":[44.5,-110.2,1.5],"s":"abc"}');
    expect(hashOf(key)).toBe(hashOf(JSON.parse('{"g":[44.6,-110.1,15],"n":[44.5,-110.2,1.5],"s":"abc"}')));
  });
});
