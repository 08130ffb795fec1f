// Lists answer { items, total, next }: `next` is an opaque cursor for the following page.

export interface PageQuery {
  limit?: number;
  cursor?: string | null;
}

export interface Page<T> {
  items: T[];
  total: number;
  next: string | null;
}

export const defaultPageLimit = 100;
export const maxPageLimit = 1000;

/** A cursor that this server did not hand out (the API answers 400). */
export class InvalidCursorError extends Error {
  constructor() {
    super('cursor: not a cursor this server handed out (use the `next` of the previous page)');
  }
}

/** Largest offset a cursor may carry (a PostgreSQL INTEGER, far beyond any real list). */
export const maxCursorOffset = 2_147_483_647;

/** The offset in a cursor; throws InvalidCursorError unless it is the base64url of a plain decimal offset in range. */
export function decodeCursor(cursor: string | null | undefined): number {
  if (!cursor) return 0;
  if (!/^[A-Za-z0-9_-]{1,16}$/.test(cursor)) throw new InvalidCursorError();
  const text = Buffer.from(cursor, 'base64url').toString('utf8');
  if (!/^(0|[1-9]\d{0,9})$/.test(text)) throw new InvalidCursorError();
  const offset = Number(text);
  if (offset > maxCursorOffset) throw new InvalidCursorError();
  return offset;
}

export function encodeCursor(offset: number): string {
  return Buffer.from(String(offset), 'utf8').toString('base64url');
}

export function pageWindow(query: PageQuery): { skip: number; take: number } {
  const take = Math.min(Math.max(1, Math.trunc(query.limit ?? defaultPageLimit)), maxPageLimit);
  return { skip: decodeCursor(query.cursor), take };
}

export function toPage<T>(items: T[], total: number, window: { skip: number; take: number }): Page<T> {
  const end = window.skip + items.length;
  return { items, total, next: end < total ? encodeCursor(end) : null };
}
