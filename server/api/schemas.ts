// Shared zod pieces for request and response schemas. Messages name the rule; the error
// handler (errors.ts) puts the field path in front.
import { z } from 'zod';
import { decodeCursor, InvalidCursorError } from '../db/repositories/pagination.ts';
import { FIELD_RANGES, type RangedField } from '../planning/field-ranges.ts';

/** Largest value of a PostgreSQL INTEGER column (the `version` columns and other Int fields). */
export const int32Max = 2_147_483_647;
/** A whole number that fits an INTEGER column. */
export const int32 = () =>
  z.number({ error: 'must be a number' }).int('must be a whole number').min(-int32Max - 1, `must be ≥ ${-int32Max - 1}`).max(int32Max, `must be ≤ ${int32Max}`);

export const latitude = () => z.number({ error: 'must be a number' }).min(-90, 'latitude must be within ±90°').max(90, 'latitude must be within ±90°');
export const longitude = () =>
  z.number({ error: 'must be a number' }).min(-180, 'longitude must be within ±180°').max(180, 'longitude must be within ±180°');
export const name = () => z.string({ error: 'must be a string' }).trim().min(1, 'must not be empty').max(200, 'must be at most 200 characters');
export const notes = () => z.string().max(10_000, 'must be at most 10000 characters');
export const finite = () => z.number({ error: 'must be a finite number' });
export const nonNegative = () => finite().min(0, 'must be ≥ 0');
export const positive = () => finite().positive('must be > 0');
export const version = () => z.number({ error: 'must be the version you read' }).int('must be a whole number').min(1, 'must be ≥ 1').max(int32Max, `must be ≤ ${int32Max}`);
export const id = () => z.string().min(1, 'must not be empty').max(100, 'too long');

export const pageQuery = z.strictObject({
  limit: z.coerce.number().int('must be a whole number').min(1, 'must be ≥ 1').max(1000, 'must be ≤ 1000').optional(),
  cursor: z
    .string()
    .max(100)
    .refine((cursor) => {
      try {
        decodeCursor(cursor);
        return true;
      } catch (error) {
        if (error instanceof InvalidCursorError) return false;
        throw error;
      }
    }, 'not a cursor this server handed out (use the `next` of the previous page)')
    .optional(),
});

export const planParams = z.strictObject({ planId: id() });
export const planItemParams = z.strictObject({ planId: id(), id: id() });
export const itemParams = z.strictObject({ id: id() });

export const errorSchema = z.object({ error: z.object({ code: z.string(), message: z.string() }).loose() });
/**
 * The shared 4xx answer for a route's `response` (errors.ts sends every error through it); loose
 * inside, so extras such as `currentVersion` on a 409 are kept.
 */
export const errorResponses = {
  '4xx': errorSchema.describe('{ error: { code, message } }; 400 invalid_input names the field and rule, 409 version_conflict adds currentVersion'),
};

export function pageOf<T extends z.ZodType>(item: T) {
  return z.object({ items: z.array(item), total: z.number().int(), next: z.string().nullable() });
}

/** Deepest nesting and largest size of a free-form JSON object (plan settings, antenna pattern, kit details). */
export const maxJsonFieldDepth = 12;
export const maxJsonFieldBytes = 256 * 1024;

function jsonDepth(value: unknown, limit: number): number {
  // Iterative, so a hostile value cannot overflow the stack; stops counting past the limit.
  let deepest = 0;
  const stack: [unknown, number][] = [[value, 0]];
  while (stack.length > 0) {
    const [current, depth] = stack.pop()!;
    if (current === null || typeof current !== 'object') continue;
    const level = depth + 1;
    if (level > deepest) deepest = level;
    if (deepest > limit) return deepest;
    for (const child of Object.values(current as Record<string, unknown>)) stack.push([child, level]);
  }
  return deepest;
}

/** JSON values as stored in Json columns: an object, at most 12 levels deep and 256 KB as JSON. */
export const jsonObject = z
  .record(z.string(), z.unknown())
  .refine((value) => jsonDepth(value, maxJsonFieldDepth) <= maxJsonFieldDepth, `must be nested at most ${maxJsonFieldDepth} levels deep`)
  .refine((value) => Buffer.byteLength(JSON.stringify(value) ?? '') <= maxJsonFieldBytes, `must be at most ${maxJsonFieldBytes / 1024} KB as JSON`);

export const dateTime = z.date().or(z.string());

/** The children of a run split into child jobs (fleet link table runs, multi-gateway coverage runs), counted by state. */
export const runChildren = z.object({
  total: z.number().int(),
  done: z.number().int(),
  retried: z.number().int().describe('children taken more than once (a worker died or failed)'),
  failed: z.number().int(),
  cancelled: z.number().int(),
});

// ---- One rule per physical input ------------------------------------------------------------
// Every route that takes one of these quantities builds its field here, and
// GET /client-settings serves the same table so every UI form uses the same limits.

// Defined in a pure room so the CLI (which imports no api/) and the routes apply the one table.
export { FIELD_RANGES, type FieldRange, type RangedField } from '../planning/field-ranges.ts';

/** A number field within FIELD_RANGES[field], with messages naming the limit and its unit. */
export function ranged(field: RangedField) {
  const r = FIELD_RANGES[field];
  const unit = r.unit === 'B' ? ' bytes' : ` ${r.unit}`;
  return finite().min(r.min, `must be ≥ ${r.min}${unit}`).max(r.max, `must be ≤ ${r.max}${unit}`);
}

export const nodeAntennaHeightAglM = () => ranged('nodeAntennaHeightAglM');
export const gatewayAntennaHeightAglM = () => ranged('gatewayAntennaHeightAglM');
export const nodeTxPowerDbm = () => ranged('nodeTxPowerDbm');
export const gatewayTxPowerDbm = () => ranged('gatewayTxPowerDbm');
export const nodeFeedlineLengthM = () => ranged('nodeFeedlineLengthM');
export const gatewayFeedlineLengthM = () => ranged('gatewayFeedlineLengthM');
export const targetMarginDb = () => ranged('targetMarginDb');
export const sigmaDb = () => ranged('sigmaDb');
export const noiseFigureDb = () => ranged('noiseFigureDb');
export const coverageRadiusKm = () => ranged('coverageRadiusKm');
export const payloadBytes = () => ranged('payloadBytes').int('must be a whole number');
export const maxNodesPerGateway = () => ranged('maxNodesPerGateway').int('must be a whole number');
export const nodeEnvironment = () => z.enum(['outdoor', 'indoor', 'pit'], { error: 'must be outdoor, indoor or pit' });
