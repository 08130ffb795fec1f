// Team access: invitations (one-time sign-in link + QR), the planner's list of who holds
// which token, and POST /signin, which turns a token typed or pasted into the sign-in form
// into the browser-session cookie (so the token never travels in a URL that lands in logs,
// and tiles, sheets and downloads, which a browser fetches without headers, are authorised).
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { roles, verifyToken, type Role } from '../../db/repositories/accounts.ts';
import { InvitationError, inviteTeammate, listTeamAccess, publicBaseUrl, startBrowserSession } from '../../app/team-access.ts';
import { csrfHeaderName, requireRole, sessionCookieName } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { errorResponses, id, name } from '../schemas.ts';

const signInRateLimit = { rateLimit: { max: 20, timeWindow: '1 minute' } };
const role = z.enum(roles as [Role, ...Role[]], { error: 'must be planner, installer or viewer' });

export function setSessionCookie(request: FastifyRequest, reply: FastifyReply, session: { token: string; expiresAt: Date }): void {
  reply.setCookie(sessionCookieName, session.token, {
    httpOnly: true,
    sameSite: 'strict',
    path: '/',
    secure: request.protocol === 'https',
    expires: session.expiresAt,
  });
}

/** The base URL for links this request hands out: EARSHOT_PUBLIC_URL, else the host the planner used. */
function requestBaseUrl(app: FastifyInstance, request: FastifyRequest): string {
  const { config } = app.deps;
  if (config.publicBaseUrl) return publicBaseUrl(config, config.port);
  return `${request.protocol}://${request.host}`;
}

/** POST /signin (outside /api/v1: it must work before there is a session). */
export async function sessionExchangeRoutes(app: FastifyInstance): Promise<void> {
  app.withTypeProvider<ZodTypeProvider>().post(
    '/signin',
    {
      config: signInRateLimit,
      schema: {
        hide: true,
        body: z.strictObject({ token: z.string({ error: 'must be a string' }).trim().min(1, 'paste a token').max(200, 'too long for an earshot token') }),
      },
    },
    async (request, reply) => {
      // Login CSRF: a foreign page must not sign this browser in as someone else.
      if (request.headers[csrfHeaderName] !== '1') throw new ApiError(403, 'csrf_rejected', `send the ${csrfHeaderName}: 1 header`);
      const { db } = app.deps;
      const token = request.body.token;
      // An API token stays valid; a one-time sign-in token is used up here.
      const principal = (await verifyToken(db, token)) ?? (await verifyToken(db, token, { consumeOneTime: true }));
      if (!principal) throw new ApiError(401, 'unauthorized', 'token: unknown, revoked, expired or an already used sign-in link; ask a planner of your team for a new one');
      const session = await startBrowserSession(db, principal, principal.oneTime ? 'one-time link' : 'api token');
      setSessionCookie(request, reply, session);
      return reply.status(204).send();
    },
  );
}

const accessEntry = z.object({
  id: z.string(),
  kind: z.enum(['api-token', 'browser-session', 'sign-in-link']),
  label: z.string(),
  createdAt: z.date(),
  lastUsedAt: z.date().nullable(),
  expiresAt: z.date().nullable(),
  current: z.boolean(),
});
const member = z.object({ id: z.string(), name: z.string(), role, createdAt: z.date(), access: z.array(accessEntry) });
const invitationResponse = z.object({
  token: z.string().describe('the one-time secret; shown only in this answer'),
  link: z.string().describe('the sign-in link to hand over'),
  qrSvg: z.string().describe('the link as an SVG QR code, for a phone camera'),
  id: z.string(),
  userId: z.string(),
  userName: z.string(),
  role,
  expiresAt: z.date(),
});

export default async function teamAccessRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;

  api.get(
    '/team/access',
    { schema: { summary: 'Team members and their live tokens, sessions and sign-in links (planners only)', tags: ['auth'], response: { 200: z.object({ items: z.array(member) }), ...errorResponses } } },
    async (request) => {
      const principal = requireRole(request, 'planner');
      return { items: await listTeamAccess(db, principal) };
    },
  );

  api.post(
    '/invitations',
    {
      config: signInRateLimit,
      schema: {
        summary: 'Invite a teammate: a one-time sign-in link (and QR code) for a new or existing team member (planners only)',
        tags: ['auth'],
        body: z.strictObject({
          role,
          userName: name().optional(),
          userId: id().optional(),
          expiresInDays: z.number({ error: 'must be a number' }).int('must be a whole number').min(1, 'must be ≥ 1').max(30, 'must be ≤ 30').optional(),
        }),
        response: { 201: invitationResponse, ...errorResponses },
      },
    },
    async (request, reply) => {
      const principal = requireRole(request, 'planner');
      try {
        const invitation = await inviteTeammate(db, principal, request.body, requestBaseUrl(app, request));
        return reply.status(201).send(invitation);
      } catch (error) {
        if (error instanceof InvitationError) throw new ApiError(400, 'invalid_input', error.message);
        throw error;
      }
    },
  );
}
