// The one removal rule of the start-up sweeps (server/db/files.ts): a regular file last written at
// least minAgeMs ago goes; a younger one (an upload still being written), a folder or a missing
// path stays. The incoming-upload sweep uses it for `.incoming-*.tif` names only.
import { mkdtempSync, mkdirSync, rmSync, utimesSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { removeIfOlderThan, sweepIncomingFiles } from '../../../server/db/files.ts';

const HOUR_MS = 60 * 60 * 1000;
let dir: string;

/** A file whose mtime is `ageMs` before `nowMs`. */
function fileAged(path: string, nowMs: number, ageMs: number): string {
  writeFileSync(path, 'x');
  const when = new Date(nowMs - ageMs);
  utimesSync(path, when, when);
  return path;
}

beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'earshot-files-'));
});
afterEach(() => rmSync(dir, { recursive: true, force: true }));

describe('removeIfOlderThan', () => {
  it('removes a file at or past the age, keeps a younger one, a folder and a missing path', async () => {
    const now = Date.now();
    const old = fileAged(join(dir, 'old.tif'), now, 2 * HOUR_MS);
    const exact = fileAged(join(dir, 'exact.tif'), now, HOUR_MS);
    const young = fileAged(join(dir, 'young.tif'), now, 10_000);
    const folder = join(dir, 'folder');
    mkdirSync(folder);
    const when = new Date(now - 5 * HOUR_MS);
    utimesSync(folder, when, when);
    expect(await removeIfOlderThan(old, now, HOUR_MS)).toBe(true);
    expect(await removeIfOlderThan(exact, now, HOUR_MS)).toBe(true);
    expect(await removeIfOlderThan(young, now, HOUR_MS)).toBe(false);
    expect(await removeIfOlderThan(folder, now, HOUR_MS)).toBe(false);
    expect(await removeIfOlderThan(join(dir, 'missing.tif'), now, HOUR_MS)).toBe(false);
    expect([existsSync(old), existsSync(exact), existsSync(young), existsSync(folder)]).toEqual([false, false, true, true]);
  });
});

describe('sweepIncomingFiles', () => {
  it('removes old `.incoming-<uuid>.tif` files in each plan folder; young ones and other names stay', async () => {
    const now = Date.now();
    const plan = join(dir, 'plan-a');
    mkdirSync(plan);
    const stale = fileAged(join(plan, '.incoming-0f1e2d3c-aaaa-4bbb-8ccc-1234567890ab.tif'), now, 3 * HOUR_MS);
    const writing = fileAged(join(plan, '.incoming-11111111-2222-4333-8444-555555555555.tif'), now, 1000);
    const layer = fileAged(join(plan, 'dem.tif'), now, 3 * HOUR_MS);
    const removed = await sweepIncomingFiles(dir, HOUR_MS);
    expect(removed).toEqual([stale]);
    expect([existsSync(stale), existsSync(writing), existsSync(layer)]).toEqual([false, true, true]);
    // No terrain folder at all: nothing to do, no error.
    expect(await sweepIncomingFiles(join(dir, 'nowhere'), HOUR_MS)).toEqual([]);
  });
});
