// Loopback-only admin endpoints for the CLI while the server runs (the embedded data folder
// must never be opened by two processes). The CLI reads port and secret from
// <dataDir>/admin.json (mode 0600, written by server/main.ts) and sends the secret in
// X-Earshot-Admin. Mounted at /_admin only when buildApp gets an adminSecret.
import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyInstance, FastifyRequest } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { adminTeamAdd, adminTokenIssue, adminTokenRevoke, teamAddInput, tokenIssueInput, tokenRevokeInput } from '../../db/repositories/admin-ops.ts';
import { ApiError } from '../errors.ts';
import { linkAdminRoutes } from './links.ts';
import { listNodesForAdmin, listPlansForAdmin, nodesListInput, plansListInput } from '../../app/fleet-lists.ts';
import { reportAdminRoutes } from './exports.ts';
import { sitingAdminRoutes } from './siting.ts';
import { terrainAdminRoutes } from './terrain.ts';

const loopback = new Set(['127.0.0.1', '::1', '::ffff:127.0.0.1']);

function digest(text: string): Buffer {
  return createHash('sha256').update(text).digest();
}

export default async function adminRoutes(app: FastifyInstance): Promise<void> {
  const { db, adminSecret } = app.deps;
  const expected = digest(adminSecret ?? '');
  const api = app.withTypeProvider<ZodTypeProvider>();

  app.addHook('onRequest', async (request: FastifyRequest) => {
    if (!loopback.has(request.socket.remoteAddress ?? '')) throw new ApiError(404, 'not_found', 'not found');
    const given = request.headers['x-earshot-admin'];
    if (typeof given !== 'string' || !adminSecret || !timingSafeEqual(digest(given), expected)) {
      throw new ApiError(401, 'unauthorized', 'admin secret missing or wrong');
    }
  });

  const config = { rateLimit: { max: 60, timeWindow: '1 minute' } };
  api.post('/team-add', { config, schema: { hide: true, body: teamAddInput } }, async (request) => adminTeamAdd(db, request.body));
  api.post('/token-issue', { config, schema: { hide: true, body: tokenIssueInput } }, async (request) => adminTokenIssue(db, request.body));
  api.post('/token-revoke', { config, schema: { hide: true, body: tokenRevokeInput } }, async (request) => adminTokenRevoke(db, request.body));
  // `earshot link` / `earshot recommend` while this server holds the data folder (same engine function).
  await app.register(linkAdminRoutes);
  // `earshot plans` / `earshot nodes` while this server holds the data folder.
  api.post('/plans-list', { config, schema: { hide: true, body: plansListInput } }, async (request) => listPlansForAdmin(db, request.body));
  api.post('/nodes-list', { config, schema: { hide: true, body: nodesListInput } }, async (request) => listNodesForAdmin(db, request.body));
  // `earshot report` / `earshot export` (same reportFile function as the command in-process).
  await app.register(reportAdminRoutes);
  // `earshot terrain upload` (the same checks and storage as POST /plans/:id/terrain).
  await app.register(terrainAdminRoutes);
  // `earshot siting` (the same sitingReport use case as in-process).
  await app.register(sitingAdminRoutes);
  api.get('/ping', { schema: { hide: true, response: { 200: z.object({ ok: z.literal(true), pid: z.number() }) } } }, async () => ({ ok: true as const, pid: process.pid }));
}
