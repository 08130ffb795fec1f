// The CLI's light bundle (build/cli/light.cjs, made by scripts/build-server.mjs): the commands whose
// modules import no package outside the bundle (airtime, coverage, profile, …) in one CommonJS file,
// run through vm.Script with a V8 code cache. Node 20 has no code cache for ES modules (the ESM bundle
// in build/cli/ compiles its ~550 kB of zod, geotiff and proj4 afresh on every start, ~40–80 ms on this
// machine), while a vm.Script accepts `cachedData`: with it V8 skips parsing and compiling every
// function the cache holds. The cache of a command is written after its first run (it then holds the
// functions that run compiled, not only the top level), one file per command under
// build/cli/.code-cache/, and rewritten when V8 rejects it (another Node version or V8 flags); a
// rebuild replaces build/cli/ and so drops the caches with the bundle they belong to.
// Only node: imports here: scripts/launch.mjs loads this before anything else.
import { mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import vm from 'node:vm';

export const lightBundleName = 'light.cjs';
export const lightCommandsName = 'light-commands.json';
/** Message of the stub that stands in the light bundle for a command module that needs other packages. */
export const heavyStubMessage = 'earshot-cli-light: this command module is not in the light bundle';

/**
 * Evaluates the light bundle in this process and returns its exports ({ runCli, commandIndex }) and,
 * when a cache name is given, a function that writes the code cache if it was missing or rejected.
 */
export function loadLightBundle(cliDir, cacheName) {
  const file = join(cliDir, lightBundleName);
  const source = readFileSync(file, 'utf8');
  const cacheFile = cacheName ? join(cliDir, '.code-cache', `${cacheName.replace(/[^a-z0-9-]+/gi, '_')}.v8`) : null;
  let cachedData;
  if (cacheFile) {
    try {
      cachedData = readFileSync(cacheFile);
    } catch {
      cachedData = undefined;
    }
  }
  // The CommonJS wrapper, plus the bundle's own URL: every rewritten import.meta.url resolves against it.
  const script = new vm.Script(`(function (exports, require, module, __filename, __dirname, __earshotBundleUrl) {${source}\n})`, { filename: file, cachedData });
  const module = { exports: {} };
  script.runInThisContext()(module.exports, createRequire(file), module, file, cliDir, pathToFileURL(file).href);
  const saveCache = () => {
    if (!cacheFile || (cachedData && !script.cachedDataRejected)) return;
    try {
      mkdirSync(join(cliDir, '.code-cache'), { recursive: true });
      const temp = `${cacheFile}.${process.pid}.tmp`;
      writeFileSync(temp, script.createCachedData());
      renameSync(temp, cacheFile);
    } catch {
      // read-only build folder: the next run compiles again
    }
  };
  return { exports: module.exports, saveCache };
}

/** The command words of argv (the leading arguments before the first option), as the CLI parses them. */
export function commandWords(args) {
  const words = [];
  for (const arg of args) {
    if (arg.startsWith('--')) break;
    words.push(arg);
  }
  return words.join(' ');
}

/** True when build/cli/light-commands.json lists these command words. */
export function isLightCommand(cliDir, words) {
  try {
    const listed = JSON.parse(readFileSync(join(cliDir, lightCommandsName), 'utf8'));
    return Array.isArray(listed.words) && listed.words.includes(words);
  } catch {
    return false;
  }
}
