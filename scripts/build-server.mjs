#!/usr/bin/env node
// Compiles server/ (TypeScript) into build/server/ (plain ES modules; scripts/*.ts into build/scripts/), one output
// file per source file so that import.meta.url, worker entries and the folder
// layout stay as they are in the sources. `npm start`, the CLI and the workers
// run the compiled files (through scripts/launch.mjs); tests and development keep
// running the sources through tsx/vitest.
//
// Type checking is not done here (that is `npm run typecheck`); esbuild only strips
// types, which takes well under a second for the whole server.
import { copyFileSync, existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';

export const root = join(dirname(fileURLToPath(import.meta.url)), '..');
export const buildDir = join(root, 'build');
// server/ and the TypeScript helpers under scripts/ that server code imports (demo terrain).
const sourceDirs = ['server', 'scripts'];
const stampPath = join(buildDir, '.built-from');

function listFiles(dir, out = []) {
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, entry.name);
    if (entry.isDirectory()) listFiles(path, out);
    else out.push(path);
  }
  return out;
}

const isSource = (path) => {
  const inServer = relative(root, path).startsWith(`server/`);
  return (path.endsWith('.ts') && !path.endsWith('.test.ts') && !path.endsWith('.d.ts')) || (inServer && path.endsWith('.mjs'));
};
const listSources = () => sourceDirs.flatMap((dir) => listFiles(join(root, dir))).filter(isSource);

/** A fingerprint of the sources: every file's path, size and mtime. */
function sourceFingerprint(files) {
  return files
    .map((path) => {
      const stat = statSync(path);
      return `${relative(root, path)}:${stat.size}:${Math.round(stat.mtimeMs)}`;
    })
    .sort()
    .join('\n');
}

// Relative specifiers of our own modules end in .ts in the sources (allowImportingTsExtensions);
// the compiled tree holds .js files, so `from './x.ts'`, `import('./x.ts')` and
// `new URL('./x.ts', import.meta.url)` are rewritten to .js.
const tsSpecifier = /(['"])(\.{1,2}\/[^'"\n]*?)\.ts\1/g;

export function buildIsFresh() {
  if (!existsSync(stampPath)) return false;
  const files = listSources();
  return readFileSync(stampPath, 'utf8') === sourceFingerprint(files);
}

export async function buildServer({ quiet = false, force = false } = {}) {
  const files = listSources();
  const fingerprint = sourceFingerprint(files);
  if (!force && existsSync(stampPath) && readFileSync(stampPath, 'utf8') === fingerprint) return false;
  const started = performance.now();
  const { transform } = await import('esbuild');
  // Written beside the live tree and swapped in at the end, so a program starting
  // meanwhile never sees a half-written build.
  const staging = join(buildDir, `.staging-${process.pid}`);
  rmSync(staging, { recursive: true, force: true });
  await Promise.all(
    files.map(async (path) => {
      const target = join(staging, relative(root, path)).replace(/\.ts$/, '.js');
      mkdirSync(dirname(target), { recursive: true });
      if (path.endsWith('.mjs')) {
        copyFileSync(path, target);
        return;
      }
      const source = readFileSync(path, 'utf8');
      const result = await transform(source, {
        loader: 'ts',
        format: 'esm',
        target: 'node20',
        sourcefile: relative(root, path),
        sourcemap: 'inline',
        sourcesContent: false,
      });
      writeFileSync(target, result.code.replace(tsSpecifier, '$1$2.js$1'));
    }),
  );
  for (const dir of sourceDirs) {
    rmSync(join(buildDir, dir), { recursive: true, force: true });
    if (existsSync(join(staging, dir))) renameSync(join(staging, dir), join(buildDir, dir));
  }
  rmSync(staging, { recursive: true, force: true });
  writeFileSync(stampPath, fingerprint);
  if (!quiet) process.stderr.write(`compiled ${files.length} server files into build/ in ${Math.round(performance.now() - started)} ms\n`);
  return true;
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  await buildServer({ force: process.argv.includes('--force'), quiet: process.argv.includes('--quiet') });
}
