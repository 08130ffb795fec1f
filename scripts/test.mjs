#!/usr/bin/env node
// The README's test command (`npm test`): prepares a fresh machine of our kind,
// then runs the quality gates and every suite, and ends on one summary line
// "tests: N passed, N failed, N skipped".
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync } from 'node:fs';

const inCi = process.env.CI === 'true';

function run(label, command, args, options = {}) {
  process.stdout.write(`\n== ${label}\n`);
  const result = spawnSync(command, args, { stdio: 'inherit', ...options });
  if (result.status !== 0) {
    process.stdout.write(`\n${label} failed (exit ${result.status ?? result.signal})\n`);
    process.exit(result.status ?? 1);
  }
}

function has(binary) {
  return spawnSync('sh', ['-c', `command -v ${binary}`], { stdio: 'ignore' }).status === 0;
}

// 1. System packages the suites use: Debian's chromium (browser tests), gdal-bin (reference checks)
//    and poppler-utils (pdftotext/pdftoppm read back the PDF reports as an outside reader).
const systemPackages = [
  { binary: 'chromium', pkg: 'chromium' },
  { binary: 'gdallocationinfo', pkg: 'gdal-bin' },
  { binary: 'pdftotext', pkg: 'poppler-utils' },
];
const missing = systemPackages.filter((entry) => !has(entry.binary)).map((entry) => entry.pkg);
if (missing.length > 0) {
  const isRoot = typeof process.getuid === 'function' && process.getuid() === 0;
  if (isRoot && has('apt-get')) {
    process.stdout.write(`\n== installing system packages: ${missing.join(' ')}\n`);
    execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit' });
    execFileSync('apt-get', ['install', '-y', '-qq', '--no-install-recommends', ...missing], {
      stdio: 'inherit',
      env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' },
    });
  } else {
    process.stdout.write(`\nmissing system packages: ${missing.join(' ')}; install them with: sudo apt-get install ${missing.join(' ')}\n`);
    if (inCi) process.exit(1);
  }
}

// 2. Generated files: the Prisma client (see scripts/prisma-generate.mjs) and the web bundle.
if (existsSync('prisma/schema.prisma')) run('prisma generate', process.execPath, ['scripts/prisma-generate.mjs']);
if (existsSync('web/index.html')) run('web build', process.execPath, ['../node_modules/vite/bin/vite.js', 'build', '--logLevel', 'warn'], { cwd: 'web' });

// 3. Quality gates.
run('typecheck (tsc --noEmit, strict)', process.execPath, ['node_modules/typescript/bin/tsc', '--noEmit']);
run('lint (eslint)', process.execPath, ['node_modules/eslint/bin/eslint.js', '--no-error-on-unmatched-pattern', 'server', 'web/src', 'test', 'scripts']);

// 4. Every suite: unit, reference, api (PGlite and PostgreSQL), e2e (chromium).
mkdirSync('test-artefacts', { recursive: true });
process.stdout.write('\n== vitest\n');
const vitest = spawnSync(
  process.execPath,
  ['node_modules/vitest/vitest.mjs', 'run', '--reporter=default', '--reporter=json', '--outputFile.json=test-artefacts/vitest.json', ...process.argv.slice(2)],
  { stdio: 'inherit' },
);
let passed = 0;
let failed = 0;
let skipped = 0;
try {
  const report = JSON.parse(readFileSync('test-artefacts/vitest.json', 'utf8'));
  passed = report.numPassedTests;
  failed = report.numFailedTests + (report.numRuntimeErrorTestSuites ?? 0);
  skipped = report.numPendingTests + report.numTodoTests;
} catch {
  failed = Math.max(1, failed);
}
if (vitest.status !== 0 && failed === 0) failed = 1;
process.stdout.write(`\ntests: ${passed} passed, ${failed} failed, ${skipped} skipped\n`);
process.exit(failed > 0 || vitest.status !== 0 ? 1 : 0);
