// Hillshade (shaded relief) by Horn's method: slope and aspect from the 3 × 3 neighbourhood
// (Horn 1981, "Hill shading and the reflectance map", Proc. IEEE 69(1)), lit from an azimuth and
// altitude (defaults 315°, 45°), and the Web Mercator tile arithmetic for the offline basemap.

export interface HillshadeOptions {
  /** Direction the light comes from, degrees clockwise from north (default 315, north-west). */
  azimuthDeg?: number;
  /** Sun elevation above the horizon, degrees (default 45). */
  altitudeDeg?: number;
  /** Vertical exaggeration (default 1). */
  zFactor?: number;
}

/**
 * Shade of each interior cell of a height grid (row-major, row 0 = north), 1–255 (0 where any of the
 * 3 × 3 neighbours is NaN, or on the outer ring). cellXM/cellYM: cell size in metres (per row for cellXM
 * and cellYM when given as arrays, as on Web Mercator tiles).
 *   dz/dx = ((c + 2f + i) − (a + 2d + g)) / (8·Δx),  dz/dy = ((g + 2h + i) − (a + 2b + c)) / (8·Δy)   (Horn)
 *   shade = (sin(alt) − cos(alt)·(sin(az)·(−dz/dx)·… )) — in vector form: the cosine between the surface
 *   normal (−dz/dx, dz/dy, 1)/|n| (x east, y north, dz/dy taken southward above) and the sun direction.
 */
export function hillshade(heights: Float32Array | Float64Array, widthPx: number, heightPx: number, cellXM: number | Float64Array, cellYM: number | Float64Array, options: HillshadeOptions = {}): Uint8Array {
  const azimuth = ((options.azimuthDeg ?? 315) * Math.PI) / 180;
  const altitude = ((options.altitudeDeg ?? 45) * Math.PI) / 180;
  const z = options.zFactor ?? 1;
  // Sun direction: east = sin(az)·cos(alt), north = cos(az)·cos(alt), up = sin(alt).
  const sunE = Math.sin(azimuth) * Math.cos(altitude);
  const sunN = Math.cos(azimuth) * Math.cos(altitude);
  const sunU = Math.sin(altitude);
  const out = new Uint8Array(widthPx * heightPx);
  for (let row = 1; row < heightPx - 1; row++) {
    const dx = typeof cellXM === 'number' ? cellXM : cellXM[row];
    const dy = typeof cellYM === 'number' ? cellYM : cellYM[row];
    const up = (row - 1) * widthPx;
    const mid = row * widthPx;
    const down = (row + 1) * widthPx;
    for (let col = 1; col < widthPx - 1; col++) {
      const a = heights[up + col - 1];
      const b = heights[up + col];
      const c = heights[up + col + 1];
      const d = heights[mid + col - 1];
      const f = heights[mid + col + 1];
      const g = heights[down + col - 1];
      const h = heights[down + col];
      const i = heights[down + col + 1];
      const dzdx = (z * (c + 2 * f + i - (a + 2 * d + g))) / (8 * dx); // eastward gradient
      const dzdySouth = (z * (g + 2 * h + i - (a + 2 * b + c))) / (8 * dy); // southward gradient
      if (Number.isNaN(dzdx) || Number.isNaN(dzdySouth)) continue;
      const dzdn = -dzdySouth; // northward gradient
      // Normal of z = f(e, n): (−dz/de, −dz/dn, 1) / sqrt(1 + |∇z|²).
      const shade = (-dzdx * sunE - dzdn * sunN + sunU) / Math.sqrt(1 + dzdx * dzdx + dzdn * dzdn);
      out[mid + col] = shade <= 0 ? 1 : 1 + Math.round(254 * shade);
    }
  }
  return out;
}

const EARTH_RADIUS_M = 6378137; // Web Mercator sphere (EPSG:3857)

/** WGS 84 lon/lat of a point given in global Web Mercator pixel coordinates at zoom z (256-pixel tiles). */
export function mercatorPixelToLonLat(px: number, py: number, zoom: number): { lon: number; lat: number } {
  const size = 256 * 2 ** zoom;
  const lon = (px / size) * 360 - 180;
  const n = Math.PI - (2 * Math.PI * py) / size;
  const lat = (180 / Math.PI) * Math.atan(Math.sinh(n));
  return { lon, lat };
}

/** Ground size (m) of one Web Mercator pixel at a latitude and zoom (on the EPSG:3857 sphere). */
export function mercatorPixelSizeM(latDeg: number, zoom: number): number {
  return (2 * Math.PI * EARTH_RADIUS_M * Math.cos((latDeg * Math.PI) / 180)) / (256 * 2 ** zoom);
}

/** Lon/lat bounds of XYZ tile (z, x, y). */
export function tileBounds(z: number, x: number, y: number): { west: number; south: number; east: number; north: number } {
  const nw = mercatorPixelToLonLat(x * 256, y * 256, z);
  const se = mercatorPixelToLonLat((x + 1) * 256, (y + 1) * 256, z);
  return { west: nw.lon, north: nw.lat, east: se.lon, south: se.lat };
}
