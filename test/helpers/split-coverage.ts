// What the two split-coverage test files share (test/api/coverage-split.test.ts in process,
// coverage-split-queue.test.ts on queue workers): a synthetic UTM 33N terrain uploaded to a plan,
// grid cells placed as lon/lat, the coverage run's view, and a run's result files compared byte for byte.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import proj4 from 'proj4';
import type request from 'supertest';
import { expect } from 'vitest';
import { RESULT_FILES, resultDir } from '../../server/db/files.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';
import type { TestApp } from './test-app.ts';

const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const ORIGIN_X = 500_000;
const ORIGIN_Y = 4_100_000;
const CELL_M = 30;

/** The centre of grid cell (col, row) of the synthetic terrain, as lon/lat. */
export function lonLatOf(col: number, row: number): { lat: number; lon: number } {
  const [lon, lat] = proj4(UTM33, 'WGS84', [ORIGIN_X + (col + 0.5) * CELL_M, ORIGIN_Y - (row + 0.5) * CELL_M]) as [number, number];
  return { lat, lon };
}

/** Uploads a synthetic sizePx × sizePx terrain of 30 m cells (EPSG:32633) to the plan. */
export async function uploadSyntheticTerrain(http: ReturnType<typeof request>, auth: { Authorization: string }, planId: string, sizePx: number, hills: number): Promise<void> {
  const dem = makeSyntheticDem(sizePx, sizePx, CELL_M, hills, 1);
  const bytes = Buffer.from(writeGeoTiff({ widthPx: sizePx, heightPx: sizePx, data: dem.elevationM, geoTransform: [ORIGIN_X, CELL_M, 0, ORIGIN_Y, 0, -CELL_M], epsg: 32633, noData: -9999 }));
  const res = await http.post(`/api/v1/plans/${planId}/terrain`).set(auth).set('Content-Type', 'image/tiff').send(bytes);
  expect(res.status, JSON.stringify(res.body)).toBe(201);
}

/** GET /plans/{id}/coverage/{runId}, the parts these tests read. */
export interface CoverageRunView {
  id: string;
  status: string;
  progress: number;
  error: string | null;
  attempts: number;
  children: { total: number; done: number; retried: number; failed: number; cancelled: number } | null;
  workers: string[];
  summary: Record<string, unknown> | null;
}

/** The result files of a run, meta.json without its run id (the one field that names the run). */
export function resultFiles(config: TestApp['config'], runId: string): Record<string, string> {
  const dir = resultDir(config, runId);
  const out: Record<string, string> = {};
  for (const name of Object.values(RESULT_FILES)) {
    const bytes = readFileSync(join(dir, name));
    if (name === RESULT_FILES.meta) {
      const { runId: _id, ...rest } = JSON.parse(bytes.toString('utf8')) as Record<string, unknown>;
      out[name] = JSON.stringify(rest);
    } else out[name] = bytes.toString('base64');
  }
  return out;
}
