// Scale bench of fleet link table runs (`npm run bench -- scale`, issue 20):
// a synthetic fleet (default 20 000 nodes × 200 gateways on a jittered grid,
// our own invented scenario; pairs beyond the plan's link range skipped) on
// PostgreSQL and Redis, the same run over 1, 2 and 4 `npm run worker`
// processes (one link thread each), cold cache every time (rows deleted and the
// table vacuumed before each N). Reports per N: wall
// time, pairs/s, pairs/s per process, parallel efficiency against N = 1, the
// database write share (time inside the tiles' write transactions over the
// tiles' time), the workers' CPU time per pair (from /proc: independent of the
// machine's load, unlike wall time) and the CPU the PostgreSQL server used.
// Smaller runs: SCALE_NODES, SCALE_GATEWAYS (the area scales with the gateways,
// so each node keeps about the same number of gateways in range), SCALE_N
// (e.g. "1,2"), SCALE_TILE_PAIRS, SCALE_RANGE_KM. SCALE_WORKER=tsx runs the workers from the
// sources through tsx instead of the compiled tree; SCALE_WORKER_NODE_ARGS adds node options to
// each worker (e.g. "--cpu-prof --cpu-prof-dir=/tmp/prof").
import { spawn, spawnSync, execFileSync, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { join } from 'node:path';
import { Redis } from 'ioredis';
import { createTestApp, postgresAvailable, type TestApp } from '../helpers/test-app.ts';
import { createFleetFixture } from '../helpers/fleet-fixture.ts';

const REDIS_URL = process.env.EARSHOT_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
const CLOCK_TICKS = 100; // USER_HZ of Linux /proc/<pid>/stat (from memory: 100 on every common build)

/** CPU seconds (user + system) a process has used, from /proc/<pid>/stat; null when it is gone. */
function cpuSeconds(pid: number): number | null {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    // Fields after the name: state is [0], utime [11], stime [12] (proc(5), fields 14 and 15).
    return (Number(fields[11]) + Number(fields[12])) / CLOCK_TICKS;
  } catch {
    return null;
  }
}

/** CPU seconds of every PostgreSQL server process (postgres backends of any database). */
function postgresCpuSeconds(): number {
  let pids: string[] = [];
  try {
    pids = execFileSync('pgrep', ['-x', 'postgres'], { encoding: 'utf8' }).split('\n').filter(Boolean);
  } catch {
    return Number.NaN;
  }
  return pids.reduce((sum, pid) => sum + (cpuSeconds(Number(pid)) ?? 0), 0);
}

/** The machine's CPU counters from /proc/stat (proc(5)), in seconds over every core. */
function machineCpu(): { busy: number; idle: number; steal: number } {
  const fields = readFileSync('/proc/stat', 'utf8').split('\n')[0].trim().split(/\s+/).slice(1).map(Number);
  // user nice system idle iowait irq softirq steal (guest time is already inside user).
  const [user, nice, system, idle, iowait, irq, softirq, steal] = fields;
  return { busy: (user + nice + system + irq + softirq) / CLOCK_TICKS, idle: (idle + iowait) / CLOCK_TICKS, steal: (steal ?? 0) / CLOCK_TICKS };
}

function loadAverage(): string {
  return readFileSync('/proc/loadavg', 'utf8').split(' ').slice(0, 3).join(' ');
}

interface RunView {
  status: string;
  pairs: number;
  pairsDone: number;
  linksWritten: number;
  seconds: number;
  writeShare: number | null;
  workers: string[];
  children: { total: number; done: number; retried: number };
  error: string | null;
}

export async function run(): Promise<void> {
  const nodes = Number(process.env.SCALE_NODES ?? 20_000);
  const gateways = Number(process.env.SCALE_GATEWAYS ?? 200);
  const counts = (process.env.SCALE_N ?? '1,2,4').split(',').map(Number);
  const tilePairs = Number(process.env.SCALE_TILE_PAIRS ?? 1500);
  const rangeKm = Number(process.env.SCALE_RANGE_KM ?? 15);
  // 200 gateways over 120 km × 120 km (one per 72 km²); fewer gateways, a smaller area.
  const sideKm = 120 * Math.sqrt(gateways / 200);
  const redis = new Redis(REDIS_URL, { lazyConnect: true, connectTimeout: 1500, maxRetriesPerRequest: 0, retryStrategy: () => null });
  const redisOk = await redis.connect().then(() => true, () => false);
  redis.disconnect();
  if (!redisOk || !postgresAvailable) {
    console.log(`scale: SKIPPED (needs Redis at ${REDIS_URL}: ${redisOk ? 'ok' : 'unreachable'}; PostgreSQL: ${postgresAvailable ? 'ok' : 'unreachable'})`);
    return;
  }
  const prefix = `earshot-bench-${randomBytes(4).toString('hex')}`;
  process.env.EARSHOT_QUEUE_PREFIX = prefix;
  const t: TestApp = await createTestApp('postgres', { env: { REDIS_URL, EARSHOT_WORKERS: '1' } });
  const workers: ChildProcess[] = [];
  try {
    const t0 = performance.now();
    const fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes, gateways, sideKm, cellM: 90, maxLinkRangeKm: rangeKm, seed: 20 });
    console.log(`synthetic fleet: ${nodes} nodes × ${gateways} gateways over ${sideKm.toFixed(0)} km × ${sideKm.toFixed(0)} km (90 m DEM), link range ${rangeKm} km, P.1812; built in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
    console.log(`machine: ${cpus().length} cores; load average before: ${loadAverage()}`);
    // Workers as `npm run worker` runs them (the compiled tree, the script's environment), or from
    // the sources through tsx (SCALE_WORKER=tsx). The build is brought up to date once, here.
    const workerMode = process.env.SCALE_WORKER === 'tsx' ? 'tsx' : 'compiled';
    const workerScript = (JSON.parse(readFileSync(join(process.cwd(), 'package.json'), 'utf8')) as { scripts: Record<string, string> }).scripts.worker;
    const workerScriptEnv: NodeJS.ProcessEnv = Object.fromEntries([...workerScript.matchAll(/\b([A-Z_]+)=(\S+)/g)].map((m) => [m[1], m[2]]));
    if (workerMode === 'compiled') {
      const built = spawnSync(process.execPath, ['scripts/build-server.mjs', '--quiet'], { encoding: 'utf8' });
      if (built.status !== 0) throw new Error(`build-server failed: ${built.stderr.slice(-400)}`);
    }
    console.log(`workers: ${workerMode === 'tsx' ? 'tsx server/jobs/worker-main.ts' : `node scripts/launch.mjs worker (compiled)${Object.keys(workerScriptEnv).length ? ', ' + Object.entries(workerScriptEnv).map(([k, v]) => `${k}=${v}`).join(' ') : ''}`}${process.env.SCALE_WORKER_NODE_ARGS ? `, node ${process.env.SCALE_WORKER_NODE_ARGS}` : ''}`);
    const auth = { authorization: `Bearer ${t.tokens.planner}` };
    const startWorker = (): Promise<ChildProcess> => {
      const nodeArgs = (process.env.SCALE_WORKER_NODE_ARGS ?? '').split(' ').filter(Boolean);
      const program = workerMode === 'tsx' ? ['--import', 'tsx', 'server/jobs/worker-main.ts'] : ['scripts/launch.mjs', 'worker'];
      const child = spawn(process.execPath, [...nodeArgs, ...program], {
        env: { ...process.env, ...workerScriptEnv, DATABASE_URL: t.config.databaseUrl, REDIS_URL, EARSHOT_DATA_DIR: t.config.dataDir, EARSHOT_QUEUE_PREFIX: prefix, EARSHOT_WORKERS: '1' },
        stdio: ['ignore', 'pipe', 'inherit'],
      });
      workers.push(child);
      return new Promise((resolve, reject) => {
        child.stdout?.on('data', (chunk: Buffer) => chunk.toString().includes('ready') && resolve(child));
        child.once('exit', (code) => reject(new Error(`worker exited with ${code}`)));
      });
    };
    const rows: Array<{ n: number; seconds: number; pairs: number; cpuPerPairMs: number; writeShare: number | null; pgCpuS: number; load: string; busyCores: number; idleCores: number; stealCores: number }> = [];
    for (const n of counts) {
      await t.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
      // The previous N's rows, deleted, are dead tuples and dead index entries of the very keys this
      // run inserts again (the uniqueness check visits each); VACUUM so every N starts from the same
      // table as N = 1 did (this server runs with autovacuum off), outside the timed window.
      await t.db.prisma.$executeRawUnsafe('VACUUM "Link"');
      const started = await Promise.all(Array.from({ length: n }, () => startWorker()));
      // Workers loaded and idle: their start-up CPU is not counted.
      await new Promise((resolve) => setTimeout(resolve, 1000));
      const cpuBefore = started.map((child) => cpuSeconds(child.pid!) ?? 0);
      const pgBefore = postgresCpuSeconds();
      const res = await t.app.inject({ method: 'POST', url: `/api/v1/plans/${fleet.planId}/links/runs`, headers: auth, payload: { tilePairs } });
      if (res.statusCode !== 202) throw new Error(`run answered ${res.statusCode}: ${res.body}`);
      const id = (res.json() as { id: string }).id;
      // From here (the tiles cut and queued) to the run's end; the run's own seconds start at its first claim.
      const machineBefore = machineCpu();
      let view: RunView;
      for (;;) {
        view = (await t.app.inject({ method: 'GET', url: `/api/v1/plans/${fleet.planId}/links/runs/${id}`, headers: auth })).json() as RunView;
        if (!['queued', 'running'].includes(view.status)) break;
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
      const cpu = started.reduce((sum, child, k) => sum + ((cpuSeconds(child.pid!) ?? cpuBefore[k]) - cpuBefore[k]), 0);
      const pgCpuS = postgresCpuSeconds() - pgBefore;
      const machineAfter = machineCpu();
      // Whole machine over the run, in cores: what every process used (workers, PostgreSQL, Redis,
      // this bench's API process, the kernel), what stood idle, and what the hypervisor took (steal).
      const spanS = machineAfter.busy + machineAfter.idle + machineAfter.steal - (machineBefore.busy + machineBefore.idle + machineBefore.steal);
      const cores = cpus().length;
      const machine = {
        busyCores: ((machineAfter.busy - machineBefore.busy) / spanS) * cores,
        idleCores: ((machineAfter.idle - machineBefore.idle) / spanS) * cores,
        stealCores: ((machineAfter.steal - machineBefore.steal) / spanS) * cores,
      };
      const load = loadAverage();
      if (view.status !== 'done') throw new Error(`run ended ${view.status}: ${view.error}`);
      rows.push({ n, seconds: view.seconds, pairs: view.pairs, cpuPerPairMs: (cpu / view.pairs) * 1000, writeShare: view.writeShare, pgCpuS, load, ...machine });
      console.log(
        `N=${n}: ${view.pairs} pairs in ${view.children.total} tiles, ${view.seconds.toFixed(1)} s wall, ${(view.pairs / view.seconds).toFixed(0)} pairs/s (${(view.pairs / view.seconds / n).toFixed(0)} per process), workers ${view.workers.length}, ` +
          `worker CPU ${cpu.toFixed(1)} s = ${((cpu / view.pairs) * 1000).toFixed(2)} ms/pair, DB write share ${view.writeShare === null ? '–' : (view.writeShare * 100).toFixed(1) + ' %'}, PostgreSQL CPU ${pgCpuS.toFixed(1)} s, machine busy ${machine.busyCores.toFixed(2)} / idle ${machine.idleCores.toFixed(2)} / steal ${machine.stealCores.toFixed(2)} cores, load ${load}`,
      );
      for (const child of started) child.kill('SIGTERM');
      await Promise.all(started.map((child) => (child.exitCode === null ? new Promise((resolve) => child.once('exit', resolve)) : null)));
    }
    const base = rows.find((row) => row.n === 1);
    if (base) {
      console.log('\nN | wall s | pairs/s | per process | speed-up | efficiency | CPU ms/pair | write share | machine busy / idle / steal (cores)');
      for (const row of rows) {
        const rate = row.pairs / row.seconds;
        const speedup = base.seconds / row.seconds;
        console.log(`${row.n} | ${row.seconds.toFixed(1)} | ${rate.toFixed(0)} | ${(rate / row.n).toFixed(0)} | ${speedup.toFixed(2)}× | ${((speedup / row.n) * 100).toFixed(0)} % | ${row.cpuPerPairMs.toFixed(2)} | ${row.writeShare === null ? '–' : (row.writeShare * 100).toFixed(1) + ' %'} | ${row.busyCores.toFixed(2)} / ${row.idleCores.toFixed(2)} / ${row.stealCores.toFixed(2)}`);
      }
      const perProcess = base.pairs / base.seconds;
      const cpuRate = 1000 / base.cpuPerPairMs;
      console.log(`\nextrapolation (on paper): one process did ${perProcess.toFixed(0)} pairs/s wall here (${cpuRate.toFixed(0)} pairs per CPU-second).`);
      for (const pairsPerNode of [10, 100]) {
        const pairs = 200_000 * pairsPerNode;
        console.log(`  200 000 × 2 000 with ${pairsPerNode} gateways in range per node = ${pairs.toExponential(1)} pairs: ${(pairs / cpuRate / 3600).toFixed(1)} CPU-hours → on N machines of 8 worker processes ≈ ${(pairs / cpuRate / 3600 / 8).toFixed(2)} / N h at full efficiency`);
      }
    }
  } finally {
    for (const child of workers) if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
    await t.close();
    const cleanup = new Redis(REDIS_URL);
    const keys = await cleanup.keys(`${prefix}:*`);
    if (keys.length > 0) await cleanup.del(...keys);
    cleanup.disconnect();
  }
}
