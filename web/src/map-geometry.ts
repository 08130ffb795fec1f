// Pure helpers of the map tools (no Leaflet, no DOM): reading typed coordinates,
// finding what lies under a click, and placing redundancy badges so none covers another.

export type LatLonInput = { ok: true; lat: number; lon: number } | { ok: false; message: string };

const number = /^[-+]?(?:\d+(?:\.\d*)?|\.\d+)$/;

/**
 * Reads "lat, lon" as typed: decimal degrees separated by a comma, a semicolon or spaces,
 * each optionally followed by ° and a hemisphere letter (N/S for latitude, E/W for longitude;
 * S and W make the value negative). Out-of-range values and swapped hemispheres are named.
 */
export function parseLatLon(text: string): LatLonInput {
  const trimmed = text.trim();
  if (trimmed === '') return { ok: false, message: 'Type a latitude and a longitude in decimal degrees, e.g. 46.52, 6.63.' };
  const parts = trimmed
    .replace(/°/g, ' ')
    .split(/[,;]\s*|\s+(?=[-+]?[\d.])/)
    .map((p) => p.trim())
    .filter(Boolean);
  if (parts.length !== 2) return { ok: false, message: `Two numbers are needed (latitude, longitude); “${trimmed}” has ${parts.length}.` };
  const read = (part: string, axis: 'latitude' | 'longitude'): number | string => {
    const m = /^(.*?)\s*([NSEWnsew])?$/.exec(part) as RegExpExecArray;
    const value = m[1].trim();
    const hemisphere = m[2]?.toUpperCase();
    if (!number.test(value)) return `The ${axis} “${part}” is not a number.`;
    if (hemisphere && (axis === 'latitude' ? !'NS'.includes(hemisphere) : !'EW'.includes(hemisphere)))
      return `The ${axis} takes ${axis === 'latitude' ? 'N or S' : 'E or W'}, not ${hemisphere} (latitude comes first).`;
    const v = Number(value);
    return hemisphere === 'S' || hemisphere === 'W' ? -Math.abs(v) : v;
  };
  const lat = read(parts[0], 'latitude');
  if (typeof lat === 'string') return { ok: false, message: lat };
  const lon = read(parts[1], 'longitude');
  if (typeof lon === 'string') return { ok: false, message: lon };
  if (lat < -90 || lat > 90) return { ok: false, message: `Latitude ${lat} is outside −90…90°${Math.abs(lon) <= 90 ? ' (latitude comes first: swapped?)' : ''}.` };
  if (lon < -180 || lon > 180) return { ok: false, message: `Longitude ${lon} is outside −180…180°.` };
  return { ok: true, lat, lon };
}

export interface ScreenPoint {
  x: number;
  y: number;
}

/** Indexes of the points within `radiusPx` of `at` (screen pixels), nearest first. */
export function pointsNear(points: readonly ScreenPoint[], at: ScreenPoint, radiusPx: number): number[] {
  const r2 = radiusPx * radiusPx;
  const hits: Array<[number, number]> = [];
  for (let i = 0; i < points.length; i++) {
    const dx = points[i].x - at.x;
    const dy = points[i].y - at.y;
    const d2 = dx * dx + dy * dy;
    if (d2 <= r2) hits.push([i, d2]);
  }
  return hits.sort((a, b) => a[1] - b[1]).map(([i]) => i);
}

/** Where a badge sits relative to its node's centre (screen pixels, y down). */
export type BadgeOffset = ScreenPoint;

// Candidate spots around a node, preferred first: the four diagonals, then the four sides,
// then the same twice as far out (dense clusters). Common practice for label placement.
const ring = [
  [1, -1],
  [-1, -1],
  [1, 1],
  [-1, 1],
  [0, -1.3],
  [1.3, 0],
  [0, 1.3],
  [-1.3, 0],
] as const;

/**
 * Places one square badge of `badgePx` per node so that no badge overlaps another badge or
 * any node symbol (`symbolPx` square centred on each node). Greedy, in the given order; a
 * badge with no free spot takes the first candidate (overlap cannot always be avoided).
 */
export function placeBadges(nodes: readonly ScreenPoint[], badgePx = 18, symbolPx = 14): BadgeOffset[] {
  const gap = (badgePx + symbolPx) / 2 + 1;
  const candidates: BadgeOffset[] = [];
  for (const scale of [1, 2]) for (const [dx, dy] of ring) candidates.push({ x: Math.round(dx * gap * scale), y: Math.round(dy * gap * scale) });
  const placed: ScreenPoint[] = [];
  const clashes = (c: ScreenPoint): boolean => {
    for (const b of placed) if (Math.abs(b.x - c.x) < badgePx && Math.abs(b.y - c.y) < badgePx) return true;
    const reach = (badgePx + symbolPx) / 2;
    for (const n of nodes) if (Math.abs(n.x - c.x) < reach && Math.abs(n.y - c.y) < reach) return true;
    return false;
  };
  return nodes.map((node) => {
    for (const offset of candidates) {
      const centre = { x: node.x + offset.x, y: node.y + offset.y };
      if (!clashes(centre)) {
        placed.push(centre);
        return offset;
      }
    }
    placed.push({ x: node.x + candidates[0].x, y: node.y + candidates[0].y });
    return candidates[0];
  });
}
