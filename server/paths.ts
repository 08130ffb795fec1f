// Where the project's own folders are, for code that runs from the sources
// (server/…, through tsx) or compiled (build/server/…, see scripts/build-server.mjs):
// the project root is the nearest folder above this file that holds package.json.
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

function findProjectRoot(start: string): string {
  let dir = start;
  while (!existsSync(join(dir, 'package.json'))) {
    const parent = dirname(dir);
    if (parent === dir) throw new Error(`no package.json above ${start}`);
    dir = parent;
  }
  return dir;
}

export const projectRoot = findProjectRoot(dirname(fileURLToPath(import.meta.url)));
