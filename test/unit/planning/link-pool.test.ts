// The link worker pool (server/jobs/link-pool.ts) predicts the same paths as
// the in-thread function (server/planning/link-path.ts): same terrain file,
// same code, so the figures agree to the last 0.001 dB (they are in fact equal).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { LinkPathPool, type LinkPathPair, type LinkTerrainSpec } from '../../../server/jobs/link-pool.ts';
import { computeLinkPath, type LinkPathSettings } from '../../../server/planning/link-path.ts';
import { DEFAULT_PATH_SETTINGS } from '../../../server/planning/path.ts';
import { writeGeoTiff } from '../../../server/terrain/geotiff-writer.ts';
import { openTerrainStore, type TerrainStore } from '../../../server/terrain/store.ts';

const CENTRE = { lat: 45.1, lon: 7.3 };
const SIZE_PX = 300;
const CELL_DEG = 0.0003;

let dir: string;
let spec: LinkTerrainSpec;
let store: TerrainStore;
const pool = new LinkPathPool(2);
const settings: LinkPathSettings = { path: { ...DEFAULT_PATH_SETTINGS, frequencyMhz: 915 }, profileStepM: null, profileInterpolation: 'bilinear' };

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'earshot-link-pool-'));
  // Synthetic relief: ridges and a valley (our own invented terrain).
  const data = new Float32Array(SIZE_PX * SIZE_PX);
  for (let y = 0; y < SIZE_PX; y++) for (let x = 0; x < SIZE_PX; x++) data[y * SIZE_PX + x] = 400 + 120 * Math.sin(x / 23) * Math.cos(y / 31) + 60 * Math.sin((x + y) / 9);
  const west = CENTRE.lon - (SIZE_PX / 2) * CELL_DEG;
  const north = CENTRE.lat + (SIZE_PX / 2) * CELL_DEG;
  const path = join(dir, 'relief.tif');
  writeFileSync(path, writeGeoTiff({ widthPx: SIZE_PX, heightPx: SIZE_PX, data, geoTransform: [west, CELL_DEG, 0, north, 0, -CELL_DEG], epsg: 4326, compression: 'deflate' }));
  spec = { signature: 'relief', files: [{ path, kind: 'elevation', name: 'relief' }], options: { cacheBytes: 16 * 1024 * 1024 } };
  store = await openTerrainStore(spec.files, spec.options);
});

afterAll(async () => {
  await pool.close();
  await store?.close();
  rmSync(dir, { recursive: true, force: true });
});

function pairs(count: number): LinkPathPair[] {
  const out: LinkPathPair[] = [];
  for (let i = 0; i < count; i++) {
    const a = (i / count) * 2 * Math.PI;
    out.push({
      node: { lat: CENTRE.lat + 0.035 * Math.sin(a), lon: CENTRE.lon + 0.035 * Math.cos(a), antennaHeightAglM: 1 + (i % 4) },
      gateway: { lat: CENTRE.lat - 0.01 * Math.cos(a), lon: CENTRE.lon + 0.012 * Math.sin(2 * a), antennaHeightAglM: 12 + (i % 3) * 5 },
    });
  }
  return out;
}

describe('link worker pool (server/jobs/link-pool.ts)', () => {
  it('predicts the same basic loss as the in-thread path for each of 30 links, to 0.001 dB, over both workers', async () => {
    const list = pairs(30);
    const pooled = await pool.computePaths(spec, settings, list);
    expect(pooled).toHaveLength(list.length);
    for (let i = 0; i < list.length; i++) {
      const local = await computeLinkPath(store, settings, list[i].node, list[i].gateway);
      expect(Math.abs(pooled[i].basicLossDb - local.basicLossDb)).toBeLessThan(0.001);
      expect(Math.abs(pooled[i].nodeElevationDeg - local.nodeElevationDeg)).toBeLessThan(1e-9);
      expect(pooled[i].distanceM).toBeCloseTo(local.distanceM, 6);
      expect(pooled[i].lineOfSight).toBe(local.lineOfSight);
      expect(pooled[i].terms).toEqual(local.terms);
    }
    // Not every path is clear: the relief matters, so the comparison is not trivial.
    expect(pooled.some((p) => p.excessLossDb > 3)).toBe(true);
    expect(pool.lastThreads.size).toBe(2);
  }, 60_000);

  it('without terrain both sides run over a smooth earth and agree', async () => {
    const list = pairs(4);
    const pooled = await pool.computePaths(null, settings, list);
    for (let i = 0; i < list.length; i++) {
      const local = await computeLinkPath(null, settings, list[i].node, list[i].gateway);
      expect(Math.abs(pooled[i].basicLossDb - local.basicLossDb)).toBeLessThan(0.001);
    }
  }, 60_000);

  it('a missing terrain file answers with the error, not a hang', async () => {
    const bad: LinkTerrainSpec = { signature: 'missing', files: [{ path: join(dir, 'nope.tif'), kind: 'elevation' }], options: {} };
    await expect(pool.computePaths(bad, settings, pairs(2))).rejects.toThrow(/nope\.tif|ENOENT|no such file/i);
  }, 60_000);
});
