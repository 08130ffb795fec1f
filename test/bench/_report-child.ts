// Child process of `npm run bench -- report`: opens the bench's PostgreSQL database,
// makes one plan's report with a warm link cache and prints wall time and the
// process's peak RSS (the whole process: Node, Prisma, the fleet, the map, the PDF).
import { performance } from 'node:perf_hooks';
import { loadConfig } from '../../server/config.ts';
import { openDatabase } from '../../server/db/client.ts';
import { findPlanById } from '../../server/db/repositories/links.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { planReport } from '../../server/app/report.ts';

const config = { ...loadConfig({ ...process.env, EARSHOT_DEMO: 'off' }), filesDir: process.env.BENCH_FILES_DIR as string };
const db = await openDatabase(config);
const engine = new LinkEngine(db, config, { workers: 0 });
const plan = await findPlanById(db, process.env.BENCH_PLAN_ID as string);
if (!plan) throw new Error('bench plan not found');
const start = performance.now();
const report = await planReport(engine, config, plan);
const ms = performance.now() - start;
console.log(JSON.stringify({ ms, bytes: report.pdf.length, maxRssMb: process.resourceUsage().maxRSS / 1024 }));
await engine.close();
await db.close();
