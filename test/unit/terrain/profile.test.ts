// extractProfile: ends, spacing, default step, NoData, clutter, projected layers.
import { describe, expect, it } from 'vitest';
import { writeGeoTiff, type GeoTransform } from '../../../server/terrain/geotiff-writer.ts';
import { openGeoRaster } from '../../../server/terrain/raster.ts';
import { TerrainStore } from '../../../server/terrain/store.ts';
import { clutterClassName, extractProfile } from '../../../server/terrain/profile.ts';
import { geodesicInverse } from '../../../server/terrain/geodesic.ts';
import { toArrayBuffer } from './tiff-patch.ts';

async function raster(width: number, height: number, gt: GeoTransform, epsg: number, f: (c: number, r: number) => number, noData?: number) {
  const data = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) data[r * width + c] = f(c, r);
  return openGeoRaster(toArrayBuffer(writeGeoTiff({ widthPx: width, heightPx: height, data, geoTransform: gt, epsg, noData, tiled: { tileSizePx: 64 }, compression: 'deflate' })));
}

const hills = (c: number, r: number) => 200 + 80 * Math.sin(c / 17) * Math.cos(r / 23) + 0.3 * c;

describe('extractProfile', () => {
  it('first point at from, last at to, evenly spaced at ≤ stepM, distances along the geodesic', async () => {
    const store = new TerrainStore();
    store.addLayer(await raster(400, 300, [5.8, 0.001, 0, 50.0, 0, -0.001], 4326, hills), { kind: 'elevation' });
    const from = { lat: 49.75, lon: 5.85 };
    const to = { lat: 49.9, lon: 6.15 };
    const p = await extractProfile(store, from, to, { stepM: 30 });
    const length = geodesicInverse(from, to).distanceM;
    expect(p.lengthM).toBeCloseTo(length, 6);
    expect(p.distanceM.length).toBe(Math.ceil(length / 30) + 1);
    expect(p.stepM).toBeLessThanOrEqual(30);
    expect([p.lat[0], p.lon[0], p.distanceM[0]]).toEqual([from.lat, from.lon, 0]);
    expect([p.lat.at(-1), p.lon.at(-1), p.distanceM.at(-1)]).toEqual([to.lat, to.lon, p.lengthM]);
    expect(p.noDataPoints).toBe(0);
    expect(p.clutterClass).toBeUndefined();
    // Heights are those of the store at the same positions.
    const direct = await store.sampleElevations(p.lat, p.lon, 'bilinear');
    expect(Array.from(p.groundM)).toEqual(Array.from(direct));
  });

  it('default step: the finest resolution among layers under the path', async () => {
    const store = new TerrainStore();
    store.addLayer(await raster(100, 100, [5.0, 0.01, 0, 50.0, 0, -0.01], 4326, () => 10), { kind: 'elevation', name: 'coarse, everywhere' });
    store.addLayer(await raster(100, 100, [5.0, 0.0005, 0, 50.0, 0, -0.0005], 4326, () => 20), { kind: 'elevation', name: 'fine, north-west corner' });
    const far = await extractProfile(store, { lat: 49.3, lon: 5.5 }, { lat: 49.2, lon: 5.7 });
    expect(far.stepM).toBeLessThanOrEqual(store.elevationLayers[1].resolutionM);
    expect(far.stepM).toBeGreaterThan(store.elevationLayers[1].resolutionM * 0.95);
    const near = await extractProfile(store, { lat: 49.99, lon: 5.01 }, { lat: 49.97, lon: 5.04 });
    expect(near.stepM).toBeLessThanOrEqual(store.elevationLayers[0].resolutionM);
    expect(near.groundM[0]).toBe(20);
  });

  it('NoData along the path is NaN (counted), never 0; a path leaving the DEM ends in NaN', async () => {
    const store = new TerrainStore();
    store.addLayer(await raster(200, 200, [6.0, 0.001, 0, 50.0, 0, -0.001], 4326, (c) => (c >= 90 && c < 110 ? -9999 : 300), -9999), { kind: 'elevation' });
    const p = await extractProfile(store, { lat: 49.9, lon: 6.01 }, { lat: 49.9, lon: 6.25 }, { stepM: 20, interpolation: 'nearest' });
    let nan = 0;
    for (let i = 0; i < p.groundM.length; i++) {
      const lonPx = (p.lon[i] - 6.0) / 0.001;
      const inside = lonPx < 200;
      const gap = lonPx >= 90 && lonPx < 110;
      if (!inside || gap) {
        expect(Number.isNaN(p.groundM[i])).toBe(true);
        nan++;
      } else {
        expect(p.groundM[i]).toBe(300);
      }
    }
    expect(p.noDataPoints).toBe(nan);
    expect(nan).toBeGreaterThan(100);
  });

  it('projected (UTM) layer: node-exact transforms with linear interpolation give the heights of exact per-point transforms', async () => {
    const store = new TerrainStore();
    store.addLayer(await raster(1000, 1000, [300000, 30, 0, 5550000, 0, -30], 32632, hills), { kind: 'elevation' });
    const a = store.elevationLayers[0].raster.pixelToLonLat(50, 60);
    const b = store.elevationLayers[0].raster.pixelToLonLat(950, 900);
    const p = await extractProfile(store, { lat: a.lat, lon: a.lon }, { lat: b.lat, lon: b.lon }, { stepM: 30 });
    const exact = await store.sampleElevations(p.lat, p.lon, 'bilinear'); // proj4 at every point
    let worst = 0;
    for (let i = 0; i < exact.length; i++) worst = Math.max(worst, Math.abs(exact[i] - p.groundM[i]));
    // Slopes here are below 5 m per 30 m pixel, so a 1 mm position error moves heights by < 0.2 mm.
    expect(worst).toBeLessThan(2e-4);
    expect(p.noDataPoints).toBe(0);
  });

  it('with a clutter layer, each point carries the clutter class and representative height', async () => {
    const store = new TerrainStore({ clutterHeightsM: { suburban: 12 } });
    store.addLayer(await raster(100, 100, [6.0, 0.001, 0, 50.0, 0, -0.001], 4326, () => 100), { kind: 'elevation' });
    store.addLayer(await raster(100, 100, [6.0, 0.001, 0, 50.0, 0, -0.001], 4326, (c) => (c < 50 ? 3 : 5)), { kind: 'clutter' });
    const p = await extractProfile(store, { lat: 49.95, lon: 6.01 }, { lat: 49.95, lon: 6.09 }, { stepM: 50 });
    expect(clutterClassName(p.clutterClass![0])).toBe('suburban');
    expect(p.clutterHeightM![0]).toBe(12);
    expect(clutterClassName(p.clutterClass!.at(-1)!)).toBe('trees');
    expect(p.clutterHeightM!.at(-1)).toBe(15);
  });

  it('bad input is refused with the field and the rule', async () => {
    const store = new TerrainStore();
    await expect(extractProfile(store, { lat: 0, lon: 0 }, { lat: 0.1, lon: 0 })).rejects.toThrow(/no elevation layer/);
    store.addLayer(await raster(10, 10, [0, 0.01, 0, 0.1, 0, -0.01], 4326, () => 1), { kind: 'elevation' });
    await expect(extractProfile(store, { lat: 91, lon: 0 }, { lat: 0, lon: 0 })).rejects.toThrow(/from.lat must be within ±90°/);
    await expect(extractProfile(store, { lat: 0, lon: 0 }, { lat: 0.05, lon: 0 }, { stepM: 0 })).rejects.toThrow(/stepM must be a positive/);
    await expect(extractProfile(store, { lat: 0, lon: 0 }, { lat: 10, lon: 0 }, { stepM: 0.5 })).rejects.toThrow(/more than the limit/);
  });

  it('from = to gives two points at distance 0', async () => {
    const store = new TerrainStore();
    store.addLayer(await raster(10, 10, [0, 0.01, 0, 0.1, 0, -0.01], 4326, () => 1), { kind: 'elevation' });
    const p = await extractProfile(store, { lat: 0.05, lon: 0.05 }, { lat: 0.05, lon: 0.05 });
    expect(Array.from(p.distanceM)).toEqual([0, 0]);
    expect(Array.from(p.groundM)).toEqual([1, 1]);
  });
});
