#!/usr/bin/env node
// Builds the map front end (web/ → web/dist) when web/dist is missing or older
// than any file under web/src, web/index.html, web/public or web/vite.config.ts.
// `npm start` runs it first so a fresh checkout serves a current front end.
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';

const webDir = 'web';
const distIndex = join(webDir, 'dist', 'index.html');

function newestMtimeMs(path) {
  if (!existsSync(path)) return 0;
  const stat = statSync(path);
  if (!stat.isDirectory()) return stat.mtimeMs;
  let newest = stat.mtimeMs;
  for (const entry of readdirSync(path)) newest = Math.max(newest, newestMtimeMs(join(path, entry)));
  return newest;
}

if (!existsSync(join(webDir, 'index.html'))) {
  process.stdout.write('web/index.html not found: no front end to build\n');
  process.exit(0);
}
const sourceMs = Math.max(
  newestMtimeMs(join(webDir, 'src')),
  newestMtimeMs(join(webDir, 'public')),
  newestMtimeMs(join(webDir, 'index.html')),
  newestMtimeMs(join(webDir, 'vite.config.ts')),
);
const builtMs = existsSync(distIndex) ? statSync(distIndex).mtimeMs : 0;
if (builtMs >= sourceMs && !process.argv.includes('--force')) process.exit(0);

process.stdout.write('building the web front end (vite)…\n');
const result = spawnSync(process.execPath, [join('..', 'node_modules', 'vite', 'bin', 'vite.js'), 'build', '--logLevel', 'warn'], { cwd: webDir, stdio: 'inherit' });
if (result.status !== 0) {
  process.stderr.write(`web build failed (exit ${result.status ?? result.signal})\n`);
  process.exit(result.status ?? 1);
}
