// Seams between neighbouring tiles (issue 19): two adjacent zoom-13 hillshade tiles over smooth
// terrain sample the same global pixel grid (centres at x·256 + c + 0.5), so the step across the
// seam (last column of the left tile → first of the right; last row → first row below) is no
// larger than the steps between neighbouring columns/rows inside a tile. And over a DEM with overviews,
// two tiles one above the other shade from the same overview level even where their own Mercator
// cell sizes (∝ cos φ) lie either side of 2 × the DEM's cell size.
import { describe, expect, it } from 'vitest';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { renderHillshadeTile } from '../../../server/terrain/tiles.ts';
import { decodePng } from '../../../server/terrain/png.ts';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { mercatorPixelSizeM, mercatorPixelToLonLat } from '../../../server/terrain/hillshade.ts';

function smoothDem(): ArrayBuffer {
  const size = 600;
  const data = new Float32Array(size * size);
  for (let r = 0; r < size; r++) for (let c = 0; c < size; c++) data[r * size + c] = 300 + 60 * Math.sin(c / 40) * Math.cos(r / 55) + 0.2 * c;
  const bytes = writeGeoTiff({ widthPx: size, heightPx: size, data, geoTransform: [280000, 30, 0, 5530000, 0, -30], epsg: 32632, noData: -9999, tiled: { tileSizePx: 64 }, compression: 'deflate' });
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
}

const grey = (png: Uint8Array) => {
  const d = decodePng(png);
  return (c: number, r: number) => d.pixels[(r * 256 + c) * 2];
};

describe('hillshade tile seams at zoom 13', () => {
  it('the step across a vertical and a horizontal seam is like the steps inside the tiles', async () => {
    const raster = await openGeoRaster(smoothDem());
    try {
      const centre = raster.pixelToLonLat(300, 300);
      const z = 13;
      const n = 2 ** z;
      const x = Math.floor(((centre.lon + 180) / 360) * n);
      const rad = (centre.lat * Math.PI) / 180;
      const y = Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n);
      const [a, right, below] = await Promise.all([renderHillshadeTile([raster], z, x, y), renderHillshadeTile([raster], z, x + 1, y), renderHillshadeTile([raster], z, x, y + 1)]);
      for (const t of [a, right, below]) expect(t.hasData).toBe(true);
      const ga = grey(a.png);
      const gr = grey(right.png);
      const gb = grey(below.png);
      let seamX = 0;
      let insideX = 0;
      let seamY = 0;
      let insideY = 0;
      for (let k = 0; k < 256; k++) {
        seamX += Math.abs(gr(0, k) - ga(255, k));
        insideX += Math.abs(ga(255, k) - ga(254, k));
        seamY += Math.abs(gb(k, 0) - ga(k, 255));
        insideY += Math.abs(ga(k, 255) - ga(k, 254));
      }
      // Mean grey step per pixel (0–255 scale): across the seam within 1 grey level of the step inside.
      expect(seamX / 256).toBeLessThanOrEqual(insideX / 256 + 1);
      expect(seamY / 256).toBeLessThanOrEqual(insideY / 256 + 1);
    } finally {
      await raster.close();
    }
  });
});

describe('hillshade overview level at zoom 12–14', () => {
  it('a tile and the one below it read the same level where 2 × the DEM cell size lies between their own cell sizes', async () => {
    // Detail at 2–3 cells, so full resolution and the 2× overview shade visibly differently.
    const size = 1200;
    const data = new Float32Array(size * size);
    for (let r = 0; r < size; r++) for (let c = 0; c < size; c++) data[r * size + c] = 300 + 40 * Math.sin(c / 3.1) * Math.cos(r / 2.7) + 25 * Math.sin(c / 17 + r / 13);
    const eastingM = 480000;
    const northingM = 5540000;
    const open = async (cellM: number, overviews: boolean) => {
      const bytes = writeGeoTiff({ widthPx: size, heightPx: size, data, geoTransform: [eastingM - (size / 2) * cellM, cellM, 0, northingM + (size / 2) * cellM, 0, -cellM], epsg: 32632, noData: -9999, tiled: { tileSizePx: 64 }, compression: 'deflate', ...(overviews ? { overviews: [2, 4] } : {}) });
      return openGeoRaster(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer);
    };
    const probe = await open(10, false);
    const centre = probe.pixelToLonLat(size / 2, size / 2);
    await probe.close();
    for (const z of [12, 13, 14]) {
      const n = 2 ** z;
      const rad = (centre.lat * Math.PI) / 180;
      const x = Math.floor(((centre.lon + 180) / 360) * n);
      const y = Math.floor(((1 - Math.log(Math.tan(rad) + 1 / Math.cos(rad)) / Math.PI) / 2) * n);
      // Each tile's own cell size at its centre row; the DEM's 2× overview falls between the two.
      const northCellM = mercatorPixelSizeM(mercatorPixelToLonLat(0, y * 256 + 128, z).lat, z);
      const southCellM = mercatorPixelSizeM(mercatorPixelToLonLat(0, (y + 1) * 256 + 128, z).lat, z);
      const cellM = (northCellM + southCellM) / 4;
      const [withOverviews, fullOnly] = await Promise.all([open(cellM, true), open(cellM, false)]);
      try {
        const render = (raster: typeof withOverviews, ty: number) => renderHillshadeTile([raster], z, x, ty);
        const [north, south, northFull, southFull] = await Promise.all([render(withOverviews, y), render(withOverviews, y + 1), render(fullOnly, y), render(fullOnly, y + 1)]);
        for (const t of [north, south]) expect(t.hasData, `z ${z}`).toBe(true);
        // Mean grey difference from the full-resolution render: 0 when a tile read level 0.
        const fromFull = (a: Uint8Array, b: Uint8Array) => {
          const ga = grey(a);
          const gb = grey(b);
          let sum = 0;
          for (let r = 0; r < 256; r++) for (let c = 0; c < 256; c++) sum += Math.abs(ga(c, r) - gb(c, r));
          return sum / 65536;
        };
        const northLevel0 = fromFull(north.png, northFull.png) === 0;
        const southLevel0 = fromFull(south.png, southFull.png) === 0;
        expect(southLevel0, `z ${z}: north tile ${northLevel0 ? 'full resolution' : 'an overview'}, the one below ${southLevel0 ? 'full resolution' : 'an overview'}`).toBe(northLevel0);
      } finally {
        await Promise.all([withOverviews.close(), fullOnly.close()]);
      }
    }
  });
});
