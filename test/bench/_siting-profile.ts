// Focused profile of the siting matrix's path work (not a benchmark module: the
// leading underscore keeps it out of `npm run bench`). In-thread, so
// `node --cpu-prof` sees the hot code:
//   SITING_PROFILE_PAIRS=2000 node --import tsx --cpu-prof --cpu-prof-dir=/tmp/prof test/bench/_siting-profile.ts
// Prints CPU-seconds per pair for the method(s) in SITING_PROFILE_METHODS.
import { cpuUsage } from 'node:process';
import { loadavg, tmpdir } from 'node:os';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { loadConfig } from '../../server/config.ts';
import { openDatabase } from '../../server/db/client.ts';
import { seedDemo } from '../../server/demo.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { computeLinkPath } from '../../server/planning/link-path.ts';
import * as pathModule from '../../server/planning/path.ts';

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

const pairCount = Number(process.env.SITING_PROFILE_PAIRS ?? 1000);
const methods = (process.env.SITING_PROFILE_METHODS ?? 'p1812').split(',');
const dataDir = mkdtempSync(join(tmpdir(), 'earshot-prof-siting-'));
const config = loadConfig({ EARSHOT_DATA_DIR: dataDir, EARSHOT_DEMO: 'off', EARSHOT_WORKERS: '1' });
const db = await openDatabase({ ...config, databaseUrl: undefined }, { memory: true });
try {
  const demo = await seedDemo(db, config);
  const planId = demo.planId as string;
  const nodes = await db.prisma.node.findMany({ where: { planId } });
  const lat0 = Math.min(...nodes.map((n) => n.lat));
  const lat1 = Math.max(...nodes.map((n) => n.lat));
  const lon0 = Math.min(...nodes.map((n) => n.lon));
  const lon1 = Math.max(...nodes.map((n) => n.lon));
  const rand = random(13);
  const pairs = Array.from({ length: pairCount }, () => ({
    node: { lat: lat0 + rand() * (lat1 - lat0), lon: lon0 + rand() * (lon1 - lon0), antennaHeightAglM: 1.5 },
    gateway: { lat: lat0 + rand() * (lat1 - lat0), lon: lon0 + rand() * (lon1 - lon0), antennaHeightAglM: 15 },
  }));
  for (const method of methods) {
    await db.prisma.plan.update({ where: { id: planId }, data: { propagationMethod: method } });
    const plan = await db.prisma.plan.findUniqueOrThrow({ where: { id: planId } });
    const engine = new LinkEngine(db, config, { workers: 0 });
    try {
      const ctx = await engine.planContext(plan);
      // Warm the terrain cache and the JIT on a few pairs.
      for (const p of pairs.slice(0, 20)) await computeLinkPath(ctx.terrain, ctx.settings, p.node, p.gateway);
      const c0 = cpuUsage();
      const t0 = performance.now();
      let points = 0;
      let lossSum = 0;
      const dump: string[] = [];
      // As a link worker does (the scratch exists after this change; the code before has none).
      const scratch = 'newPathScratch' in pathModule ? (pathModule as unknown as { newPathScratch: () => never }).newPathScratch() : undefined;
      for (const p of pairs) {
        const path = await computeLinkPath(ctx.terrain, ctx.settings, p.node, p.gateway, scratch);
        if (process.env.SITING_PROFILE_DUMP) dump.push(JSON.stringify(path));
        lossSum += path.basicLossDb;
        points += path.distanceM / 30;
      }
      const wall = (performance.now() - t0) / 1000;
      const c = cpuUsage(c0);
      // Every path in full (JSON keeps every double's shortest round-trip text): before/after must be byte-identical.
      if (process.env.SITING_PROFILE_DUMP) writeFileSync(`${process.env.SITING_PROFILE_DUMP}.${method}.jsonl`, dump.join('\n') + '\n');
      const cpu = (c.user + c.system) / 1e6;
      console.log(`${method}: ${pairCount} pairs, ${wall.toFixed(2)} s wall, ${cpu.toFixed(2)} CPU-s, ${((cpu / pairCount) * 1000).toFixed(2)} CPU-ms/pair, ~${(points / pairCount).toFixed(0)} points/pair, mean loss ${(lossSum / pairCount).toFixed(4)} dB; load ${loadavg()[0].toFixed(2)}`);
    } finally {
      await engine.close();
    }
  }
} finally {
  await db.close();
  rmSync(dataDir, { recursive: true, force: true });
}
