// Seams between neighbouring coverage tiles (issue 19), as test/unit/terrain/tile-seams.test.ts does
// for hillshade: at zoom 12, 13 and 14, a tile and its right and lower neighbours are rendered from
// one margin raster written as the coverage job writes it (256 px tiles, deflate, the terrain's
// CRS). Every pixel of the shared edges (last column | first column, last row | first row) must be
// the class of the raster cell under that pixel's centre in the one global Web Mercator pixel grid,
// computed here independently (spherical Mercator inverse, EPSG:3857 / OGC 1.0, written out below),
// so two neighbours agree along their seam; and the class changes across a seam are no more
// frequent than between two neighbouring columns or rows inside a tile.
import { describe, expect, it } from 'vitest';
import { openGeoRaster, type GeoRaster } from '../../../server/terrain/raster.ts';
import { decodePng } from '../../../server/terrain/png.ts';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { MARGIN_CLASSES, renderMarginTile } from '../../../server/coverage/tiles.ts';

const NODATA = -9999;
const TILE = 256;

/** A smooth margin field (dB) that crosses every class boundary, NoData outside a disc, as a coverage result is outside its radius. */
function marginTiff(kind: 'utm' | 'geographic'): ArrayBuffer {
  const size = 900;
  const data = new Float32Array(size * size);
  for (let r = 0; r < size; r++) {
    for (let c = 0; c < size; c++) {
      const d = Math.hypot(c - size / 2, r - size / 2);
      data[r * size + c] = d > size * 0.48 ? NODATA : 32 - (40 * d) / (size / 2) + 4 * Math.sin(c / 23) * Math.cos(r / 31);
    }
  }
  const geo =
    kind === 'utm'
      ? { geoTransform: [280000, 30, 0, 5530000, 0, -30] as [number, number, number, number, number, number], epsg: 32632 }
      : { geoTransform: [7.9, 0.0003, 0, 49.9, 0, -0.0003] as [number, number, number, number, number, number], epsg: 4326 };
  const bytes = writeGeoTiff({ widthPx: size, heightPx: size, data, ...geo, noData: NODATA, tiled: { tileSizePx: 256 }, compression: 'deflate' });
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
}

/** Inverse spherical Web Mercator of a global pixel position at zoom z (256 px tiles). */
function globalPixelToLonLat(px: number, py: number, z: number): { lon: number; lat: number } {
  const world = TILE * 2 ** z;
  const lon = (px / world) * 360 - 180;
  const lat = (Math.atan(Math.sinh(Math.PI * (1 - (2 * py) / world))) * 180) / Math.PI;
  return { lon, lat };
}

function tileOf(lon: number, lat: number, z: number): { x: number; y: number } {
  const n = 2 ** z;
  const rad = (lat * Math.PI) / 180;
  return { x: Math.floor(((lon + 180) / 360) * n), y: Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n) };
}

/** RGBA of a margin (transparent below the last class or NoData), by the published class table. */
function classRgba(margin: number): [number, number, number, number] {
  if (!(margin === margin) || margin === NODATA) return [0, 0, 0, 0];
  for (const cls of MARGIN_CLASSES) if (margin >= cls.minMarginDb) return cls.rgba;
  return [0, 0, 0, 0];
}

async function rgba(raster: GeoRaster, z: number, x: number, y: number): Promise<(c: number, r: number) => string> {
  const png = await renderMarginTile(raster, z, x, y);
  expect(png, `tile ${z}/${x}/${y}`).not.toBeNull();
  const d = decodePng(png!);
  expect(d.widthPx).toBe(TILE);
  return (c, r) => Array.from(d.pixels.subarray((r * TILE + c) * 4, (r * TILE + c) * 4 + 4)).join(',');
}

describe('coverage tile seams at zoom 12–14', () => {
  for (const kind of ['utm', 'geographic'] as const) {
    it(`${kind} margin raster: edge rows and columns of neighbouring tiles are the cells under the one global pixel grid`, async () => {
      const raster = await openGeoRaster(marginTiff(kind));
      try {
        const cells = await raster.readWindow(0, 0, raster.widthPx, raster.heightPx);
        /** The class colour of the cell under global pixel (gx, gy)'s centre. */
        const expected = (gx: number, gy: number, z: number): string => {
          const p = globalPixelToLonLat(gx + 0.5, gy + 0.5, z);
          const q = raster.lonLatToPixel(p.lon, p.lat);
          const col = Math.floor(q.x);
          const row = Math.floor(q.y);
          if (col < 0 || row < 0 || col >= raster.widthPx || row >= raster.heightPx) return '0,0,0,0';
          return classRgba(cells[row * raster.widthPx + col]).join(',');
        };
        // A little off the centre, so the seams cross class boundaries and the disc's edge at every zoom.
        const anchor = raster.pixelToLonLat(raster.widthPx * 0.62, raster.heightPx * 0.41);
        for (const z of [12, 13, 14]) {
          const { x, y } = tileOf(anchor.lon, anchor.lat, z);
          const [a, right, below] = await Promise.all([rgba(raster, z, x, y), rgba(raster, z, x + 1, y), rgba(raster, z, x, y + 1)]);
          let painted = 0;
          let seamX = 0;
          let insideX = 0;
          let seamY = 0;
          let insideY = 0;
          for (let k = 0; k < TILE; k++) {
            // Vertical seam: column 255 of the tile, column 0 of its right neighbour.
            expect(a(TILE - 1, k), `z ${z} left edge row ${k}`).toBe(expected(x * TILE + TILE - 1, y * TILE + k, z));
            expect(right(0, k), `z ${z} right neighbour first column row ${k}`).toBe(expected((x + 1) * TILE, y * TILE + k, z));
            // Horizontal seam: row 255 of the tile, row 0 of the tile below.
            expect(a(k, TILE - 1), `z ${z} bottom edge column ${k}`).toBe(expected(x * TILE + k, y * TILE + TILE - 1, z));
            expect(below(k, 0), `z ${z} lower neighbour first row column ${k}`).toBe(expected(x * TILE + k, (y + 1) * TILE, z));
            if (a(TILE - 1, k) !== '0,0,0,0') painted++;
            seamX += right(0, k) !== a(TILE - 1, k) ? 1 : 0;
            insideX += a(TILE - 1, k) !== a(TILE - 2, k) ? 1 : 0;
            seamY += below(k, 0) !== a(k, TILE - 1) ? 1 : 0;
            insideY += a(k, TILE - 1) !== a(k, TILE - 2) ? 1 : 0;
          }
          // The edges carry data (the test is not comparing two empty tiles).
          expect(painted, `z ${z} painted edge pixels`).toBeGreaterThan(TILE / 2);
          // Class changes across the seam no more frequent than inside (nearest cell: a change is a cell or class boundary; allow a few).
          expect(seamX, `z ${z} vertical seam`).toBeLessThanOrEqual(insideX + 8);
          expect(seamY, `z ${z} horizontal seam`).toBeLessThanOrEqual(insideY + 8);
        }
      } finally {
        await raster.close();
      }
    });
  }
});
