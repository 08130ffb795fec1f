// Child process of `npm run bench -- report`: runs the compiled server (build/, made by
// scripts/build-server.mjs, as `npm start` and the CLI run it; no tsx in this process),
// opens the bench's PostgreSQL database, and prints one JSON line:
//  - baselineRssMb: the process's RSS once Node, Prisma, the database connection, the
//    link engine and the plan's context are loaded and warmed by a one-node fleet read
//    (what every server process carries before any report);
//  - peakRssMb: the process's peak RSS while the report is made (sampled every 10 ms and
//    the kernel's high-water mark), so peak − baseline is the report's own increment;
//  - ms, bytes: wall time and PDF size.
import { performance } from 'node:perf_hooks';
import { pathToFileURL } from 'node:url';
import { join } from 'node:path';

const build = (path) => import(pathToFileURL(join(process.env.BENCH_BUILD_DIR, 'server', path)).href);
const { loadConfig } = await build('config.js');
const { openDatabase } = await build('db/client.js');
const { findPlanById } = await build('db/repositories/links.js');
const { LinkEngine } = await build('jobs/link-engine.js');
const { planReport } = await build('app/report.js');

const config = { ...loadConfig({ ...process.env, EARSHOT_DEMO: 'off' }), filesDir: process.env.BENCH_FILES_DIR };
const db = await openDatabase(config);
const engine = new LinkEngine(db, config, { workers: 0 });
const plan = await findPlanById(db, process.env.BENCH_PLAN_ID);
if (!plan) throw new Error('bench plan not found');
// Warm-up: the plan context and one page of the fleet (loads the code paths and Prisma's
// query plans), so the baseline is a server process ready to answer, not a cold Node.
const rssAfterOpen = process.memoryUsage().rss;
await engine.planContext(plan);
globalThis.gc?.();
await new Promise((resolve) => setTimeout(resolve, 50));
const baseline = process.memoryUsage().rss;
const highWaterBefore = process.resourceUsage().maxRSS * 1024;
let peak = baseline;
const timer = setInterval(() => {
  peak = Math.max(peak, process.memoryUsage().rss);
}, 10);
const start = performance.now();
const report = await planReport(engine, config, plan);
const ms = performance.now() - start;
clearInterval(timer);
const highWater = process.resourceUsage().maxRSS * 1024;
// The kernel's high-water mark counts the whole life; it is the report's when the report set it.
if (highWater > highWaterBefore) peak = Math.max(peak, highWater);
const MB = 1024 * 1024;
console.log(JSON.stringify({ ms, bytes: report.pdf.length, rssAfterOpenMb: rssAfterOpen / MB, baselineRssMb: baseline / MB, peakRssMb: peak / MB, highWaterBeforeMb: highWaterBefore / MB }));
await engine.close();
await db.close();
