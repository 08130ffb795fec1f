// One name per concept (DEVELOPERS.md, "Glossary"): the names retired there must not come back in
// a response or request schema of the OpenAPI document (property names and path parameters) nor in
// the web UI's strings. A retired name reappearing fails here with where it was found.
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { expect, it } from 'vitest';
import { openApiDocument } from '../../../scripts/api-schema.ts';
import { projectRoot } from '../../../server/paths.ts';

/** Retired API names → the one name now used. */
const RETIRED_API_NAMES: Record<string, string> = {
  requiredMarginDb: 'targetMarginDb',
  fadeMarginDb: 'targetMarginDb',
  jobId: 'runId',
  region: 'bandPlan',
};
/** Retired UI wording (case-insensitive) → the wording now used. */
const RETIRED_UI_WORDS: Record<string, string> = {
  'fade margin': 'target margin',
  'required margin': 'target margin',
  'standard deviation': 'spread σ',
};

/** Every property name and path parameter of the document, with where it sits. */
function namesIn(value: unknown, where: string, out: Array<[string, string]>): void {
  if (Array.isArray(value)) value.forEach((v, i) => namesIn(v, `${where}[${i}]`, out));
  else if (value && typeof value === 'object') {
    for (const [key, child] of Object.entries(value as Record<string, unknown>)) {
      if (key === 'properties' && child && typeof child === 'object') for (const name of Object.keys(child)) out.push([name, where]);
      if (key === 'name' && typeof child === 'string') out.push([child, `${where} (parameter)`]);
      namesIn(child, `${where}/${key}`, out);
    }
  }
}

it('no retired name is a property or parameter of the OpenAPI document', async () => {
  const doc = await openApiDocument();
  const names: Array<[string, string]> = [];
  namesIn(doc, '', names);
  expect(names.length).toBeGreaterThan(1000);
  expect(names.some(([name]) => name === 'targetMarginDb')).toBe(true);
  const found = names.filter(([name]) => name in RETIRED_API_NAMES).map(([name, where]) => `${name} at ${where} (say ${RETIRED_API_NAMES[name]})`);
  for (const path of Object.keys((doc as { paths: Record<string, unknown> }).paths)) {
    for (const [param] of path.matchAll(/\{(\w+)\}/g)) if (param.slice(1, -1) in RETIRED_API_NAMES) found.push(`${param} in ${path}`);
  }
  expect(found).toEqual([]);
}, 180_000);

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((entry) => {
    const path = join(dir, entry);
    if (statSync(path).isDirectory()) return entry === 'generated' ? [] : sourceFiles(path);
    return /\.(ts|html)$/.test(entry) ? [path] : [];
  });
}

it('no retired wording in the web UI strings', () => {
  const files = sourceFiles(join(projectRoot, 'web', 'src'));
  expect(files.length).toBeGreaterThan(20);
  const found: string[] = [];
  for (const file of files) {
    // String literals only (quotes and template literals), not comments.
    const strings = readFileSync(file, 'utf8').match(/'(?:[^'\\\n]|\\.)*'|"(?:[^"\\\n]|\\.)*"|`(?:[^`\\]|\\.)*`/g) ?? [];
    for (const text of strings) for (const word of Object.keys(RETIRED_UI_WORDS)) if (text.toLowerCase().includes(word)) found.push(`${file.slice(projectRoot.length + 1)}: ${text.slice(0, 80)} (say ${RETIRED_UI_WORDS[word]})`);
  }
  expect(found).toEqual([]);
});
