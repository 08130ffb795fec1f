// One error shape for the whole API: { error: { code, message } } with a fitting status.
// Validation failures name the field and the rule; anything unexpected is logged and
// answered with a generic 500 (never a stack trace).
import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { hasZodFastifySchemaValidationErrors, isResponseSerializationError } from 'fastify-type-provider-zod';
import { ConflictError, NotFoundError, VersionConflictError } from '../db/errors.ts';
import { InvalidCursorError } from '../db/repositories/pagination.ts';
import { AppError, type AppErrorKind } from '../app/errors.ts';
import { PlanSettingsError } from '../planning/settings.ts';
import { CoverageInputError } from '../coverage/terrain-window.ts';
import { InvalidPatternError } from '../radio/pattern-schema.ts';

/** HTTP status of each engine / use-case error kind (the only place kinds become statuses). */
export const STATUS_OF_KIND: Record<AppErrorKind, number> = {
  invalid_input: 400,
  not_found: 404,
  conflict: 409,
  gone: 410,
  too_large: 413,
  unprocessable: 422,
};

/** The answer for an error of the rooms below the API, or null for anything else. */
export function apiErrorOf(error: unknown): ApiError | null {
  if (error instanceof ApiError) return error;
  if (error instanceof AppError) return new ApiError(STATUS_OF_KIND[error.kind], error.code, error.message);
  if (error instanceof PlanSettingsError) return new ApiError(422, 'invalid_plan_settings', error.message);
  if (error instanceof InvalidPatternError) return new ApiError(422, 'invalid_kit', error.message);
  if (error instanceof CoverageInputError) return new ApiError(error.code === 'too_many_cells' ? 413 : 422, error.code, error.message);
  return null;
}

export class ApiError extends Error {
  constructor(
    readonly statusCode: number,
    readonly code: string,
    message: string,
    readonly extra?: Record<string, unknown>,
  ) {
    super(message);
  }
}

export interface ErrorBody {
  error: { code: string; message: string; [key: string]: unknown };
}

export function errorBody(code: string, message: string, extra?: Record<string, unknown>): ErrorBody {
  return { error: { code, message, ...extra } };
}

interface ValidationIssue {
  instancePath: string;
  message?: string;
  keyword?: string;
  params?: Record<string, unknown>;
}

/** "lat: latitude must be within ±90°" — the field path (dots) then the rule. */
export function describeValidation(issues: readonly ValidationIssue[], context?: string): string {
  const parts = issues.slice(0, 5).map((issue) => {
    const path = issue.instancePath.replace(/^\//, '').split('/').filter(Boolean).join('.');
    if (issue.keyword === 'unrecognized_keys' && Array.isArray(issue.params?.keys)) {
      const keys = (issue.params.keys as string[]).map((key) => (path ? `${path}.${key}` : key));
      return `${keys.join(', ')}: unknown field${keys.length > 1 ? 's' : ''}`;
    }
    return `${path || context || 'body'}: ${issue.message ?? 'invalid'}`;
  });
  if (issues.length > 5) parts.push(`(${issues.length - 5} more)`);
  return parts.join('; ');
}

export function sendError(reply: FastifyReply, statusCode: number, code: string, message: string, extra?: Record<string, unknown>) {
  return reply.status(statusCode).type('application/json; charset=utf-8').send(errorBody(code, message, extra));
}

// Database refusals that can only come from a value in the request (a safety net behind the
// input guard and the schemas): PostgreSQL SQLSTATE 22xxx "data exception" codes (PostgreSQL
// manual, Appendix A) and the Prisma codes for a value that does not fit its column.
const inputSqlStates = new Set(['22001', '22003', '22021', '22P02', '22P05', '22008', '22007', '54001']);
const inputPrismaCodes = new Set(['P2000', 'P2006', 'P2007', 'P2019', 'P2020', 'P2023', 'P2033']);

function databaseInputError(error: unknown): string | null {
  if (!error || typeof error !== 'object') return null;
  const candidate = error as { code?: unknown; name?: unknown; meta?: { driverAdapterError?: { cause?: { originalCode?: unknown; kind?: unknown } } } };
  const cause = candidate.meta?.driverAdapterError?.cause;
  if (typeof cause?.originalCode === 'string' && inputSqlStates.has(cause.originalCode)) return cause.originalCode;
  if (typeof candidate.code === 'string' && inputPrismaCodes.has(candidate.code) && /^PrismaClient/.test(String(candidate.name ?? (error as Error).constructor?.name))) return candidate.code;
  if (typeof candidate.code === 'string' && inputSqlStates.has(candidate.code) && typeof (error as { severity?: unknown }).severity === 'string') return candidate.code; // node-postgres error
  return null;
}

// Malformed multipart bodies (busboy and @fastify/multipart): the client's fault, never a 500.
const multipartProblem = /^(Unexpected end of (form|multipart data)|Malformed part header|Multipart: Boundary not found|Malformed urlencoded form)/i;

export function installErrorHandlers(app: FastifyInstance): void {
  app.setNotFoundHandler((request: FastifyRequest, reply: FastifyReply) =>
    sendError(reply, 404, 'not_found', `no route ${request.method} ${request.url.split('?')[0]}`),
  );

  app.setErrorHandler((error: FastifyError | Error, request: FastifyRequest, reply: FastifyReply) => {
    if (error instanceof ApiError) return sendError(reply, error.statusCode, error.code, error.message, error.extra);
    const mapped = apiErrorOf(error);
    if (mapped) return sendError(reply, mapped.statusCode, mapped.code, mapped.message, mapped.extra);
    if (error instanceof NotFoundError) return sendError(reply, 404, 'not_found', error.message);
    if (error instanceof VersionConflictError) {
      return sendError(reply, 409, 'version_conflict', error.message, { currentVersion: error.currentVersion });
    }
    if (error instanceof ConflictError) return sendError(reply, 409, 'conflict', error.message);
    if (error instanceof InvalidPatternError) return sendError(reply, 422, 'invalid_kit', error.message);
    if (error instanceof InvalidCursorError) return sendError(reply, 400, 'invalid_input', error.message);
    if (hasZodFastifySchemaValidationErrors(error)) {
      const context = (error as { validationContext?: string }).validationContext;
      return sendError(reply, 400, 'invalid_input', describeValidation(error.validation, context));
    }
    if (isResponseSerializationError(error)) {
      request.log.error({ err: error }, 'response did not match its schema');
      return sendError(reply, 500, 'internal', 'internal error');
    }
    const fastifyError = error as FastifyError;
    switch (fastifyError.code) {
      case 'FST_ERR_CTP_BODY_TOO_LARGE':
        return sendError(reply, 413, 'payload_too_large', 'request body is larger than this endpoint accepts');
      case 'FST_ERR_CTP_INVALID_MEDIA_TYPE':
        return sendError(reply, 415, 'unsupported_media_type', `content type ${request.headers['content-type'] ?? '(none)'} is not accepted here`);
      case 'FST_ERR_CTP_EMPTY_JSON_BODY':
        return sendError(reply, 400, 'invalid_json', 'body: a JSON body is required');
      case 'FST_ERR_CTP_INVALID_JSON_BODY':
        return sendError(reply, 400, 'invalid_json', `body: not valid JSON (${fastifyError.message})`);
      default:
        break;
    }
    if (error instanceof SyntaxError && fastifyError.statusCode === 400) {
      return sendError(reply, 400, 'invalid_json', `body: not valid JSON (${error.message})`);
    }
    const dbInput = databaseInputError(error);
    if (dbInput) {
      request.log.warn({ err: error, code: dbInput }, 'database refused a value from the request');
      return sendError(reply, 400, 'invalid_input', 'body: a value is out of range for its field or holds characters that cannot be stored');
    }
    if (multipartProblem.test(error.message) || /^FST_(INVALID_MULTIPART|PARTS_LIMIT|FILES_LIMIT|FIELDS_LIMIT|PROTO_VIOLATION)/.test(String(fastifyError.code ?? ''))) {
      return sendError(reply, 400, 'invalid_multipart', `body: malformed multipart/form-data (${error.message.split('\n')[0]})`);
    }
    if (error instanceof RangeError && /call stack/i.test(error.message)) {
      return sendError(reply, 400, 'invalid_input', 'body: nested too deeply');
    }
    if (fastifyError.statusCode === 429) return sendError(reply, 429, 'rate_limited', 'too many requests; wait and retry');
    if (fastifyError.validation) {
      return sendError(reply, 400, 'invalid_input', describeValidation(fastifyError.validation, fastifyError.validationContext));
    }
    if (typeof fastifyError.statusCode === 'number' && fastifyError.statusCode >= 400 && fastifyError.statusCode < 500) {
      return sendError(reply, fastifyError.statusCode, 'bad_request', fastifyError.message);
    }
    request.log.error({ err: error }, 'unexpected error');
    return sendError(reply, 500, 'internal', 'internal error');
  });
}
