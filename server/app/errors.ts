// Errors of the engine and the use cases carry a kind, never an HTTP status: the API maps
// kinds to statuses (server/api/errors.ts), the CLI prints the message (exit 2).

/**
 * invalid_input: the caller's input breaks a rule (names the field);
 * not_found: a named thing does not exist (or belongs to another team);
 * unprocessable: the input is well-formed but the plan's data cannot serve it
 *   (no terrain, no gateways, bad plan settings, out of range);
 * too_large: the work asked for is above a ceiling;
 * conflict: the state does not allow it (already finished, not ready).
 */
export type AppErrorKind = 'invalid_input' | 'not_found' | 'unprocessable' | 'too_large' | 'conflict' | 'gone';

export class AppError extends Error {
  constructor(
    readonly kind: AppErrorKind,
    /** Machine-readable code for the answer (e.g. invalid_input, no_terrain, out_of_range). */
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}

export function isAppError(error: unknown): error is AppError {
  return error instanceof AppError;
}
