import { afterAll, describe, expect, it } from 'vitest';
import { makeGridFrame } from '../../../server/coverage/geometry.ts';
import { predictArea, type AreaRequest } from '../../../server/coverage/area.ts';
import { runArea, RunCancelledError } from '../../../server/jobs/area-runner.ts';
import { createAreaPool } from '../../../server/jobs/area-runner.ts';
import { makeSyntheticDem } from './synthetic-dem.ts';

const N = 241;
const dem = makeSyntheticDem(N, N, 30, 13, 1.3);
const frame = makeGridFrame({ kind: 'projected', widthPx: N, heightPx: N, geoTransform: [300_000, 30, 0, 5_000_000, 0, -30], siteX: 300_000 + 120.5 * 30, siteY: 5_000_000 - 120.5 * 30 });
const terrain = { frame, elevationM: dem.elevationM };
const base = { radiusM: 3_500, heightAglM: 12, targetHeightAglM: 1.5, kFactor: 4 / 3, frequencyMhz: 868, p1812: { siteLatDeg: 45 } };

describe('worker-thread pool (ray sectors, then row bands, over shared memory)', () => {
  const pool = createAreaPool(2);
  afterAll(() => pool.close());

  it.each(['los', 'fast'] as const)('%s: 2 workers give exactly the single-thread result', async (mode) => {
    const request: AreaRequest = { mode, ...base };
    const single = predictArea(terrain, request);
    const progress: number[] = [];
    const pooled = await runArea(terrain, request, { pool, onProgress: (f) => progress.push(f) });
    if (mode === 'los') {
      expect(pooled.visibleCells).toBe(single.visibleCells);
      expect(Buffer.from(pooled.visible!).equals(Buffer.from(single.visible!))).toBe(true);
    } else {
      expect(Buffer.from(pooled.lossDb!.buffer).equals(Buffer.from(single.lossDb!.buffer))).toBe(true);
    }
    expect(progress.at(-1)).toBe(1);
    for (let i = 1; i < progress.length; i++) expect(progress[i]).toBeGreaterThanOrEqual(progress[i - 1]);
  });

  it('full (P.1812 built inside each worker) matches the single-thread result', async () => {
    const request: AreaRequest = { mode: 'full', ...base, radiusM: 900 };
    const single = predictArea(terrain, request);
    const pooled = await runArea(terrain, request, { pool });
    expect(Buffer.from(pooled.lossDb!.buffer).equals(Buffer.from(single.lossDb!.buffer))).toBe(true);
  });

  it('an aborted signal cancels the run', async () => {
    const controller = new AbortController();
    controller.abort();
    await expect(runArea(terrain, { mode: 'fast', ...base }, { pool, signal: controller.signal })).rejects.toBeInstanceOf(RunCancelledError);
    await expect(runArea(terrain, { mode: 'fast', ...base }, { workers: 1, signal: controller.signal })).rejects.toBeInstanceOf(RunCancelledError);
  });

  it.each(['los', 'fast', 'full'] as const)('%s: 1, 2 and 3 workers give the same bytes (chunks are taken dynamically from shared counters)', async (mode) => {
    const request: AreaRequest = { mode, ...base, radiusM: mode === 'full' ? 900 : 3_500 };
    const pools = [createAreaPool(1), createAreaPool(3)];
    try {
      const runs = [await runArea(terrain, request, { pool: pools[0] }), await runArea(terrain, request, { pool }), await runArea(terrain, request, { pool: pools[1] })];
      const bytes = runs.map((r) => Buffer.from(mode === 'los' ? r.visible! : new Uint8Array(r.lossDb!.buffer)));
      expect(bytes[0].length).toBe(N * N * (mode === 'los' ? 1 : 4));
      expect(bytes[1].equals(bytes[0])).toBe(true);
      expect(bytes[2].equals(bytes[0])).toBe(true);
      if (mode === 'los') expect(new Set(runs.map((r) => r.visibleCells)).size).toBe(1);
      else expect(runs[0].lossDb!.some((v) => v === v)).toBe(true);
    } finally {
      await Promise.all(pools.map((p) => p.close()));
    }
  });

  it('an abort during the run stops every worker (also one waiting at the barrier) and rejects; the pool stays usable', async () => {
    const controller = new AbortController();
    const run = runArea(terrain, { mode: 'full', ...base, radiusM: 3_000 }, { pool, signal: controller.signal, onProgress: () => controller.abort() });
    setTimeout(() => controller.abort(), 30);
    await expect(run).rejects.toBeInstanceOf(RunCancelledError);
    const request: AreaRequest = { mode: 'fast', ...base };
    const again = await runArea(terrain, request, { pool });
    expect(Buffer.from(again.lossDb!.buffer).equals(Buffer.from(predictArea(terrain, request).lossDb!.buffer))).toBe(true);
  });

  it('buffers reused between runs of the same size carry nothing over: back-to-back runs each match their single-thread result', async () => {
    for (const heightAglM of [40, 3, 40]) {
      const request: AreaRequest = { mode: 'fast', ...base, heightAglM };
      const pooled = await runArea(terrain, request, { pool });
      expect(Buffer.from(pooled.lossDb!.buffer).equals(Buffer.from(predictArea(terrain, request).lossDb!.buffer))).toBe(true);
    }
  });
});
