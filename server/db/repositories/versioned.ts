// Optimistic concurrency: an update names the version it was based on; the row changes
// only if that version is still current (and the version goes up by one), else 409.
import { NotFoundError, VersionConflictError } from '../errors.ts';

export async function versionedUpdate<T extends { version: number }>(
  entity: string,
  steps: {
    /** updateMany({ where: { id, version, <scope> }, data: { ..., version: { increment: 1 } } }) */
    attempt: () => Promise<{ count: number }>;
    /** The row as it is now within the caller's scope, or null. */
    current: () => Promise<T | null>;
  },
): Promise<T> {
  const { count } = await steps.attempt();
  const row = await steps.current();
  if (!row) throw new NotFoundError(entity);
  if (count === 0) throw new VersionConflictError(entity, row.version);
  return row;
}
