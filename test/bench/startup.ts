// Start-up benchmarks (`npm run bench -- startup`): whole-process wall times, measured side by
// side in one run, of the compiled programs (scripts/launch.mjs → build/server) against the
// same programs from the sources through tsx, and against the outside references:
// 1. `node -e 0` (a bare Node start) and `earshot airtime …`;
// 2. `earshot token issue` on an embedded data folder (no server running: the CLI opens the folder);
// 3. a server restart on an existing data folder, until it prints its listening line;
// 4. `earshot coverage --mode los` against gdal_viewshed on the same DEM, observer and radius.
// Printed as one table, each figure as a ratio to its reference (or a time against its target), with
// the CPU time (user + system) of the same runs beside the wall time of the spawned commands;
// EARSHOT_BENCH_BASELINE=<another checkout> adds that tree's compiled programs as a column (e.g. main's
// tree exported with `git archive main | tar -x -C <dir>`, node_modules linked and the Prisma client copied).
// "compiled" is what `npm run earshot` runs: the CLI from its bundle build/cli/ (scripts/build-server.mjs;
// airtime and coverage from its light bundle with a V8 code cache that a command's first run writes, so
// after a rebuild the first of the 3 runs compiles and the best of 3 is a cached run),
// the server from the per-file tree build/server/; most of a short command's time is Node's own start,
// loading modules and, for coverage, reading the DEM and writing the GeoTIFF.
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';
import { makeSyntheticDem } from '../unit/coverage/synthetic-dem.ts';

const repeats = 3;

// CPU time of the waited-for children of this process (user + system, /proc/self/stat fields 16 and 17,
// in clock ticks of 10 ms): on a shared machine a child's CPU time varies less than its wall time.
function childrenCpuMs(): number | null {
  try {
    const fields = readFileSync('/proc/self/stat', 'utf8').replace(/^.*\) /, '').split(' ');
    // After "pid (comm) " the fields start at number 3 (state): cutime is field 16, cstime 17.
    return (Number(fields[16 - 3]) + Number(fields[17 - 3])) * 10;
  } catch {
    return null;
  }
}

/** Last CPU time measured by wallMs (ms), or null where /proc is missing. */
let lastCpuMs: number | null = null;

function wallMs(command: string, args: string[], env: NodeJS.ProcessEnv = process.env): number {
  const cpuBefore = childrenCpuMs();
  const started = performance.now();
  const result = spawnSync(command, args, { encoding: 'utf8', env, timeout: 300_000 });
  const elapsed = performance.now() - started;
  const cpuAfter = childrenCpuMs();
  lastCpuMs = cpuBefore === null || cpuAfter === null ? null : cpuAfter - cpuBefore;
  if (result.status !== 0) throw new Error(`${command} ${args.join(' ')} failed: ${result.stderr.split('\n')[0]}`);
  return elapsed;
}

const best = (times: number[]) => Math.min(...times);
/** Best (least) CPU time of the runs of the last bestOf, by name of the measured program. */
const bestCpu = new Map<string, number | null>();
function bestOf(run: () => number, cpuKey?: string): number {
  const times: number[] = [];
  const cpu: number[] = [];
  for (let i = 0; i < repeats; i++) {
    times.push(run());
    if (lastCpuMs !== null) cpu.push(lastCpuMs);
  }
  if (cpuKey) bestCpu.set(cpuKey, cpu.length === repeats ? best(cpu) : null);
  return best(times);
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      server.close(() => resolve(port));
    });
  });
}

/** Milliseconds from spawn until the server prints its listening line; then it is stopped. */
async function serverStartMs(args: string[], dataDir: string): Promise<number> {
  const port = await freePort();
  const started = performance.now();
  const child = spawn(process.execPath, args, { env: { ...process.env, EARSHOT_DATA_DIR: dataDir, PORT: String(port), EARSHOT_LOG_LEVEL: 'warn' }, stdio: ['ignore', 'pipe', 'pipe'] });
  let output = '';
  const elapsed = await new Promise<number>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`server did not start within 120 s: ${output.slice(-400)}`)), 120_000);
    child.stdout.on('data', (chunk: Buffer) => {
      output += String(chunk);
      if (output.includes('earshot is listening on')) {
        clearTimeout(timer);
        resolve(performance.now() - started);
      }
    });
    child.stderr.on('data', (chunk: Buffer) => (output += String(chunk)));
    child.once('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`server exited (${code}) before listening: ${output.slice(-400)}`));
    });
  });
  child.removeAllListeners('exit');
  await new Promise<void>((resolve) => {
    child.once('exit', () => resolve());
    child.kill('SIGTERM');
  });
  return elapsed;
}

interface Row {
  figure: string;
  reference: string;
  referenceMs: number | null;
  /** Programs measured: compiled (this tree), the baseline tree's compiled programs, tsx. */
  ms: Record<string, number | null>;
  target: string;
  /** Ratio against the reference, or the plain time when the target is a time. */
  ratio: (ms: number) => string;
  /** CPU time (user + system, best of the runs) of the reference and of each program, when measured. */
  cpuMs?: Record<string, number | null>;
}

// EARSHOT_BENCH_BASELINE=<folder of another checkout, e.g. main's>: its compiled programs are
// measured in the same run, column by column, so a before/after is one table under one load.
export async function run(): Promise<void> {
  const log = (line: string) => console.log(line);
  log(`machine: ${cpus().length} cores, load average ${loadavg().map((l) => l.toFixed(1)).join(' ')} (other work on the machine inflates every figure)`);
  const dir = mkdtempSync(join(tmpdir(), 'earshot-bench-startup-'));
  const baseline = process.env.EARSHOT_BENCH_BASELINE;
  try {
    // The compiled trees are brought up to date once, outside the timings.
    wallMs(process.execPath, ['scripts/build-server.mjs', '--quiet']);
    if (baseline) wallMs(process.execPath, [join(baseline, 'scripts', 'build-server.mjs'), '--quiet']);
    const programs: Record<string, (program: string, entry: string, args: string[]) => string[]> = {
      compiled: (program, _entry, args) => [join('scripts', 'launch.mjs'), program, ...args],
      ...(baseline ? { baseline: (program: string, _entry: string, args: string[]) => [join(baseline, 'scripts', 'launch.mjs'), program, ...args] } : {}),
      tsx: (_program, entry, args) => ['--import', 'tsx', entry, ...args],
    };
    const columns = Object.keys(programs);
    const rows: Row[] = [];
    const each = (measure: (name: string, argv: (program: string, entry: string, args: string[]) => string[]) => number | null) =>
      Object.fromEntries(columns.map((name) => [name, measure(name, programs[name])]));
    // CPU times of one row's programs (and reference), from the bestOf calls keyed `${figure}:${name}`.
    const cpuOf = (figure: string) => Object.fromEntries(['reference', ...columns].map((name) => [name, bestCpu.get(`${figure}:${name}`) ?? null]));

    // 1. Bare node and the smallest CLI command.
    const bareMs = bestOf(() => wallMs(process.execPath, ['-e', '0']), 'airtime:reference');
    const airtime = ['airtime', '--sf', '10', '--bw-khz', '125', '--payload-bytes', '24', '--json'];
    const airtimeMs = each((name, argv) => bestOf(() => wallMs(process.execPath, argv('cli', 'server/cli.ts', airtime)), `airtime:${name}`));
    rows.push({ figure: 'earshot airtime', reference: 'node -e 0', referenceMs: bareMs, ms: airtimeMs, target: '≤ 10×', ratio: (ms) => `${(ms / bareMs).toFixed(1)}×`, cpuMs: cpuOf('airtime') });

    // 2. token issue on an embedded folder made (with the demo team) by a first server start.
    const dataDir = join(dir, 'data');
    const firstStartMs = await serverStartMs(programs.compiled('server', 'server/main.ts', []), dataDir);
    const env = { ...process.env, EARSHOT_DATA_DIR: dataDir };
    const issue = ['token', 'issue', '--team', 'demo', '--role', 'viewer', '--json'];
    const issueMs = each((name, argv) => bestOf(() => wallMs(process.execPath, argv('cli', 'server/cli.ts', issue), env), `token:${name}`));
    rows.push({ figure: 'earshot token issue (embedded folder)', reference: '', referenceMs: null, ms: issueMs, target: '≤ 3000 ms', ratio: (ms) => `${ms.toFixed(0)} ms`, cpuMs: cpuOf('token') });

    // 3. Restart on the existing folder (best of 2).
    const restart: Record<string, number | null> = {};
    for (const name of columns) {
      const argv = programs[name]('server', 'server/main.ts', []);
      restart[name] = best([await serverStartMs(argv, dataDir), await serverStartMs(argv, dataDir)]);
    }
    rows.push({ figure: 'server restart (existing folder)', reference: '', referenceMs: null, ms: restart, target: '≤ 5000 ms', ratio: (ms) => `${ms.toFixed(0)} ms` });
    log(`server: first start on a new folder ${firstStartMs.toFixed(0)} ms (compiled)`);

    // 4. coverage --mode los, whole process, against gdal_viewshed on one synthetic 30 m DEM (20 km).
    if (spawnSync('which', ['gdal_viewshed']).status === 0) {
      const sizePx = 1400;
      const cellM = 30;
      const dem = makeSyntheticDem(sizePx, sizePx, cellM, 21, 1.2);
      const demPath = join(dir, 'dem30.tif');
      writeFileSync(demPath, writeGeoTiff({ widthPx: sizePx, heightPx: sizePx, data: dem.elevationM, geoTransform: [500_000, cellM, 0, 4_100_000, 0, -cellM], epsg: 32633, noData: -9999, tiled: { tileSizePx: 256 } }));
      const ox = 500_000 + 700.5 * cellM;
      const oy = 4_100_000 - 700.5 * cellM;
      const info = spawnSync('gdaltransform', ['-s_srs', 'EPSG:32633', '-t_srs', 'EPSG:4326', '-output_xy'], { input: `${ox} ${oy}\n`, encoding: 'utf8' });
      const [lon, lat] = info.stdout.trim().split(/\s+/).map(Number);
      const gdalMs = bestOf(() => wallMs('gdal_viewshed', ['-q', '-oz', '20', '-tz', '1.5', '-md', '20000', '-cc', '0.75', '-vv', '1', '-iv', '0', '-ov', '100', '-ox', String(ox), '-oy', String(oy), demPath, join(dir, 'gdal.tif')]), 'los:reference');
      const coverage = ['coverage', '--terrain', demPath, '--site', `${lat},${lon}`, '--height-m', '20', '--radius-km', '20', '--mode', 'los', '--out', join(dir, 'los.tif'), '--json'];
      const losMs = each((name, argv) => bestOf(() => wallMs(process.execPath, argv('cli', 'server/cli.ts', coverage)), `los:${name}`));
      rows.push({ figure: 'earshot coverage --mode los (20 km, 1400² DEM)', reference: 'gdal_viewshed', referenceMs: gdalMs, ms: losMs, target: '≤ 2×', ratio: (ms) => `${(ms / gdalMs).toFixed(2)}×`, cpuMs: cpuOf('los') });
    } else {
      log('coverage --mode los vs gdal_viewshed: skipped (gdal-bin not installed)');
    }

    // One table: every figure, its reference, each program's wall time and ratio, the target.
    const header = ['figure', 'reference', ...columns.map((name) => (name === 'baseline' ? `baseline (${baseline})` : name)), 'target'];
    const cpuNote = (row: Row, name: string) => {
      const cpu = row.cpuMs?.[name];
      return cpu === null || cpu === undefined ? '' : ` (cpu ${cpu.toFixed(0)})`;
    };
    const table = rows.map((row) => [
      row.figure,
      row.referenceMs === null ? '–' : `${row.reference} ${row.referenceMs.toFixed(0)} ms${cpuNote(row, 'reference')}`,
      ...columns.map((name) => {
        const ms = row.ms[name];
        return ms === null || ms === undefined ? '–' : row.referenceMs === null ? `${row.ratio(ms)}${cpuNote(row, name)}` : `${ms.toFixed(0)} ms = ${row.ratio(ms)}${cpuNote(row, name)}`;
      }),
      row.target,
    ]);
    const widths = header.map((h, i) => Math.max(h.length, ...table.map((cells) => cells[i].length)));
    const line = (cells: string[]) => `| ${cells.map((c, i) => c.padEnd(widths[i])).join(' | ')} |`;
    log(line(header));
    log(`|${widths.map((w) => '-'.repeat(w + 2)).join('|')}|`);
    for (const cells of table) log(line(cells));
    log(`wall times, best of ${repeats} (restarts: best of 2); (cpu N): least user + system CPU ms of the same runs (10 ms ticks); load average now ${loadavg().map((l) => l.toFixed(1)).join(' ')}`);
  } catch (error) {
    log(`startup bench failed: ${error instanceof Error ? error.message : String(error)}`);
    throw error;
  } finally {
    // A program that was just stopped may still be flushing its data folder: retry the removal.
    rmSync(dir, { recursive: true, force: true, maxRetries: 5, retryDelay: 500 });
  }
}
