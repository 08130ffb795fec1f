// The rule of the rooms, checked on the source: the CLI and the use cases never import the API;
// pure rooms import neither the API, the app layer nor the database; the engine's and use
// cases' errors carry a kind, not an HTTP status (server/api/errors.ts maps kinds).
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { AppError } from '../../../server/app/errors.ts';
import { apiErrorOf, STATUS_OF_KIND } from '../../../server/api/errors.ts';
import { LinkInputError } from '../../../server/jobs/link-engine.ts';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../../server');

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name);
    if (name === 'generated') return [];
    return statSync(full).isDirectory() ? files(full) : full.endsWith('.ts') ? [full] : [];
  });
}

function imports(file: string): string[] {
  const text = readFileSync(file, 'utf8');
  return [...text.matchAll(/^\s*(?:import|export)[^'"]*from\s+'([^']+)'/gm)].map((m) => path.resolve(path.dirname(file), m[1]));
}

const inside = (target: string, room: string) => target.startsWith(path.join(root, room) + path.sep);

describe('rule of the rooms', () => {
  it('server/cli, server/app and server/jobs never import server/api', () => {
    const offenders = ['cli', 'app', 'jobs'].flatMap((room) => files(path.join(root, room)).flatMap((file) => imports(file).filter((t) => inside(t, 'api')).map((t) => `${path.relative(root, file)} → ${path.relative(root, t)}`)));
    expect(offenders).toEqual([]);
  });

  it('pure rooms import neither api, app, jobs nor db', () => {
    const pure = ['radio', 'terrain', 'propagation', 'coverage', 'planning'];
    const offenders = pure.flatMap((room) =>
      files(path.join(root, room)).flatMap((file) => imports(file).filter((t) => ['api', 'app', 'jobs', 'db'].some((r) => inside(t, r))).map((t) => `${path.relative(root, file)} → ${path.relative(root, t)}`)),
    );
    expect(offenders).toEqual([]);
  });

  it('no HTTP status codes below the API: errors carry a kind the API maps', () => {
    const below = ['app', 'jobs', 'cli'].flatMap((room) => files(path.join(root, room)));
    const offenders = below.filter((file) => /statusCode|ApiError/.test(readFileSync(file, 'utf8'))).map((file) => path.relative(root, file));
    expect(offenders).toEqual([]);
    expect(apiErrorOf(new LinkInputError('not_found', 'not_found', 'node not found'))?.statusCode).toBe(404);
    expect(apiErrorOf(new AppError('unprocessable', 'no_terrain', 'x'))?.statusCode).toBe(422);
    expect(STATUS_OF_KIND).toEqual({ invalid_input: 400, not_found: 404, conflict: 409, gone: 410, too_large: 413, unprocessable: 422 });
  });
});
