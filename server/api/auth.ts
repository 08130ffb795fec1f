// Authentication and roles. Every /api/v1 route except health and the OpenAPI document
// needs `Authorization: Bearer <token>` or the sign-in cookie. Tokens are checked by
// server/db/repositories/accounts.ts (scrypt hash, constant-time compare).
//
// CSRF: the cookie is HttpOnly + SameSite=Strict, and on unsafe methods (POST, PUT, PATCH,
// DELETE) a cookie-authenticated request must also prove it comes from our own page:
// an Origin (or Referer) whose host is this server's Host, or the header
// `X-Earshot-Request: 1` (a custom header a foreign page cannot send without CORS,
// and CORS is off). Bearer-token requests need neither.
import '@fastify/cookie';
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import type { Database } from '../db/client.ts';
import { isTokenCached, verifyToken, type Principal, type Role } from '../db/repositories/accounts.ts';
import { memoryThrottle, redisThrottle, type AuthThrottle } from './auth-throttle.ts';
import { ApiError, sendError } from './errors.ts';

export type { Principal, Role };

declare module 'fastify' {
  interface FastifyRequest {
    /** Set for every authenticated /api/v1 request. */
    principal: Principal;
  }
}

export const sessionCookieName = 'earshot_session';
export const csrfHeaderName = 'x-earshot-request';
const publicApiPaths = new Set(['/api/v1/health', '/api/v1/openapi.json']);
const safeMethods = new Set(['GET', 'HEAD', 'OPTIONS']);

/** Throws 403 unless the caller has one of the roles. */
export function requireRole(request: FastifyRequest, ...allowed: Role[]): Principal {
  const principal = request.principal;
  if (!principal) throw new ApiError(401, 'unauthorized', 'sign in or send Authorization: Bearer <token>');
  if (!allowed.includes(principal.role)) {
    throw new ApiError(403, 'forbidden', `this needs the ${allowed.join(' or ')} role (you are ${principal.role})`);
  }
  return principal;
}

function bearerToken(request: FastifyRequest): string | null {
  const header = request.headers.authorization;
  if (!header) return null;
  const match = /^Bearer\s+(\S+)\s*$/i.exec(header);
  return match ? match[1] : '';
}

function sameOrigin(request: FastifyRequest): boolean {
  if (request.headers[csrfHeaderName] === '1') return true;
  const host = request.headers.host;
  const origin = request.headers.origin ?? request.headers.referer;
  if (!host || !origin || origin === 'null') return false;
  try {
    return new URL(origin).host === host;
  } catch {
    return false;
  }
}

export function isPublicPath(path: string): boolean {
  return publicApiPaths.has(path) || !path.startsWith('/api/v1/');
}

/**
 * The path as a router could understand it: percent-decoded (repeatedly, so `%2561` cannot
 * hide an `a`), backslashes as slashes, runs of slashes collapsed, `.` and `..` segments
 * resolved (RFC 3986 §5.2.4) and lower-cased. Used only to decide whether a request that
 * matched no route still belongs under /api/v1 (it then needs a token like any other).
 */
export function normalisedPath(url: string): string {
  let path = url.split(/[?#]/)[0];
  for (let i = 0; i < 4 && /%[0-9a-f]{2}/i.test(path); i++) {
    try {
      path = decodeURIComponent(path);
    } catch {
      break;
    }
  }
  const out: string[] = [];
  for (const segment of path.replace(/\\/g, '/').split('/')) {
    if (segment === '' || segment === '.') continue;
    if (segment === '..') out.pop();
    else out.push(segment);
  }
  return `/${out.join('/')}`.toLowerCase();
}

/**
 * Whether a request may pass without a token. Decided on the route the router matched (its
 * pattern, e.g. `/api/v1/plans/:planId`), never on the raw URL: the router decodes the path,
 * so `/%61pi/v1/plans` reaches `/api/v1/plans` and must be judged as that route. A request
 * that matched nothing is judged on its normalised path (it is a 404 either way, but under
 * /api/v1 it answers 401 first, as it always has).
 */
export function isPublicRequest(request: FastifyRequest): boolean {
  const pattern = request.routeOptions?.url;
  if (pattern) return isPublicPath(pattern);
  const path = normalisedPath(request.url);
  return !(path === '/api/v1' || path.startsWith('/api/v1/'));
}

class Throttled extends Error {
  constructor(readonly retryAfterS: number) {
    super('throttled');
  }
}

export function installAuth(app: FastifyInstance, db: Database, options: { throttle?: AuthThrottle; redisUrl?: string; redisPrefix?: string } = {}): void {
  app.decorateRequest('principal', undefined as unknown as Principal);
  const throttle = options.throttle ?? (options.redisUrl ? redisThrottle(options.redisUrl, options.redisPrefix ?? 'earshot:') : memoryThrottle());
  app.addHook('onClose', async () => throttle.close());
  // Concurrent requests with the same not-yet-cached token share one verification (one scrypt,
  // one throttle attempt) instead of each paying for it.
  const inFlight = new Map<string, Promise<Principal | null>>();
  const check = (address: string, token: string): Promise<Principal | null> => {
    if (isTokenCached(db, token)) return verifyToken(db, token);
    let pending = inFlight.get(token);
    if (!pending) {
      pending = (async () => {
        const gate = await throttle.begin(address);
        if (!gate.allowed) throw new Throttled(gate.retryAfterS);
        const principal = await verifyToken(db, token);
        if (principal) await throttle.succeeded(address);
        return principal;
      })().finally(() => inFlight.delete(token));
      inFlight.set(token, pending);
    }
    return pending;
  };
  app.addHook('onRequest', async (request: FastifyRequest, reply: FastifyReply) => {
    if (isPublicRequest(request)) return;
    const bearer = bearerToken(request);
    if (bearer === '') return sendError(reply, 401, 'unauthorized', 'Authorization header must be "Bearer <token>"');
    let token: string;
    if (bearer !== null) {
      token = bearer;
    } else {
      const cookie = request.cookies?.[sessionCookieName];
      if (!cookie) return sendError(reply, 401, 'unauthorized', 'sign in or send Authorization: Bearer <token>');
      if (!safeMethods.has(request.method) && !sameOrigin(request)) {
        return sendError(reply, 403, 'csrf_rejected', `cookie sign-in needs a same-origin request (Origin) or the ${csrfHeaderName}: 1 header`);
      }
      token = cookie;
    }
    let principal: Principal | null;
    try {
      principal = await check(request.ip, token);
    } catch (error) {
      if (!(error instanceof Throttled)) throw error;
      reply.header('retry-after', String(error.retryAfterS));
      return sendError(reply, 429, 'rate_limited', `too many failed sign-ins from this address; retry in ${error.retryAfterS} s`);
    }
    if (!principal) return sendError(reply, 401, 'unauthorized', 'token is unknown, revoked or expired');
    request.principal = { userId: principal.userId, teamId: principal.teamId, role: principal.role, tokenId: principal.tokenId };
  });
}
