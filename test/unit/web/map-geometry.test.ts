// The map tools' pure helpers: typed coordinates, what lies under a click, badge placement.
import { describe, expect, it } from 'vitest';
import { parseLatLon, placeBadges, pointsNear } from '../../../web/src/map-geometry.ts';

describe('parseLatLon (go to coordinates)', () => {
  it('reads decimal degrees separated by a comma, a semicolon or spaces, with hemispheres', () => {
    expect(parseLatLon('46.52, 6.63')).toEqual({ ok: true, lat: 46.52, lon: 6.63 });
    expect(parseLatLon(' -33.9;18.4 ')).toEqual({ ok: true, lat: -33.9, lon: 18.4 });
    expect(parseLatLon('46.52 6.63')).toEqual({ ok: true, lat: 46.52, lon: 6.63 });
    expect(parseLatLon('33.9° S, 18.4° E')).toEqual({ ok: true, lat: -33.9, lon: 18.4 });
    expect(parseLatLon('40.7N 74.0W')).toEqual({ ok: true, lat: 40.7, lon: -74 });
  });
  it('names what is wrong: missing, not a number, out of range, swapped hemispheres', () => {
    const msg = (text: string): string => {
      const r = parseLatLon(text);
      return r.ok ? '' : r.message;
    };
    expect(msg('')).toMatch(/latitude and a longitude/);
    expect(msg('46.52')).toMatch(/Two numbers/);
    expect(msg('46.52, abc')).toMatch(/longitude “abc” is not a number/);
    expect(msg('95, 6')).toMatch(/Latitude 95 is outside −90…90° \(latitude comes first: swapped\?\)/);
    expect(msg('45, 181')).toMatch(/Longitude 181 is outside/);
    expect(msg('6.6 E, 46.5 N')).toMatch(/latitude takes N or S, not E/);
  });
});

describe('pointsNear (chooser for stacked markers)', () => {
  it('returns the points within the radius, nearest first', () => {
    const points = [
      { x: 100, y: 100 },
      { x: 130, y: 100 },
      { x: 104, y: 103 },
      { x: 101, y: 100 },
    ];
    expect(pointsNear(points, { x: 100, y: 100 }, 14)).toEqual([0, 3, 2]);
    expect(pointsNear(points, { x: 500, y: 500 }, 14)).toEqual([]);
  });
});

describe('placeBadges (redundancy badges never cover each other)', () => {
  const overlaps = (a: { x: number; y: number }, b: { x: number; y: number }, size: number): boolean => Math.abs(a.x - b.x) < size && Math.abs(a.y - b.y) < size;
  it('puts a lone badge at the first spot (up and right) clear of its node', () => {
    const [o] = placeBadges([{ x: 0, y: 0 }], 18, 14);
    expect(o.x).toBeGreaterThan(0);
    expect(o.y).toBeLessThan(0);
    expect(overlaps(o, { x: 0, y: 0 }, 16)).toBe(false);
  });
  it('a cluster of nearby nodes gets badges that overlap no other badge and no node symbol', () => {
    const nodes = [
      { x: 0, y: 0 },
      { x: 10, y: 0 },
      { x: 0, y: 12 },
      { x: 20, y: 20 },
      { x: 300, y: 300 },
    ];
    const offsets = placeBadges(nodes, 18, 14);
    const centres = nodes.map((n, i) => ({ x: n.x + offsets[i].x, y: n.y + offsets[i].y }));
    for (let i = 0; i < centres.length; i++) {
      for (let j = i + 1; j < centres.length; j++) expect(overlaps(centres[i], centres[j], 18)).toBe(false);
      for (const n of nodes) expect(overlaps(centres[i], n, 16)).toBe(false);
    }
  });
});
