#!/usr/bin/env node
// Generates the Prisma client into server/db/generated (git-ignored).
// `prisma generate` asks for the native schema engine even though the prisma-client
// generator does not use it; on machines that cannot download it, pointing
// PRISMA_SCHEMA_ENGINE_BINARY at any existing file lets generate finish (see DESIGN.md).
// With --if-stale it does nothing when the client was generated from the schema as it is now.
//
// Every program start asks clientIsFresh(), so the common case is one stat: the stamp holds the
// schema's sha256 and the size and mtime it had then; only when those differ (an edit, or a
// checkout that rewrote the file) is the schema hashed. node:crypto and node:child_process are
// loaded only when needed (together they cost a short command ~15 ms of start-up).
import { existsSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const schemaPath = join(root, 'prisma', 'schema.prisma');
const outDir = join(root, 'server', 'db', 'generated');
const stampPath = join(outDir, '.schema-hash');

function schemaHash() {
  const { createHash } = process.getBuiltinModule('node:crypto');
  return createHash('sha256').update(readFileSync(schemaPath)).digest('hex');
}

const schemaStat = () => {
  const stat = statSync(schemaPath);
  return `${stat.size}:${Math.round(stat.mtimeMs)}`;
};

/** The stamp: the schema's hash, then its size:mtime when last hashed. */
function writeStamp(hash) {
  writeFileSync(stampPath, `${hash}\n${schemaStat()}\n`);
}

export function clientIsFresh() {
  if (!existsSync(join(outDir, 'client.ts')) || !existsSync(stampPath)) return false;
  const [hash, stat] = readFileSync(stampPath, 'utf8').split('\n');
  if (stat === schemaStat()) return true;
  if (hash.trim() !== schemaHash()) return false;
  // Same content, new mtime (a checkout): remember the new stat so the next start skips the hash.
  try {
    writeStamp(hash.trim());
  } catch {
    // read-only checkout: the hash keeps answering
  }
  return true;
}

export function generate({ quiet = false } = {}) {
  const { spawnSync } = process.getBuiltinModule('node:child_process');
  const env = { ...process.env, PRISMA_HIDE_UPDATE_MESSAGE: '1', CHECKPOINT_DISABLE: '1' };
  const engineDir = join(root, 'node_modules', '@prisma', 'engines');
  const hasEngine =
    existsSync(engineDir) &&
    spawnSync('sh', ['-c', `ls "${engineDir}" | grep -q schema-engine`], { stdio: 'ignore' }).status === 0;
  if (!hasEngine && !env.PRISMA_SCHEMA_ENGINE_BINARY) {
    // Any existing file will do: generate never runs it.
    env.PRISMA_SCHEMA_ENGINE_BINARY = process.execPath;
  }
  const result = spawnSync(
    process.execPath,
    [join(root, 'node_modules', 'prisma', 'build', 'index.js'), 'generate', '--schema', schemaPath],
    { cwd: root, env, stdio: quiet ? ['ignore', 'pipe', 'pipe'] : 'inherit', encoding: 'utf8' },
  );
  if (result.status !== 0) {
    if (quiet) process.stderr.write(`${result.stdout ?? ''}${result.stderr ?? ''}`);
    throw new Error(`prisma generate failed (exit ${result.status ?? result.signal})`);
  }
  writeStamp(schemaHash());
}

const isMain = process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1];
if (isMain) {
  const ifStale = process.argv.includes('--if-stale');
  try {
    if (ifStale && clientIsFresh()) process.exit(0);
    generate({ quiet: ifStale });
    if (!ifStale) process.stdout.write(`prisma client generated in ${outDir}\n`);
  } catch (error) {
    process.stderr.write(`${error instanceof Error ? error.message : String(error)}\n`);
    process.exit(1);
  }
}
