// Benchmark of gateway siting (`npm run bench -- siting`):
//  1. the node × candidate matrix on the demo terrain (SYNTHETIC Kestrel Flat DEM,
//     30 m) for SITING_BENCH_NODES nodes (default 2000) × SITING_BENCH_CANDIDATES
//     candidate sites (default 200), through the link engine and its worker pool,
//     with P.1812 and with the fast method (Bullington, ITU-R P.526), side by side;
//  2. the MILP (HiGHS) to proven optimum or the 10 s limit, against greedy set
//     cover on the same matrix (objective and time), for k = 1, 2, 3.
// Figures are printed; nothing is asserted (benchmarks are not tests).
import { loadavg } from 'node:os';
import { performance } from 'node:perf_hooks';
import type { Highs } from 'highs';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadConfig } from '../../server/config.ts';
import { openDatabase } from '../../server/db/client.ts';
import { seedDemo } from '../../server/demo.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { computeSitingMatrix, matrixInputs, type SitingCandidate } from '../../server/jobs/siting-matrix.ts';
import { coverInstance, selectionCostUsd, selectionCount } from '../../server/siting/cover.ts';
import { solveSiting } from '../../server/siting/milp.ts';
import { loadHighs } from '../../server/app/siting.ts';

/** Deterministic PRNG (mulberry32). */
function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export async function run(): Promise<void> {
  const nodeCount = Number(process.env.SITING_BENCH_NODES ?? 2000);
  const candidateCount = Number(process.env.SITING_BENCH_CANDIDATES ?? 200);
  const methods = (process.env.SITING_BENCH_METHODS ?? 'p1812,bullington').split(',');
  // The database and engine only (no HTTP app: its start-up is not what is measured).
  const dataDir = mkdtempSync(join(tmpdir(), 'earshot-bench-siting-'));
  const config = loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off' });
  const db = await openDatabase({ ...config, databaseUrl: undefined }, { memory: true });
  const t = { db, config };
  try {
    const demo = await seedDemo(t.db, t.config);
    const planId = demo.planId as string;
    const demoNodes = await t.db.prisma.node.findMany({ where: { planId } });
    const lat0 = Math.min(...demoNodes.map((n) => n.lat));
    const lat1 = Math.max(...demoNodes.map((n) => n.lat));
    const lon0 = Math.min(...demoNodes.map((n) => n.lon));
    const lon1 = Math.max(...demoNodes.map((n) => n.lon));
    const rand = random(13);
    const template = demoNodes[0];
    await t.db.prisma.gateway.deleteMany({ where: { planId } });
    await t.db.prisma.node.deleteMany({ where: { planId } });
    const { id: _id, createdAt: _c, updatedAt: _u, version: _v, ...rest } = template;
    await t.db.prisma.node.createMany({ data: Array.from({ length: nodeCount }, (_x, n) => ({ ...rest, name: `Bench node ${n + 1}`, lat: lat0 + rand() * (lat1 - lat0), lon: lon0 + rand() * (lon1 - lon0) })) });
    const candidates: SitingCandidate[] = Array.from({ length: candidateCount }, (_x, n) => ({
      id: `bench:${n + 1}`,
      source: 'site',
      siteId: null,
      gatewayId: null,
      name: `Bench site ${n + 1}`,
      lat: lat0 + rand() * (lat1 - lat0),
      lon: lon0 + rand() * (lon1 - lon0),
      antennaDesignId: 'collinear-fibreglass-6dbi',
      antennaHeightAglM: 15,
      feedlineId: 'low-loss-10mm',
      feedlineLengthM: 18,
      mastOptionId: null,
      noiseFigureDb: 6,
      costUsd: 200 + Math.round(rand() * 2800),
      fixed: false,
    }));
    console.log(`${nodeCount} nodes × ${candidateCount} candidates on the demo terrain (SYNTHETIC 30 m DEM); load average before: ${loadavg().map((l) => l.toFixed(2)).join(' ')}`);
    let lastMatrix: { meets: boolean[][] } | null = null;
    for (const method of methods) {
      await t.db.prisma.plan.update({ where: { id: planId }, data: { propagationMethod: method } });
      const plan = await t.db.prisma.plan.findUniqueOrThrow({ where: { id: planId } });
      const engine = new LinkEngine(t.db, t.config);
      try {
        const ctx = await engine.planContext(plan);
        await engine.workersReady();
        const t0 = performance.now();
        const c0 = process.cpuUsage();
        const inputs = await matrixInputs(engine, ctx, candidates);
        // SITING_BENCH_AREA_MIN=lowest: heights over the lowest ground under the nodes and candidates (as
        // a run with terrain points measures them over its area's lowest ground), so pairs may lie beyond
        // the horizon allowance; default: over sea level (no pair beyond it on the demo terrain).
        let areaMinElevationM: number | null = null;
        if (process.env.SITING_BENCH_AREA_MIN === 'lowest' && ctx.terrain) {
          for (const p of [...inputs.nodes.map((n) => n.row), ...candidates]) {
            const z = await ctx.terrain.sampleElevation(p.lat, p.lon);
            if (z !== null && (areaMinElevationM === null || z < areaMinElevationM)) areaMinElevationM = z;
          }
        }
        const matrix = await computeSitingMatrix(engine, ctx, candidates, inputs, { areaMinElevationM });
        const seconds = (performance.now() - t0) / 1000;
        // CPU time of the whole process (main thread + worker threads + GC), less sensitive to the machine's load than wall time.
        const cpu = process.cpuUsage(c0);
        const cpuSeconds = (cpu.user + cpu.system) / 1e6;
        const meets = matrix.meets.reduce((n, row) => n + row.filter(Boolean).length, 0);
        const heapMb = process.memoryUsage().heapUsed / 2 ** 20;
        console.log(
          `matrix ${method.padEnd(10)} ${seconds.toFixed(1).padStart(7)} s wall, ${cpuSeconds.toFixed(1)} CPU-s (${((cpuSeconds / Math.max(1, matrix.pairsPredicted)) * 1000).toFixed(3)} CPU-ms/pair) on ${engine.workerCount} worker threads; ${matrix.pairsPredicted} pairs predicted (${(matrix.pairsPredicted / seconds).toFixed(0)} /s), ${matrix.pairsSkipped} skipped; ${meets} pairs meet the target; heap ${heapMb.toFixed(0)} MB; load ${loadavg()[0].toFixed(2)}`,
        );
        // SITING_BENCH_DUMP=<prefix>: the matrix as JSON, to compare two versions of the code byte for byte.
        if (process.env.SITING_BENCH_DUMP) writeFileSync(`${process.env.SITING_BENCH_DUMP}.${method}.json`, JSON.stringify({ meets: matrix.meets, marginDb: matrix.marginDb, pairsPredicted: matrix.pairsPredicted, pairsSkipped: matrix.pairsSkipped }));
        // The solve runs on the first method's matrix (P.1812 by default).
        if (method === methods[0]) lastMatrix = matrix;
      } finally {
        await engine.close();
      }
    }
    if (!lastMatrix) return;
    const highs: Highs = await loadHighs();
    const costs = candidates.map((c) => c.costUsd);
    const instance = coverInstance(lastMatrix.meets, candidates.length, costs);
    for (const k of [1, 2, 3]) {
      for (const minimise of ['gateways', 'cost'] as const) {
        const solution = solveSiting(highs, instance, { requiredGateways: k, minimise }, { timeLimitS: 10 });
        const g = solution.greedy.selected;
        console.log(
          `k=${k} ${minimise.padEnd(8)} HiGHS: ${selectionCount(solution.selected)} gateways, ${selectionCostUsd(instance, solution.selected).toFixed(0)} USD, ${solution.status}, gap ${Number.isFinite(solution.gapPercent) ? solution.gapPercent.toFixed(2) : '?'} %, ${solution.seconds.toFixed(2)} s | greedy: ${selectionCount(g)} gateways, ${selectionCostUsd(instance, g).toFixed(0)} USD, ${(solution.greedy.seconds * 1000).toFixed(1)} ms`,
        );
      }
    }
    const budget = solveSiting(highs, instance, { requiredGateways: 1, maxGateways: 3 }, { timeLimitS: 10 });
    const greedyCovered = selectionCount(budget.greedy.covered);
    console.log(`budget variant k=1, at most 3 gateways: HiGHS ${budget.objective} nodes covered (${budget.status}, ${budget.seconds.toFixed(2)} s) | greedy ${greedyCovered} nodes covered (${(budget.greedy.seconds * 1000).toFixed(1)} ms)`);
    console.log(`load average after: ${loadavg().map((l) => l.toFixed(2)).join(' ')}`);
  } finally {
    await db.close();
    rmSync(dataDir, { recursive: true, force: true });
  }
}
