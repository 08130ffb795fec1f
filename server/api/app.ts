// The Fastify application: security headers, request logs without secrets, zod
// validation, OpenAPI, authentication, error mapping and every route plugin under /api/v1.
// Other rooms add ONE register line each in registerApiRoutes below.
import { randomUUID } from 'node:crypto';
import Fastify, { type FastifyInstance, type FastifyServerOptions } from 'fastify';
import cookie from '@fastify/cookie';
import helmet from '@fastify/helmet';
import rateLimit from '@fastify/rate-limit';
import swagger from '@fastify/swagger';
import { jsonSchemaTransform, serializerCompiler, validatorCompiler, type ZodTypeProvider } from 'fastify-type-provider-zod';
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import { installAuth } from './auth.ts';
import { installErrorHandlers } from './errors.ts';
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

declare module 'fastify' {
  interface FastifyInstance {
    /** The database, config and job runner every route plugin uses. */
    deps: AppDeps;
    /** The link engine of this app (one per process: its terrain stores, worker threads and recent answers). */
    linkEngine: LinkEngine;
  }
}

export interface AppDeps {
  db: Database;
  config: Config;
  logger?: boolean | object;
  jobs?: unknown;
  /** When set, the loopback-only admin endpoints (/_admin/*) accept this secret (see server/cli/admin.ts). */
  adminSecret?: string;
}

/** Query parameters whose values never reach the logs. */
const secretQueryParams = /([?&](?:token|access_token)=)[^&]*/gi;

export function redactUrl(url: string): string {
  return url.replace(secretQueryParams, '$1[redacted]');
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
    routerOptions: { ignoreTrailingSlash: true },
    forceCloseConnections: true,
  }).withTypeProvider<ZodTypeProvider>();

  app.decorate('deps', deps);
  const linkEngine = new LinkEngine(deps.db, config);
  app.decorate('linkEngine', linkEngine);
  // Root onClose runs after the route plugins' own (they wait for their fleet jobs first).
  app.addHook('onClose', async () => linkEngine.close());
  app.setValidatorCompiler(validatorCompiler);
  app.setSerializerCompiler(serializerCompiler);
  app.addHook('onSend', async (request, reply) => {
    reply.header('x-request-id', request.id);
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
  installAuth(app, deps.db);

  await app.register(signInRoutes);
  await app.register((await import('./routes/team-access.ts')).sessionExchangeRoutes);
  if (deps.adminSecret) await app.register(adminRoutes, { prefix: '/_admin' });
  await app.register(registerApiRoutes, { prefix: '/api/v1' });
  app.get('/api/v1/openapi.json', { schema: { hide: true } }, async () => app.swagger());
  return app;
}
