#!/usr/bin/env node
// Compiles server/ (TypeScript) into build/server/ (plain ES modules; scripts/*.ts into build/scripts/), one output
// file per source file so that import.meta.url, worker entries and the folder
// layout stay as they are in the sources. `npm start`, the CLI and the workers
// run the compiled files (through scripts/launch.mjs); tests and development keep
// running the sources through tsx/vitest.
//
// Type checking is not done here (that is `npm run typecheck`); esbuild only strips
// types, which takes well under a second for the whole server.
//
// The CLI is also bundled (build/cli/: server/cli.ts and what it imports, with zod, geotiff
// and proj4, one file per command module plus shared chunks), because a short command spends
// most of its life resolving and loading modules: `earshot coverage --mode los` loads ~200
// module files from the per-file tree and about a dozen from the bundle. Inside the bundle
// every `import.meta.url` of our sources is the URL of that module's file in build/server/, so
// worker entries (`new URL('./pool-worker.ts', import.meta.url)`), the project root and the
// Prisma client's folder resolve exactly as in the per-file tree, which the workers run.
import { copyFileSync, existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { builtinModules } from 'node:module';
import { fileURLToPath } from 'node:url';
import { heavyStubMessage, lightBundleName, lightCommandsName, loadLightBundle } from './cli-light.mjs';

export const root = join(dirname(fileURLToPath(import.meta.url)), '..');
export const buildDir = join(root, 'build');
// server/ and the TypeScript helpers under scripts/ that server code imports (demo terrain).
const sourceDirs = ['server', 'scripts'];
const stampPath = join(buildDir, '.built-from');

// Packages the CLI bundle takes in (pure JavaScript, no files read beside themselves, and only
// our own code passes values to them). Everything else stays an import of node_modules: the
// Prisma runtime and PGlite load WebAssembly and data files relative to their package,
// pdfkit its fonts, web-worker re-runs its own file in a thread.
const bundledPackages = new Set(['zod', 'geotiff', 'proj4', '@petamoriken/float16', 'xml-utils', 'quick-lru']);
const packageOf = (specifier) => specifier.split('/').slice(0, specifier.startsWith('@') ? 2 : 1).join('/');

const isSource = (rel) => (rel.endsWith('.ts') && !rel.endsWith('.test.ts') && !rel.endsWith('.d.ts')) || (rel.startsWith('server/') && rel.endsWith('.mjs'));

/**
 * The sources (paths relative to the root) and their fingerprint: every file's path, size and
 * mtime. Every program start runs this walk, so it is kept lean (plain string paths, one
 * readdir per folder and one stat per source, no path normalisation): about 3 ms for ~270 files.
 */
function scanSources() {
  const files = [];
  const lines = [];
  const walk = (rel) => {
    for (const entry of readdirSync(`${root}/${rel}`, { withFileTypes: true })) {
      const path = `${rel}/${entry.name}`;
      if (entry.isDirectory()) walk(path);
      else if (isSource(path)) {
        const stat = statSync(`${root}/${path}`);
        files.push(path);
        lines.push(`${path}:${stat.size}:${Math.round(stat.mtimeMs)}`);
      }
    }
  };
  for (const dir of sourceDirs) walk(dir);
  // The CLI bundle holds these packages' code too: a reinstall (new package.json) rebuilds it.
  for (const pkg of bundledPackages) {
    const stat = statSync(`${root}/node_modules/${pkg}/package.json`, { throwIfNoEntry: false });
    lines.push(`node_modules/${pkg}/package.json:${stat ? `${stat.size}:${Math.round(stat.mtimeMs)}` : 'missing'}`);
  }
  return { files, fingerprint: lines.sort().join('\n') };
}

// Relative specifiers of our own modules end in .ts in the sources (allowImportingTsExtensions);
// the compiled tree holds .js files, so `from './x.ts'`, `import('./x.ts')` and
// `new URL('./x.ts', import.meta.url)` are rewritten to .js.
const tsSpecifier = /(['"])(\.{1,2}\/[^'"\n]*?)\.ts\1/g;
// Only the `new URL('./x.ts', import.meta.url)` form, for the bundle (esbuild resolves the imports itself).
const tsUrlSpecifier = /(new URL\(\s*)(['"])(\.{1,2}\/[^'"\n]*?)\.ts\2/g;

const zodLocalesDir = join(root, 'node_modules', 'zod', 'v4', 'locales');

// The bundle's handling of our sources and packages; `cjs` for the light bundle (scripts/cli-light.mjs),
// where import.meta does not exist: its URL is the wrapper's __earshotBundleUrl, same folder (build/cli/).
function cliPlugin({ cjs = false, stubs = new Set() } = {}) {
  const metaUrl = cjs ? '__earshotBundleUrl' : 'import.meta.url';
  return {
    name: 'earshot-cli-bundle',
    setup(build) {
      build.onResolve({ filter: /^[^./]/ }, (args) => {
        if (args.path.startsWith('node:') || !bundledPackages.has(packageOf(args.path))) return { path: args.path, external: true };
        return undefined;
      });
      // zod's index of its 60-odd message languages: the CLI bundle keeps English only (zod's default,
      // the one language earshot prints; nothing calls z.locales), about 250 kB less to parse per command.
      build.onLoad({ filter: /[\\/]zod[\\/]v4[\\/]locales[\\/]index\.js$/ }, () => ({ contents: 'export { default as en } from "./en.js";', loader: 'js', resolveDir: zodLocalesDir }));
      build.onLoad({ filter: /\.(ts|mjs)$/ }, (args) => {
        const rel = relative(root, args.path);
        if (!sourceDirs.some((dir) => rel.startsWith(`${dir}/`))) return undefined;
        // A command module that needs packages outside the bundle: the light bundle holds a stub that throws.
        if (stubs.has(rel)) return { contents: `throw new Error(${JSON.stringify(heavyStubMessage)});`, loader: 'js' };
        // Every output file sits in build/cli/, so `../<rel>.js` from it is the module's per-file twin.
        const twin = JSON.stringify(`../${rel.replace(/\.ts$/, '.js')}`);
        const contents = readFileSync(args.path, 'utf8')
          .replace(tsUrlSpecifier, '$1$2$3.js$2')
          .replace(/\bimport\.meta\.url\b/g, `new URL(${twin}, ${metaUrl}).href`);
        return { contents, loader: args.path.endsWith('.ts') ? 'ts' : 'js' };
      });
    },
  };
}

const bundleOptions = { bundle: true, platform: 'node', target: 'node20', minifyWhitespace: true, minifySyntax: true, logLevel: 'silent', absWorkingDir: root, metafile: true };

async function bundleCli(esbuild, outdir) {
  const result = await esbuild.build({
    ...bundleOptions,
    entryPoints: [join(root, 'server', 'cli.ts')],
    outdir,
    splitting: true,
    format: 'esm',
    sourcemap: 'linked',
    sourcesContent: false,
    plugins: [cliPlugin()],
  });
  await bundleCliLight(esbuild, outdir, result.metafile);
}

const isBuiltin = (specifier) => specifier.startsWith('node:') || builtinModules.includes(specifier);

/**
 * The light bundle (scripts/cli-light.mjs): the CLI with every command module whose imports (static or
 * dynamic, all the way down, read from the ESM bundle's metafile) reach no package outside the bundle;
 * the other command modules are stubs there, and build/cli/light-commands.json lists the commands that
 * remain (found by loading each command of the index from the new bundle), which launch.mjs runs from it.
 */
async function bundleCliLight(esbuild, outdir, metafile) {
  const commandsFile = 'server/cli/commands.ts';
  const modules = (metafile.inputs[commandsFile]?.imports ?? []).filter((i) => i.kind === 'dynamic-import' && !i.external).map((i) => i.path);
  const needsPackages = (start) => {
    const seen = new Set();
    const stack = [start];
    while (stack.length > 0) {
      const path = stack.pop();
      if (seen.has(path)) continue;
      seen.add(path);
      for (const i of metafile.inputs[path]?.imports ?? []) {
        if (i.external) {
          // Our own import of another package, or any import() of one (a vm.Script has no loader for
          // import()); a bundled package's static import of its own dependency becomes a require() there
          // that runs only where that package's code runs (geotiff's LERC and ZStandard decoders).
          if (!isBuiltin(i.path) && (i.kind === 'dynamic-import' || !path.includes('node_modules/'))) return true;
        } else stack.push(i.path);
      }
    }
    return false;
  };
  const stubs = new Set(modules.filter(needsPackages));
  await esbuild.build({
    ...bundleOptions,
    stdin: { contents: "export { runCli } from './cli.ts';\nexport { commandIndex } from './cli/commands.ts';\n", resolveDir: join(root, 'server'), loader: 'ts', sourcefile: 'server/cli-light-entry.ts' },
    outfile: join(outdir, lightBundleName),
    format: 'cjs',
    plugins: [cliPlugin({ cjs: true, stubs })],
  });
  const { exports } = loadLightBundle(outdir, null);
  const words = [];
  for (const entry of exports.commandIndex) {
    try {
      await entry.load();
      words.push(entry.words);
    } catch (error) {
      if (!(error instanceof Error && error.message === heavyStubMessage)) throw error;
    }
  }
  writeFileSync(join(outdir, lightCommandsName), `${JSON.stringify({ words, stubbedModules: [...stubs].sort() }, null, 2)}\n`);
}

export function buildIsFresh() {
  if (!existsSync(stampPath)) return false;
  return readFileSync(stampPath, 'utf8') === scanSources().fingerprint;
}

export async function buildServer({ quiet = false, force = false } = {}) {
  const { files, fingerprint } = scanSources();
  if (!force && existsSync(stampPath) && readFileSync(stampPath, 'utf8') === fingerprint) return false;
  const started = performance.now();
  const esbuild = await import('esbuild');
  const { transform } = esbuild;
  // Written beside the live tree and swapped in at the end, so a program starting
  // meanwhile never sees a half-written build.
  const staging = join(buildDir, `.staging-${process.pid}`);
  rmSync(staging, { recursive: true, force: true });
  await Promise.all(
    files.map(async (rel) => {
      const path = join(root, rel);
      const target = join(staging, rel).replace(/\.ts$/, '.js');
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
        sourcefile: rel,
        sourcemap: 'inline',
        sourcesContent: false,
      });
      writeFileSync(target, result.code.replace(tsSpecifier, '$1$2.js$1'));
    }),
  );
  await bundleCli(esbuild, join(staging, 'cli'));
  for (const dir of [...sourceDirs, 'cli']) {
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
