// Errors raised by repositories; server/api/errors.ts maps them to HTTP answers.

/** The row does not exist (or belongs to another team: callers never learn which). */
export class NotFoundError extends Error {
  constructor(readonly entity: string) {
    super(`${entity} not found`);
  }
}

/** An update carried a version that is no longer current. */
export class VersionConflictError extends Error {
  constructor(
    readonly entity: string,
    readonly currentVersion: number,
  ) {
    super(`${entity} was changed by someone else (current version ${currentVersion}); reload and retry`);
  }
}

/** A unique value is already taken (e.g. a team slug). */
export class ConflictError extends Error {}
