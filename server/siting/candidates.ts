// Automatic candidate sites from the terrain and the planner's exclusion areas.
//
// High points: cells of an elevation grid that are at least as high as all 8
// neighbours (a local maximum of the 3 × 3 neighbourhood), inside the plan's
// area, not NoData; ranked highest first and thinned so no two are closer
// than the spacing. Water is skipped through a predicate the caller builds
// from the clutter layer (this file reads nothing itself).
import { booleanPointInPolygon } from '@turf/turf';
import type { MultiPolygon, Polygon, Position } from 'geojson';
import { geodesicInverse } from '../terrain/geodesic.ts';

/** An elevation window as data: values in metres, NaN = NoData, with its pixel → WGS 84 mapping. */
export interface ElevationGrid {
  widthPx: number;
  heightPx: number;
  elevationM: Float32Array;
  /** WGS 84 position of continuous pixel coordinates (x + 0.5, y + 0.5 = centre of pixel x, y). */
  pixelToLonLat(x: number, y: number): { lon: number; lat: number };
}

export interface LonLatBox {
  west: number;
  south: number;
  east: number;
  north: number;
}

export interface HighPoint {
  lat: number;
  lon: number;
  groundM: number;
}

/** Local maxima of a grid inside the box, highest first (ties: row-major order). */
export function localHighPoints(grid: ElevationGrid, area: LonLatBox): HighPoint[] {
  const { widthPx: w, heightPx: h, elevationM: z } = grid;
  const found: Array<{ x: number; y: number; z: number }> = [];
  for (let y = 1; y < h - 1; y++) {
    for (let x = 1; x < w - 1; x++) {
      const centre = z[y * w + x];
      if (!Number.isFinite(centre)) continue;
      let peak = true;
      for (let dy = -1; dy <= 1 && peak; dy++) {
        for (let dx = -1; dx <= 1; dx++) {
          if (dx === 0 && dy === 0) continue;
          const v = z[(y + dy) * w + x + dx];
          // A NoData neighbour does not disqualify; a higher one does.
          if (v > centre) {
            peak = false;
            break;
          }
        }
      }
      if (peak) found.push({ x, y, z: centre });
    }
  }
  found.sort((a, b) => b.z - a.z || a.y - b.y || a.x - b.x);
  const out: HighPoint[] = [];
  for (const p of found) {
    const { lon, lat } = grid.pixelToLonLat(p.x + 0.5, p.y + 0.5);
    if (lon < area.west || lon > area.east || lat < area.south || lat > area.north) continue;
    out.push({ lat, lon, groundM: p.z });
  }
  return out;
}

/**
 * The first `count` points (in the given order) at least `spacingM` from every
 * point already taken and from `keepAwayFrom` (e.g. the plan's own sites), and
 * accepted by `accept` (exclusion areas, water).
 */
export function pickSpaced(points: readonly HighPoint[], count: number, spacingM: number, accept: (point: HighPoint) => boolean = () => true, keepAwayFrom: ReadonlyArray<{ lat: number; lon: number }> = []): HighPoint[] {
  const taken: HighPoint[] = [];
  for (const point of points) {
    if (taken.length >= count) break;
    if (!accept(point)) continue;
    const tooClose = (other: { lat: number; lon: number }) => geodesicInverse(point, other).distanceM < spacingM;
    if (taken.some(tooClose) || keepAwayFrom.some(tooClose)) continue;
    taken.push(point);
  }
  return taken;
}

/** A validated exclusion area. */
export type ExclusionArea = Polygon | MultiPolygon;

function isPosition(value: unknown): value is Position {
  return Array.isArray(value) && value.length >= 2 && value.length <= 3 && value.every((v) => typeof v === 'number' && Number.isFinite(v)) && Math.abs(value[0] as number) <= 180 && Math.abs(value[1] as number) <= 90;
}

function ringProblem(ring: unknown): string | null {
  if (!Array.isArray(ring)) return 'a ring must be an array of [lon, lat] positions';
  if (ring.length < 4) return 'a ring needs at least 4 positions (closed: the last equals the first)';
  if (!ring.every(isPosition)) return 'every position must be [lon, lat] with lon in −180…180 and lat in −90…90';
  const first = ring[0] as Position;
  const last = ring[ring.length - 1] as Position;
  if (first[0] !== last[0] || first[1] !== last[1]) return 'a ring must be closed (the last position equals the first)';
  return null;
}

function polygonProblem(coordinates: unknown): string | null {
  if (!Array.isArray(coordinates) || coordinates.length === 0) return 'coordinates must be a list of rings';
  for (const ring of coordinates) {
    const problem = ringProblem(ring);
    if (problem) return problem;
  }
  return null;
}

/**
 * Parses exclusion areas: GeoJSON Polygon or MultiPolygon geometries, or
 * Features carrying one. Throws RangeError naming the item ("excludeAreas[2]: …").
 */
export function parseExclusionAreas(value: readonly unknown[], field = 'excludeAreas'): ExclusionArea[] {
  return value.map((item, index) => {
    const at = `${field}[${index}]`;
    let geometry = item as { type?: unknown; coordinates?: unknown; geometry?: unknown };
    if (geometry && typeof geometry === 'object' && geometry.type === 'Feature') geometry = geometry.geometry as typeof geometry;
    if (!geometry || typeof geometry !== 'object') throw new RangeError(`${at}: must be a GeoJSON Polygon or MultiPolygon`);
    if (geometry.type === 'Polygon') {
      const problem = polygonProblem(geometry.coordinates);
      if (problem) throw new RangeError(`${at}: ${problem}`);
      return { type: 'Polygon', coordinates: geometry.coordinates as Position[][] };
    }
    if (geometry.type === 'MultiPolygon') {
      if (!Array.isArray(geometry.coordinates) || geometry.coordinates.length === 0) throw new RangeError(`${at}: coordinates must be a list of polygons`);
      for (const polygon of geometry.coordinates) {
        const problem = polygonProblem(polygon);
        if (problem) throw new RangeError(`${at}: ${problem}`);
      }
      return { type: 'MultiPolygon', coordinates: geometry.coordinates as Position[][][] };
    }
    throw new RangeError(`${at}: must be a GeoJSON Polygon or MultiPolygon (got ${typeof geometry.type === 'string' ? geometry.type : 'no type'})`);
  });
}

/** True when the position lies in any of the areas (on the boundary counts as inside). */
export function isExcluded(areas: readonly ExclusionArea[], lat: number, lon: number): boolean {
  return areas.some((area) => booleanPointInPolygon([lon, lat], area));
}
