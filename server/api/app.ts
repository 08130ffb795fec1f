// The Fastify application: security headers, request logs without secrets, zod
// validation, OpenAPI, authentication, error mapping and every route plugin under /api/v1.
// Other rooms add ONE register line each in registerApiRoutes below.
import { randomUUID } from 'node:crypto';
import Fastify, { LogController, type FastifyInstance, type FastifyServerOptions } from 'fastify';
import cookie from '@fastify/cookie';
import helmet from '@fastify/helmet';
import rateLimit from '@fastify/rate-limit';
import swagger from '@fastify/swagger';
import { jsonSchemaTransform, serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import { installAuth } from './auth.ts';
import type { AuthThrottle } from './auth-throttle.ts';
import { errorBody, installErrorHandlers, sendError } from './errors.ts';
import { installInputGuard } from './input-guard.ts';
import healthRoutes from './routes/health.ts';
import authRoutes, { signInRoutes } from './routes/auth.ts';
import planRoutes from './routes/plans.ts';
import siteRoutes from './routes/sites.ts';
import gatewayRoutes from './routes/gateways.ts';
import nodeRoutes from './routes/nodes.ts';
import kitRoutes from './routes/kit.ts';
import auditRoutes from './routes/audit.ts';
import adminRoutes from './routes/admin.ts';
import terrainRoutes from './routes/terrain.ts';
import { LinkEngine } from '../jobs/link-engine.ts';
import { createGate, TILE_RENDERS_AT_ONCE, type Gate } from './tile-gate.ts';

declare module 'fastify' {
  interface FastifyInstance {
    /** The database, config and job runner every route plugin uses. */
    deps: AppDeps;
    /** The link engine of this app (one per process: its terrain stores, worker threads and recent answers). */
    linkEngine: LinkEngine;
    /** Map tile renders of this process pass through here (server/api/tile-gate.ts). */
    tileRenders: Gate;
  }
}

export interface AppDeps {
  db: Database;
  config: Config;
  logger?: boolean | object;
  jobs?: unknown;
  /** Failed-authentication throttle (default: in memory, or in Redis when REDIS_URL is set). */
  authThrottle?: AuthThrottle;
  /** When set, the loopback-only admin endpoints (/_admin/*) accept this secret (see server/cli/admin.ts). */
  adminSecret?: string;
}

/** Query parameters whose values never reach the logs (compared after percent-decoding, case-insensitively). */
const secretQueryParams = new Set(['token', 'access_token', 'secret', 'password']);

function decodedName(raw: string): string {
  try {
    return decodeURIComponent(raw.replace(/\+/g, ' ')).trim().toLowerCase();
  } catch {
    return raw.toLowerCase();
  }
}

/**
 * The URL with the value of every secret query parameter replaced. Parameters are split and
 * their names decoded the way the query parser does, so `?%74oken=` and `?TOKEN=` are caught
 * too (a substring match on "token=" is not enough). A name that does not decode is redacted.
 */
export function redactUrl(url: string): string {
  const mark = url.indexOf('?');
  if (mark < 0) return url;
  const parts = url
    .slice(mark + 1)
    .split('&')
    .map((pair) => {
      const eq = pair.indexOf('=');
      const name = eq < 0 ? pair : pair.slice(0, eq);
      let secret = secretQueryParams.has(decodedName(name));
      try {
        decodeURIComponent(name);
      } catch {
        secret = true;
      }
      return secret && eq >= 0 ? `${name}=[redacted]` : pair;
    });
  return `${url.slice(0, mark)}?${parts.join('&')}`;
}

function loggerOptions(logger: AppDeps['logger'], level: string): FastifyServerOptions['logger'] {
  if (logger === false || logger === undefined) return false;
  const base = typeof logger === 'object' ? logger : {};
  return {
    level,
    ...base,
    // Never log credentials: the request serializer keeps only method, url (token params
    // redacted), host and remote address; headers are not logged at all.
    redact: { paths: ['req.headers.authorization', 'req.headers.cookie', 'res.headers["set-cookie"]', 'headers.authorization', 'headers.cookie'], censor: '[redacted]' },
    serializers: {
      req(request: { method: string; url: string; hostname?: string; ip?: string; id?: string }) {
        return { method: request.method, url: redactUrl(request.url), host: request.hostname, remoteAddress: request.ip };
      },
    },
  };
}

/** Trust the nearest `hops` proxies (as Fastify's numeric trustProxy does; its types want a function). */
function trustHops(hops: number): (address: string, hop: number) => boolean {
  return (_address, hop) => hop < hops;
}

async function registerApiRoutes(api: FastifyInstance): Promise<void> {
  await api.register(healthRoutes);
  await api.register(authRoutes);
  await api.register(planRoutes);
  await api.register(siteRoutes);
  await api.register(gatewayRoutes);
  await api.register(nodeRoutes);
  await api.register(kitRoutes);
  await api.register(auditRoutes);
  // Other rooms: one register line each below (e.g. `await api.register(terrainRoutes);`).
  await api.register(terrainRoutes);
  await api.register((await import('./routes/links.ts')).default);
  await api.register((await import('./routes/coverage.ts')).default);
  await api.register((await import('./routes/client-settings.ts')).default);
  await api.register((await import('./routes/team-access.ts')).default);
  await api.register((await import('./routes/gateway-checks.ts')).default);
  await api.register((await import('./routes/kit-price.ts')).default);
  await api.register((await import('./routes/capacity.ts')).default);
  await api.register((await import('./routes/calibration.ts')).default);
  await api.register((await import('./routes/exports.ts')).default);
  await api.register((await import('./routes/scenarios.ts')).default);
  await api.register((await import('./routes/tuning.ts')).default);
  await api.register((await import('./routes/siting.ts')).default);
  await api.register((await import('./routes/link-runs.ts')).default);
}

export async function buildApp(deps: AppDeps): Promise<FastifyInstance> {
  const { config } = deps;
  const app = Fastify({
    logger: loggerOptions(deps.logger, config.logLevel),
    bodyLimit: config.maxJsonBodyBytes,
    genReqId: (request) => {
      const given = request.headers['x-request-id'];
      return typeof given === 'string' && /^[A-Za-z0-9._-]{1,64}$/.test(given) ? given : randomUUID();
    },
    requestIdHeader: false,
    trustProxy: typeof config.trustProxy === 'number' ? trustHops(config.trustProxy) : config.trustProxy,
    routerOptions: { ignoreTrailingSlash: true },
    // Errors the router raises before any route runs (a path id longer than the router's limit
    // → 414, a malformed percent-escape → 400) answer in our error shape too.
    frameworkErrors: (error, _request, reply) => {
      const code = (error as { code?: string }).code;
      if (code === 'FST_ERR_MAX_PARAM_LENGTH') return sendError(reply, 414, 'uri_too_long', 'path: a path segment is longer than this server accepts');
      if (code === 'FST_ERR_BAD_URL') return sendError(reply, 400, 'invalid_input', 'path: not a valid percent-encoded URL');
      return sendError(reply, 400, 'bad_request', 'the request could not be read');
    },
    // Errors of the HTTP parser itself (no request object exists yet): headers or URL too large
    // → 431, anything else malformed → 400; written straight to the socket in our shape.
    clientErrorHandler: (error: NodeJS.ErrnoException, socket) => {
      if (error.code === 'ECONNRESET' || socket.destroyed) return;
      const [status, text, code, message] =
        error.code === 'HPE_HEADER_OVERFLOW'
          ? [431, 'Request Header Fields Too Large', 'headers_too_large', 'the request line or headers are larger than this server accepts']
          : error.code === 'HPE_URI_TOO_LONG'
            ? [414, 'URI Too Long', 'uri_too_long', 'the URL is longer than this server accepts']
            : error.code === 'ERR_HTTP_REQUEST_TIMEOUT'
              ? [408, 'Request Timeout', 'request_timeout', 'the request was not received in time']
              : [400, 'Bad Request', 'bad_request', 'malformed HTTP request'];
      const body = JSON.stringify(errorBody(code, message));
      if (socket.writable) socket.write(`HTTP/1.1 ${status} ${text}\r\nContent-Length: ${Buffer.byteLength(body)}\r\nContent-Type: application/json; charset=utf-8\r\nConnection: close\r\n\r\n${body}`);
      socket.destroy(error);
    },
    forceCloseConnections: true,
    // Route plugins do real start-up work (unfinished runs queued again, queues opened): on a busy
    // machine that can outlast Fastify's 10 s default, which would abort the start.
    pluginTimeout: 120_000,
    // One line per request, written on completion at config.requestLogLevel (below), instead
    // of Fastify's two info lines that flood a terminal. (Through the log controller: the
    // top-level disableRequestLogging option is deprecated, FSTDEP023.)
    logController: new LogController({ disableRequestLogging: true }),
  }).withTypeProvider<ZodTypeProvider>();

  app.decorate('deps', deps);
  const linkEngine = new LinkEngine(deps.db, config);
  app.decorate('linkEngine', linkEngine);
  app.decorate('tileRenders', createGate(TILE_RENDERS_AT_ONCE));
  // Root onClose runs after the route plugins' own (they wait for their fleet jobs first).
  app.addHook('onClose', async () => linkEngine.close());
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  app.addHook('onSend', async (request, reply) => {
    reply.header('x-request-id', request.id);
    // A write answered here: read memos taken before it must not serve the caller's next read,
    // even before PostgreSQL's change notification arrives (server/db/change-feed.ts).
    if (request.method !== 'GET' && request.method !== 'HEAD') deps.db.changes?.bump();
  });
  const requestLogLevel = config.requestLogLevel ?? 'debug';
  app.addHook('onResponse', async (request, reply) => {
    request.log[requestLogLevel]({ req: request, res: { statusCode: reply.statusCode }, responseTimeMs: Math.round(reply.elapsedTime) }, 'request');
  });

  // CSV and GeoJSON bodies for imports.
  app.addContentTypeParser(['text/csv', 'text/plain'], { parseAs: 'string' }, (_request, body, done) => done(null, body));
  app.addContentTypeParser('application/geo+json', { parseAs: 'string' }, (_request, body, done) => {
    try {
      done(null, JSON.parse(body as string));
    } catch (error) {
      const syntax = error as Error & { statusCode?: number };
      syntax.statusCode = 400;
      done(syntax, undefined);
    }
  });

  const baseLayerOrigin = (() => {
    if (!config.onlineBaseLayerUrl) return [];
    try {
      return [new URL(config.onlineBaseLayerUrl.replace(/\{[a-z]\}/gi, 'a')).origin];
    } catch {
      return [];
    }
  })();
  await app.register(helmet, {
    contentSecurityPolicy: {
      directives: {
        defaultSrc: ["'self'"],
        imgSrc: ["'self'", 'data:', 'blob:', ...baseLayerOrigin],
        // Leaflet positions map panes with inline styles.
        styleSrc: ["'self'", "'unsafe-inline'"],
        scriptSrc: ["'self'"],
        connectSrc: ["'self'"],
        objectSrc: ["'none'"],
        frameAncestors: ["'none'"],
        upgradeInsecureRequests: null,
      },
    },
    crossOriginEmbedderPolicy: false,
    hsts: false, // served on plain HTTP on a LAN by default; a TLS proxy in front adds HSTS
  });
  await app.register(cookie);
  await app.register(rateLimit, { global: false });
  await app.register(swagger, {
    openapi: {
      openapi: '3.1.0',
      info: { title: 'earshot API', version: '1', description: 'Planning server for long-range, low-power sensor fleets.' },
      components: { securitySchemes: { bearer: { type: 'http', scheme: 'bearer' } } },
      security: [{ bearer: [] }],
    },
    transform: jsonSchemaTransform,
  });

  installErrorHandlers(app);
  installAuth(app, deps.db, { redisUrl: config.redisUrl, throttle: deps.authThrottle });
  installInputGuard(app);

  await app.register(signInRoutes);
  await app.register((await import('./routes/team-access.ts')).sessionExchangeRoutes);
  if (deps.adminSecret) await app.register(adminRoutes, { prefix: '/_admin' });
  await app.register(registerApiRoutes, { prefix: '/api/v1' });
  app.get('/api/v1/openapi.json', { schema: { hide: true } }, async () => app.swagger());
  return app;
}
