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

export function decodeCursor(cursor: string | null | undefined): number {
  if (!cursor) return 0;
  const offset = Number(Buffer.from(cursor, 'base64url').toString('utf8'));
  return Number.isInteger(offset) && offset >= 0 ? offset : 0;
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
