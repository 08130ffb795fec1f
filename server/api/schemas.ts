// Shared zod pieces for request and response schemas. Messages name the rule; the error
// handler (errors.ts) puts the field path in front.
import { z } from 'zod';

export const latitude = () => z.number({ error: 'must be a number' }).min(-90, 'latitude must be within ±90°').max(90, 'latitude must be within ±90°');
export const longitude = () =>
  z.number({ error: 'must be a number' }).min(-180, 'longitude must be within ±180°').max(180, 'longitude must be within ±180°');
export const name = () => z.string({ error: 'must be a string' }).trim().min(1, 'must not be empty').max(200, 'must be at most 200 characters');
export const notes = () => z.string().max(10_000, 'must be at most 10000 characters');
export const finite = () => z.number({ error: 'must be a finite number' });
export const nonNegative = () => finite().min(0, 'must be ≥ 0');
export const positive = () => finite().positive('must be > 0');
export const version = () => z.number({ error: 'must be the version you read' }).int('must be a whole number').min(1, 'must be ≥ 1');
export const id = () => z.string().min(1, 'must not be empty').max(100, 'too long');

export const pageQuery = z.strictObject({
  limit: z.coerce.number().int('must be a whole number').min(1, 'must be ≥ 1').max(1000, 'must be ≤ 1000').optional(),
  cursor: z.string().max(100).optional(),
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

/** JSON values as stored in Json columns. */
export const jsonObject = z.record(z.string(), z.unknown());

export const dateTime = z.date().or(z.string());
