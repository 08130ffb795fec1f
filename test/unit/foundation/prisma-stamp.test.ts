// The launcher's "is the Prisma client current?" check (scripts/prisma-generate.mjs
// clientIsFresh): every program start asks it, so the usual answer must come from one stat
// of the schema (the stamp keeps the schema's size and mtime beside its sha256), a checkout
// that only touched the mtime must still count as fresh (and teach the stamp the new stat),
// and any change of content, a missing client or a missing stamp must answer stale. The
// script finds the schema and the client from its own place, so it runs here from a copy
// in a scratch tree and the repository's own files are never touched.
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, expect, it } from 'vitest';

const root = mkdtempSync(join(tmpdir(), 'earshot-stamp-'));
const schemaPath = join(root, 'prisma', 'schema.prisma');
const generated = join(root, 'server', 'db', 'generated');
const stampPath = join(generated, '.schema-hash');
let clientIsFresh: () => boolean;

const schemaText = 'model Thing {\n  id String @id\n}\n';
const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');
const stamp = () => {
  const stat = statSync(schemaPath);
  writeFileSync(stampPath, `${sha256(readFileSync(schemaPath, 'utf8'))}\n${stat.size}:${Math.round(stat.mtimeMs)}\n`);
};

beforeAll(async () => {
  mkdirSync(join(root, 'scripts'));
  mkdirSync(join(root, 'prisma'));
  mkdirSync(generated, { recursive: true });
  copyFileSync(join(import.meta.dirname, '..', '..', '..', 'scripts', 'prisma-generate.mjs'), join(root, 'scripts', 'prisma-generate.mjs'));
  writeFileSync(schemaPath, schemaText);
  writeFileSync(join(generated, 'client.ts'), '// generated\n');
  ({ clientIsFresh } = (await import(pathToFileURL(join(root, 'scripts', 'prisma-generate.mjs')).href)) as { clientIsFresh: () => boolean });
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

it('a stamp of the schema as it is: fresh, and the stamp is left as it was', () => {
  stamp();
  const before = readFileSync(stampPath, 'utf8');
  expect(clientIsFresh()).toBe(true);
  expect(readFileSync(stampPath, 'utf8')).toBe(before);
});

it('the common case is one stat: a stamp whose size:mtime match is trusted without hashing the schema', () => {
  stamp();
  const [, stat] = readFileSync(stampPath, 'utf8').split('\n');
  // A hash that cannot match: only a check that skips the hash can answer fresh.
  writeFileSync(stampPath, `${'0'.repeat(64)}\n${stat}\n`);
  expect(clientIsFresh()).toBe(true);
  // Once the stat differs, the hash is asked, and this one is wrong.
  const later = new Date(statSync(schemaPath).mtimeMs + 30_000);
  utimesSync(schemaPath, later, later);
  expect(clientIsFresh()).toBe(false);
});

it('same content with a new mtime (a checkout): fresh, and the stamp learns the new size:mtime', () => {
  stamp();
  const later = new Date(statSync(schemaPath).mtimeMs + 60_000);
  utimesSync(schemaPath, later, later);
  expect(clientIsFresh()).toBe(true);
  const [hash, stat] = readFileSync(stampPath, 'utf8').split('\n');
  expect(hash).toBe(sha256(schemaText));
  expect(stat).toBe(`${schemaText.length}:${Math.round(later.getTime())}`);
});

it('changed content: stale, even when the size is the same', () => {
  stamp();
  const edited = schemaText.replace('Thing', 'Thang');
  expect(edited.length).toBe(schemaText.length);
  writeFileSync(schemaPath, edited);
  expect(clientIsFresh()).toBe(false);
  writeFileSync(schemaPath, schemaText);
});

it('no stamp, or no generated client: stale', () => {
  stamp();
  rmSync(stampPath);
  expect(clientIsFresh()).toBe(false);
  stamp();
  rmSync(join(generated, 'client.ts'));
  expect(clientIsFresh()).toBe(false);
  writeFileSync(join(generated, 'client.ts'), '// generated\n');
});
