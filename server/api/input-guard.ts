// One input sanitation layer for every route, run after parsing and before the route's own
// zod schema (preValidation): path ids, query values and bodies (JSON, CSV text, GeoJSON).
//  - control characters (C0 except tab, line feed and carriage return; DEL; C1) and lone
//    UTF-16 surrogates are refused: PostgreSQL cannot store NUL in text or JSONB, and the
//    rest are never meant in a name, an id or a note;
//  - JSON is bounded in depth and in the number of values, so no later recursive walk
//    (zod, Prisma, the JSONB encoder) can overflow the stack or run for long.
// A refusal is a 400 invalid_input naming the field ("body.settings.a: ...").
import type { FastifyInstance, FastifyRequest } from 'fastify';
import { ApiError } from './errors.ts';

/** Deepest nesting of objects and arrays a request may carry (the deepest legitimate body, a GeoJSON polygon, needs 8). */
export const maxJsonDepth = 32;
/** Most values (scalars, objects, arrays) in one request body. */
export const maxJsonValues = 200_000;

// C0 controls except \t \n \r, DEL, C1 controls, and UTF-16 surrogates that are not in a pair.
// eslint-disable-next-line no-control-regex -- matching control characters is the point
const forbidden = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]|[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;
// Single-line values (ids, query values, object keys) also may not hold tab or line breaks.
// eslint-disable-next-line no-control-regex -- as above
const forbiddenInLine = /[\u0000-\u001F\u007F-\u009F]|[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

function describeChar(text: string, index: number): string {
  const code = text.codePointAt(index) ?? 0;
  return code >= 0xd800 && code <= 0xdfff ? 'an unpaired UTF-16 surrogate' : `control character U+${code.toString(16).toUpperCase().padStart(4, '0')}`;
}

/** Throws 400 when `text` holds a character we never store; `field` names it in the message. */
export function assertCleanText(field: string, text: string, options: { singleLine?: boolean } = {}): void {
  const match = (options.singleLine ? forbiddenInLine : forbidden).exec(text);
  if (match) throw new ApiError(400, 'invalid_input', `${field}: ${describeChar(text, match.index)} is not allowed`);
}

const fieldPath = (base: string, key: string | number) => (typeof key === 'number' ? `${base}[${key}]` : /^[A-Za-z_$][\w$]*$/.test(key) ? `${base}.${key}` : `${base}[${JSON.stringify(key.slice(0, 40))}]`);

/** Walks a parsed JSON value (iteratively: depth is bounded before anything recurses) and throws 400 on the first bad value. */
export function assertCleanJson(root: string, value: unknown): void {
  const stack: { value: unknown; path: string; depth: number }[] = [{ value, path: root, depth: 0 }];
  let seen = 0;
  while (stack.length > 0) {
    const item = stack.pop()!;
    if (++seen > maxJsonValues) throw new ApiError(400, 'invalid_input', `${root}: more than ${maxJsonValues} JSON values`);
    const current = item.value;
    if (typeof current === 'string') {
      assertCleanText(item.path, current);
      continue;
    }
    if (current === null || typeof current !== 'object') continue;
    if (item.depth >= maxJsonDepth) throw new ApiError(400, 'invalid_input', `${item.path}: nested deeper than ${maxJsonDepth} levels`);
    if (Array.isArray(current)) {
      for (let i = current.length - 1; i >= 0; i--) stack.push({ value: current[i], path: fieldPath(item.path, i), depth: item.depth + 1 });
      continue;
    }
    for (const key of Object.keys(current)) {
      assertCleanText(`${fieldPath(item.path, key)} (the key)`, key, { singleLine: true });
      stack.push({ value: (current as Record<string, unknown>)[key], path: fieldPath(item.path, key), depth: item.depth + 1 });
    }
  }
}

/** A text body (CSV): the message names the line and column of the first bad character. */
export function assertCleanBodyText(text: string): void {
  const match = forbidden.exec(text);
  if (!match) return;
  const before = text.slice(0, match.index);
  const line = before.split(/\r\n|\r|\n/).length;
  const column = match.index - Math.max(before.lastIndexOf('\n'), before.lastIndexOf('\r'));
  throw new ApiError(400, 'invalid_input', `body (line ${line}, column ${column}): ${describeChar(text, match.index)} is not allowed`);
}

function checkRecord(root: string, record: unknown): void {
  if (!record || typeof record !== 'object') return;
  for (const [key, value] of Object.entries(record as Record<string, unknown>)) {
    const path = fieldPath(root, key);
    assertCleanText(`${path} (the name)`, key, { singleLine: true });
    for (const one of Array.isArray(value) ? value : [value]) {
      if (typeof one === 'string') assertCleanText(path, one, { singleLine: true });
    }
  }
}

/** Checks params, query and body of one request (exported for the tests). */
export function checkRequestInput(request: Pick<FastifyRequest, 'params' | 'query' | 'body'>): void {
  checkRecord('path', request.params);
  checkRecord('query', request.query);
  const body = request.body;
  if (typeof body === 'string') assertCleanBodyText(body);
  else if (body !== null && typeof body === 'object' && typeof (body as { pipe?: unknown }).pipe !== 'function' && !Buffer.isBuffer(body)) assertCleanJson('body', body);
}

export function installInputGuard(app: FastifyInstance): void {
  app.addHook('preValidation', async (request) => {
    checkRequestInput(request);
  });
}
