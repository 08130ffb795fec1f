#!/usr/bin/env node
// Runs one of earshot's programs from the compiled tree: `node scripts/launch.mjs
// <server|cli|worker> [args…]`. Before it starts the program it regenerates the
// Prisma client when prisma/schema.prisma changed and recompiles server/ into
// build/ when any source changed (one stat of the schema, one stat per source: a few
// ms together), all in this one process so a command pays Node's start-up once.
import { join } from 'node:path';
import { buildIsFresh, buildServer, root } from './build-server.mjs';
import { clientIsFresh, generate } from './prisma-generate.mjs';
import { commandWords, isLightCommand, lightBundleName, loadLightBundle } from './cli-light.mjs';

// The CLI runs from its bundle (build/cli/, see build-server.mjs); the server and the workers from the per-file tree.
const programs = { server: join('server', 'main.js'), cli: join('cli', 'cli.js'), worker: join('server', 'jobs', 'worker-main.js') };
const [name, ...args] = process.argv.slice(2);
if (!name || !(name in programs)) {
  process.stderr.write(`launch: name a program: ${Object.keys(programs).join(', ')}\n`);
  process.exit(2);
}
if (!clientIsFresh()) generate({ quiet: true });
if (!buildIsFresh()) await buildServer({ quiet: name === 'cli' });
const cliDir = join(root, 'build', 'cli');
const words = name === 'cli' ? commandWords(args) : '';
if (name === 'cli' && isLightCommand(cliDir, words)) {
  // A command of the light bundle (scripts/cli-light.mjs): one CommonJS file with a V8 code cache.
  process.argv = [process.argv[0], join(cliDir, lightBundleName), ...args];
  const { exports, saveCache } = loadLightBundle(cliDir, words);
  process.exitCode = await exports.runCli(args);
  saveCache();
} else {
  const entry = join(root, 'build', programs[name]);
  // The programs decide whether they are the main module by comparing argv[1] with themselves.
  process.argv = [process.argv[0], entry, ...args];
  await import(entry);
}
