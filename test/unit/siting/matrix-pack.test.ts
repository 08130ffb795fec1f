// The stored (packed) siting matrix must give back exactly the matrix the API served before:
// every boolean, every margin (rounded to 0.01 dB as the matrix keeps it) and every null.
import { describe, expect, it } from 'vitest';
import { packMatrix, unpackMatrix } from '../../../server/siting/matrix-pack.ts';

function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

describe('siting matrix packing', () => {
  it('round-trips booleans, 0.01 dB margins and nulls exactly (seeded shapes 0×0 to 37×23)', () => {
    const rand = random(7);
    for (let round = 0; round < 60; round++) {
      const rows = round === 0 ? 0 : Math.floor(rand() * 38);
      const columns = round === 1 ? 0 : Math.floor(rand() * 24);
      const meets = Array.from({ length: rows }, () => Array.from({ length: columns }, () => rand() < 0.4));
      // As computeSitingMatrix rounds them: Math.round(margin · 100) / 100, some of them null.
      const marginDb = Array.from({ length: rows }, () => Array.from({ length: columns }, () => (rand() < 0.2 ? null : Math.round((rand() * 400 - 250) * 100) / 100)));
      const packed = packMatrix(meets, marginDb, columns);
      expect(packed.meetsBits.length).toBe(Math.ceil((rows * columns) / 8));
      expect(packed.marginCdB.length).toBe(rows * columns * 4);
      const back = unpackMatrix(packed);
      expect(back.meets).toEqual(meets);
      expect(back.marginDb).toEqual(marginDb);
      // JSON of the served matrix is byte-identical (0.1 + 0.2-style float noise would show here).
      expect(JSON.stringify(back)).toBe(JSON.stringify({ meets, marginDb }));
    }
  });

  it('2,000 × 200 packs into 50 kB of bits and 1.6 MB of margins', () => {
    const meets = Array.from({ length: 2000 }, (_r, i) => Array.from({ length: 200 }, (_c, j) => (i + j) % 3 === 0));
    const marginDb = Array.from({ length: 2000 }, (_r, i) => Array.from({ length: 200 }, (_c, j) => (j === 0 ? null : Math.round((((i * 7 + j) % 5000) / 100 - 20) * 100) / 100)));
    const packed = packMatrix(meets, marginDb, 200);
    expect(packed.meetsBits.length).toBe(50_000);
    expect(packed.marginCdB.length).toBe(1_600_000);
    expect(JSON.stringify({ meets, marginDb }).length).toBeGreaterThan(3_000_000);
    expect(unpackMatrix(packed).marginDb[1999]).toEqual(marginDb[1999]);
  });

  it('refuses ragged rows, non-finite margins and short stored bytes, naming what is wrong', () => {
    expect(() => packMatrix([[true]], [[1, 2]], 1)).toThrow(/row 0 has 1\/2 columns/);
    expect(() => packMatrix([[true]], [[Number.NaN]], 1)).toThrow(/cannot be stored/);
    expect(() => unpackMatrix({ rows: 2, columns: 2, meetsBits: new Uint8Array(1), marginCdB: new Uint8Array(8) })).toThrow(/shorter/);
  });
});
