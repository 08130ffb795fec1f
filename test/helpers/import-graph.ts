// The import graph of our own TypeScript sources, read from the source text (no bundler):
// static `import … from`, `export … from` and bare `import '…'` of relative `.ts` files, and
// package imports by name. Type-only imports (`import type`, `export type`, or braces holding
// only `type` names) are kept apart, since they vanish from the compiled program. Dynamic
// `import()` is not an edge: it is how a module is loaded late on purpose.
// Used by test/unit/foundation/import-graph.test.ts (no circles; the CLI loads commands late).
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';

export interface ImportEdge {
  /** Project-relative path of the imported file, or the package name. */
  target: string;
  /** True for a package (bare specifier), false for one of our files. */
  external: boolean;
  /** True when the import is erased from the compiled program. */
  typeOnly: boolean;
}

const statement = /^[ \t]*(import|export)\s+(type\s+)?([^;'"]*?)\s*from\s*['"]([^'"]+)['"]|^[ \t]*import\s+['"]([^'"]+)['"]/gm;

function isTypeOnly(keywordType: string | undefined, clause: string): boolean {
  if (keywordType) return true;
  const braces = /^\{([\s\S]*)\}$/.exec(clause.trim());
  if (!braces) return false; // a default or namespace import is a value
  const names = braces[1].split(',').map((name) => name.trim()).filter(Boolean);
  return names.length > 0 && names.every((name) => name.startsWith('type '));
}

function packageName(specifier: string): string {
  const parts = specifier.split('/');
  return specifier.startsWith('@') ? parts.slice(0, 2).join('/') : parts[0];
}

/** The imports of one source file (path relative to `root`). */
export function importsOf(root: string, file: string): ImportEdge[] {
  const source = readFileSync(join(root, file), 'utf8');
  const edges: ImportEdge[] = [];
  for (const match of source.matchAll(statement)) {
    const specifier = match[4] ?? match[5];
    const typeOnly = match[5] ? false : isTypeOnly(match[2], match[3]);
    if (specifier.startsWith('.')) {
      const target = relative(root, resolve(dirname(join(root, file)), specifier));
      edges.push({ target, external: false, typeOnly });
    } else if (!specifier.startsWith('node:')) {
      edges.push({ target: packageName(specifier), external: true, typeOnly });
    }
  }
  return edges;
}

function listTs(root: string, dir: string, out: string[] = []): string[] {
  for (const entry of readdirSync(join(root, dir), { withFileTypes: true })) {
    const path = join(dir, entry.name);
    if (entry.isDirectory()) {
      if (entry.name !== 'generated' && entry.name !== 'node_modules') listTs(root, path, out);
    } else if (entry.name.endsWith('.ts') && !entry.name.endsWith('.d.ts')) out.push(path);
  }
  return out;
}

/** Import graph of every .ts file under `dirs` (the Prisma-generated client is left out). */
export function importGraph(root: string, dirs: string[]): Map<string, ImportEdge[]> {
  const graph = new Map<string, ImportEdge[]>();
  for (const dir of dirs) for (const file of listTs(root, dir)) graph.set(file, importsOf(root, file));
  return graph;
}

/** Every circle (as a file list, first file repeated at the end) among the graph's own files. */
export function findCircles(graph: Map<string, ImportEdge[]>, { includeTypes }: { includeTypes: boolean }): string[][] {
  const circles: string[][] = [];
  const state = new Map<string, 'open' | 'done'>();
  const stack: string[] = [];
  const visit = (file: string) => {
    state.set(file, 'open');
    stack.push(file);
    for (const edge of graph.get(file) ?? []) {
      if (edge.external || (edge.typeOnly && !includeTypes) || !graph.has(edge.target)) continue;
      const seen = state.get(edge.target);
      if (seen === 'open') circles.push([...stack.slice(stack.indexOf(edge.target)), edge.target]);
      else if (seen === undefined) visit(edge.target);
    }
    stack.pop();
    state.set(file, 'done');
  };
  for (const file of [...graph.keys()].sort()) if (!state.has(file)) visit(file);
  return circles;
}

/** Everything `entry` loads at start: our files and packages reached by static value imports. */
export function staticallyLoaded(root: string, entry: string): { files: Set<string>; packages: Set<string> } {
  const files = new Set<string>();
  const packages = new Set<string>();
  const walk = (file: string) => {
    if (files.has(file)) return;
    files.add(file);
    if (!existsSync(join(root, file))) return;
    for (const edge of importsOf(root, file)) {
      if (edge.typeOnly) continue;
      if (edge.external) packages.add(edge.target);
      else walk(edge.target);
    }
  };
  walk(entry);
  return { files, packages };
}
