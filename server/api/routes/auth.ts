// Sign-in and tokens.
//  GET  /signin?token=...   one-time sign-in token -> session cookie -> redirect to /
//  POST /api/v1/auth/signout  revokes the session behind the cookie/bearer token
//  GET  /api/v1/me            who am I (user, team, role)
//  GET/POST/DELETE /api/v1/tokens  planners issue and revoke their team's API tokens
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { createUser, issueToken, revokeToken, roles, verifyToken } from '../../db/repositories/accounts.ts';
import { writeWithAudit } from '../../db/repositories/audit.ts';
import { requireRole, sessionCookieName } from '../auth.ts';
import { startBrowserSession } from '../../app/team-access.ts';
import { setSessionCookie } from './team-access.ts';
import { ApiError } from '../errors.ts';
import { errorResponses, id, itemParams, name, pageOf, pageQuery } from '../schemas.ts';
import { pageWindow, toPage } from '../../db/repositories/pagination.ts';

const tokenRateLimit = { rateLimit: { max: 20, timeWindow: '1 minute' } };

function signInPage(title: string, message: string): string {
  const escape = (text: string) => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>earshot: ${escape(title)}</title></head><body><h1>${escape(title)}</h1><p>${escape(message)}</p></body></html>`;
}

/** Routes outside /api/v1 (the browser lands here from the printed sign-in URL). */
export async function signInRoutes(app: FastifyInstance): Promise<void> {
  app.withTypeProvider<ZodTypeProvider>().get(
    '/signin',
    {
      config: tokenRateLimit,
      schema: { hide: true, querystring: z.object({ token: z.string().max(200).optional() }) },
    },
    async (request, reply) => {
      const { db } = app.deps;
      const token = request.query.token;
      const principal = token ? await verifyToken(db, token, { consumeOneTime: true }) : null;
      if (!principal || !principal.oneTime) {
        // A regular API token is not accepted here: sign-in links are one-time by design.
        return reply
          .status(401)
          .type('text/html; charset=utf-8')
          .send(signInPage('Sign-in link not valid', 'This sign-in link is unknown, expired or already used. Ask a planner of your team for a new one (earshot token issue).'));
      }
      setSessionCookie(request, reply, await startBrowserSession(db, principal, 'one-time link'));
      return reply.redirect('/', 303);
    },
  );
}

const tokenView = z.object({
  id: z.string(),
  userId: z.string(),
  userName: z.string(),
  role: z.enum(['planner', 'installer', 'viewer']),
  label: z.string(),
  createdAt: z.date(),
  lastUsedAt: z.date().nullable(),
  expiresAt: z.date().nullable(),
  revokedAt: z.date().nullable(),
});

const role = z.enum(['planner', 'installer', 'viewer']);
const meResponse = z.object({
  user: z.object({ id: z.string(), name: z.string(), email: z.string().nullable() }),
  team: z.object({ id: z.string(), slug: z.string(), name: z.string() }),
  role,
});
const issuedResponse = z.object({
  token: z.string().describe('the secret; shown only in this answer'),
  id: z.string(),
  userId: z.string(),
  role,
  expiresAt: z.date().nullable(),
});

export default async function authRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;

  api.get('/me', { schema: { summary: 'The signed-in user, team and role', tags: ['auth'], response: { 200: meResponse, ...errorResponses } } }, async (request) => {
    const user = await db.prisma.user.findUniqueOrThrow({ where: { id: request.principal.userId }, include: { team: true } });
    return {
      user: { id: user.id, name: user.name, email: user.email },
      team: { id: user.team.id, slug: user.team.slug, name: user.team.name },
      role: request.principal.role,
    };
  });

  api.post('/auth/signout', { schema: { summary: 'Ends this session (revokes the token behind it)', tags: ['auth'] } }, async (request, reply) => {
    await writeWithAudit(db, (tx) => revokeToken(tx, { id: request.principal.tokenId }), () => ({ principal: request.principal, action: 'signout', entity: 'token', entityId: request.principal.tokenId }));
    reply.clearCookie(sessionCookieName, { path: '/' });
    return reply.status(204).send();
  });

  api.get(
    '/tokens',
    { schema: { summary: "The team's tokens (planners only; secrets are never shown again)", tags: ['auth'], querystring: pageQuery, response: { 200: pageOf(tokenView), ...errorResponses } } },
    async (request) => {
      const principal = requireRole(request, 'planner');
      const window = pageWindow(request.query);
      const where = { teamId: principal.teamId, oneTime: false };
      const [rows, total] = await Promise.all([
        db.prisma.apiToken.findMany({ where, include: { user: true }, orderBy: [{ createdAt: 'desc' }, { id: 'asc' }], ...window }),
        db.prisma.apiToken.count({ where }),
      ]);
      const items = rows.map((row) =>
        tokenView.parse({ ...row, userName: row.user.name, role: row.user.role }),
      );
      return toPage(items, total, window);
    },
  );

  api.post(
    '/tokens',
    {
      config: tokenRateLimit,
      schema: {
        summary: 'Issue an API token for a team member (planners only); the token is shown once',
        tags: ['auth'],
        body: z.strictObject({
          role: z.enum(roles as ['planner', 'installer', 'viewer'], { error: 'must be planner, installer or viewer' }),
          userName: name().optional(),
          userId: id().optional(),
          label: z.string().max(200).optional(),
          expiresInDays: z.number().int('must be a whole number').min(1, 'must be ≥ 1').max(3650, 'must be ≤ 3650').optional(),
          oneTime: z.boolean().optional(),
        }),
        response: { 201: issuedResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const body = request.body;
      if (body.userId) {
        const user = await db.prisma.user.findFirst({ where: { id: body.userId, teamId: principal.teamId } });
        if (!user) throw new ApiError(404, 'not_found', 'user not found');
        if (user.role !== body.role) throw new ApiError(400, 'invalid_input', `role: user ${user.name} has role ${user.role}`);
      }
      // A new user, its token and the audit entry: all three or none.
      const issued = await writeWithAudit(
        db,
        async (tx) =>
          issueToken(tx, {
            userId: body.userId ?? (await createUser(tx, { teamId: principal.teamId, name: body.userName ?? `${body.role}`, role: body.role })).id,
            label: body.label ?? '',
            oneTime: body.oneTime ?? false,
            expiresAt: body.expiresInDays ? new Date(Date.now() + body.expiresInDays * 86_400_000) : null,
          }),
        (row) => ({ principal, action: 'issue', entity: 'token', entityId: row.id, detail: { role: row.role, oneTime: body.oneTime ?? false } }),
      );
      return reply.status(201).send({ token: issued.token, id: issued.id, userId: issued.userId, role: issued.role, expiresAt: issued.expiresAt });
    },
  );

  api.delete(
    '/tokens/:id',
    { config: tokenRateLimit, schema: { summary: 'Revoke a token of the team (planners only)', tags: ['auth'], params: itemParams } },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      const row = await db.prisma.apiToken.findFirst({ where: { id: request.params.id, teamId: principal.teamId } });
      if (!row) throw new ApiError(404, 'not_found', 'token not found');
      await writeWithAudit(db, (tx) => revokeToken(tx, { id: row.id }), () => ({ principal, action: 'revoke', entity: 'token', entityId: row.id }));
      return reply.status(204).send();
    },
  );
}
