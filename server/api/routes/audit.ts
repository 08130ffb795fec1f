// GET /api/v1/audit: the team's audit log, newest first (every role may read it).
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { listAudit } from '../../db/repositories/audit.ts';
import { dateTime, errorResponses, pageOf, pageQuery } from '../schemas.ts';

export const auditEntryResponse = z
  .object({
    id: z.string(),
    teamId: z.string(),
    userId: z.string().nullable(),
    tokenId: z.string().nullable(),
    action: z.string(),
    entity: z.string(),
    entityId: z.string(),
    detail: z.unknown().describe('JSON object'),
    at: dateTime,
  });

export default async function auditRoutes(app: FastifyInstance): Promise<void> {
  const { db } = app.deps;
  app.withTypeProvider<ZodTypeProvider>().get(
    '/audit',
    {
      schema: {
        summary: 'Who did what, when (newest first)',
        tags: ['audit'],
        querystring: pageQuery.extend({ entity: z.string().max(100).optional(), entityId: z.string().max(100).optional(), userId: z.string().max(100).optional() }),
        response: { 200: pageOf(auditEntryResponse), ...errorResponses },
      },
    },
    async (request) => {
      const { limit, cursor, ...filter } = request.query;
      return listAudit(db, request.principal.teamId, filter, { limit, cursor });
    },
  );
}
