// Where the files the database rows point at live, and the only code that resolves or removes
// them: terrain uploads under <filesDir>/terrain/<planId>/, coverage results under
// <filesDir>/coverage/<runId>/, the per-gateway parts of a split coverage run under
// <filesDir>/coverage/<runId>.parts/ until its composite is built. Rows store paths
// relative to filesDir (absolute paths, which
// tests use, stay as they are; a path relative to the data folder is an older layout).
// Used by the link engine and the coverage job (server/jobs), the use cases (server/app) and
// the routes (server/api), so every room resolves a stored path the same way.
import { existsSync, mkdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { readdir, rm, stat } from 'node:fs/promises';
import { dirname, isAbsolute, join, relative, resolve } from 'node:path';
import type { Config } from '../config.ts';
import type { Database } from './database.ts';
import type { PlanFiles } from './repositories/plans.ts';
import { terrainFileNamesReferencedIn, terrainFilesStillReferenced } from './repositories/scenarios.ts';

type FileConfig = Pick<Config, 'filesDir' | 'dataDir'>;

/** The file a stored path names: absolute as is; else under filesDir, or (older layout) under the data folder. */
export function resolveStoredFile(config: FileConfig, filePath: string): string {
  if (isAbsolute(filePath)) return filePath;
  for (const candidate of [join(config.filesDir, filePath), join(config.dataDir, filePath)]) if (existsSync(candidate)) return candidate;
  return join(config.filesDir, filePath);
}

/** The files of a finished coverage run, inside `<filesDir>/coverage/<runId>/`. */
export const RESULT_FILES = { margin: 'margin.tif', loss: 'loss.tif', redundancy: 'redundancy.tif', bestSf: 'best-sf.tif', meta: 'meta.json' } as const;

/** The folder of a coverage run's results. */
export function resultDir(config: Pick<Config, 'filesDir'>, runId: string): string {
  return join(config.filesDir, 'coverage', runId);
}

/** The folder of a split coverage run's per-gateway parts (server/jobs/coverage-split.ts), removed once the run finishes. */
export function coveragePartsDir(config: Pick<Config, 'filesDir'>, runId: string): string {
  return join(config.filesDir, 'coverage', `${runId}.parts`);
}

/** The part of gateway `index` of a split coverage run: keyed by run and gateway, so a retried child overwrites it. */
export function coveragePartFile(config: Pick<Config, 'filesDir'>, runId: string, index: number): string {
  return join(coveragePartsDir(config, runId), `gateway-${index}.part`);
}

/**
 * Writes `bytes` to `path` atomically: a temporary file beside it, then one rename
 * (a reader sees the old file or the whole new one, never a half-written one; a
 * writer killed before the rename leaves only the temporary file, which
 * `removeCoverageParts` and `removePlanFiles` clear). `beforeRename` may refuse
 * (false): the temporary file is removed and nothing is replaced.
 */
export async function writeFileAtomic(path: string, bytes: Uint8Array, beforeRename?: () => Promise<boolean>): Promise<boolean> {
  const temp = `${path}.partial-${process.pid}-${Date.now()}`;
  mkdirSync(dirname(path), { recursive: true });
  try {
    writeFileSync(temp, bytes);
    if (beforeRename && !(await beforeRename())) {
      rmSync(temp, { force: true });
      return false;
    }
    renameSync(temp, path);
    return true;
  } catch (error) {
    rmSync(temp, { force: true });
    throw error;
  }
}

/** Removes a split coverage run's parts folder (its composite is built, or the run ended without one). */
export function removeCoverageParts(config: Pick<Config, 'filesDir'>, runId: string): void {
  rmSync(coveragePartsDir(config, runId), { recursive: true, force: true });
}

/** The folder terrain uploads live in (one sub-folder per plan). */
export function terrainDir(config: Pick<Config, 'filesDir'>): string {
  return join(config.filesDir, 'terrain');
}

/**
 * Removes a deleted terrain layer's file unless another layer (a copied plan's) still names it.
 * Call after the delete committed: a rolled-back delete keeps its file.
 */
export async function removeTerrainFileIfUnused(db: Database, config: FileConfig, filePath: string): Promise<boolean> {
  if ((await terrainFilesStillReferenced(db, [filePath])).size > 0) return false;
  await rm(resolveStoredFile(config, filePath), { force: true });
  return true;
}

/**
 * Removes a deleted plan's files: <filesDir>/terrain/<planId>/ (uploads, incl. unfinished
 * ones), terrain files it referenced elsewhere under filesDir, and its coverage result
 * folders (with any `.partial-*` folders of interrupted runs and `.parts` folders of split
 * runs). Never touches anything outside filesDir. Returns the paths that could not be removed.
 */
export async function removePlanFiles(filesDir: string, planId: string, files: PlanFiles): Promise<string[]> {
  const root = resolve(filesDir);
  const inside = (path: string) => {
    const rel = relative(root, resolve(root, path));
    return rel !== '' && !rel.startsWith('..') && !isAbsolute(rel);
  };
  // The plan's upload folder goes as a whole unless a copy of the plan still uses a file in it;
  // then only the files nobody references go.
  const planTerrainDir = join(root, 'terrain', planId);
  const shared = new Set((files.sharedTerrainFiles ?? []).map((filePath) => resolve(root, filePath)));
  const targets = new Set<string>();
  if ([...shared].some((path) => !relative(planTerrainDir, path).startsWith('..'))) {
    for (const name of await readdir(planTerrainDir).catch(() => [] as string[])) {
      const path = join(planTerrainDir, name);
      if (!shared.has(path)) targets.add(path);
    }
  } else {
    targets.add(planTerrainDir);
  }
  for (const filePath of files.terrainFiles) if (!shared.has(resolve(root, filePath))) targets.add(resolve(root, filePath));
  for (const path of files.coverageResultPaths) targets.add(resolve(root, path));
  const coverageDir = join(root, 'coverage');
  const partials = await readdir(coverageDir).catch(() => [] as string[]);
  for (const runId of files.coverageRunIds) {
    targets.add(resultDir({ filesDir: root }, runId));
    for (const name of partials) if (name.startsWith(`${runId}.partial-`) || name === `${runId}.parts`) targets.add(join(coverageDir, name));
  }
  const failed: string[] = [];
  for (const target of targets) {
    if (!inside(target)) continue;
    await rm(target, { recursive: true, force: true }).catch(() => failed.push(target));
  }
  return failed;
}

/**
 * Removes the regular file at `path` when it was last written at least `minAgeMs` before `nowMs`;
 * true when it removed it. A file that is gone, is not a regular file, or is younger is left alone
 * (a young file may be an upload still being written).
 */
export async function removeIfOlderThan(path: string, nowMs: number, minAgeMs: number): Promise<boolean> {
  const info = await stat(path).catch(() => null);
  if (!info || !info.isFile() || nowMs - info.mtimeMs < minAgeMs) return false;
  await rm(path, { force: true });
  return true;
}

/** The per-plan folders under <filesDir>/terrain/ (none when the folder does not exist). */
async function terrainPlanDirs(terrainDir: string): Promise<string[]> {
  try {
    return (await readdir(terrainDir, { withFileTypes: true })).filter((entry) => entry.isDirectory()).map((entry) => entry.name);
  } catch {
    return [];
  }
}

/** Removes `.incoming-*.tif` upload files under <filesDir>/terrain/<planId>/ not written to for `minAgeMs`. */
export async function sweepIncomingFiles(terrainDir: string, minAgeMs: number): Promise<string[]> {
  const removed: string[] = [];
  const now = Date.now();
  for (const planId of await terrainPlanDirs(terrainDir)) {
    const dir = join(terrainDir, planId);
    for (const file of await readdir(dir).catch(() => [] as string[])) {
      if (!/^\.incoming-[0-9a-f-]+\.tif$/.test(file)) continue;
      const path = join(dir, file);
      if (await removeIfOlderThan(path, now, minAgeMs)) removed.push(path);
    }
  }
  return removed;
}

/** Removes files under <filesDir>/terrain/<planId>/ that no terrain layer row references and that are older than `minAgeMs`. */
export async function sweepOrphanFiles(db: Database, terrainDir: string, minAgeMs: number): Promise<string[]> {
  const removed: string[] = [];
  const now = Date.now();
  for (const planId of await terrainPlanDirs(terrainDir)) {
    const dir = join(terrainDir, planId);
    // Layers of this plan and of its copies (which share the files) keep a file.
    const referenced = await terrainFileNamesReferencedIn(db, planId);
    for (const file of await readdir(dir)) {
      if (referenced.has(file)) continue;
      const path = join(dir, file);
      if (await removeIfOlderThan(path, now, minAgeMs)) removed.push(path);
    }
  }
  return removed;
}
