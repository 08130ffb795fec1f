// `npm run bench [-- name ...]`: runs every benchmark module in this folder
// (test/bench/<name>.ts, each exporting `run(): Promise<void>` that prints its
// own figures), or only the ones named. Benchmarks are never part of `npm test`.
import { readdirSync } from 'node:fs';
import { dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const available = readdirSync(here)
  .filter((file) => file.endsWith('.ts') && file !== 'run.ts' && !file.endsWith('.test.ts') && !file.startsWith('_'))
  .map((file) => file.replace(/\.ts$/, ''))
  .sort();
const requested = process.argv.slice(2).filter((arg) => !arg.startsWith('-'));
const selected = requested.length > 0 ? requested : available;

for (const name of selected) {
  if (!available.includes(name)) {
    console.error(`bench: no benchmark named "${name}" (have: ${available.join(', ')})`);
    process.exit(2);
  }
  console.log(`\n## bench ${name}`);
  const module = (await import(pathToFileURL(`${here}/${name}.ts`).href)) as { run?: () => Promise<void> };
  if (typeof module.run !== 'function') {
    console.error(`bench: test/bench/${name}.ts exports no run()`);
    process.exit(2);
  }
  await module.run();
}
