// GET /api/v1/health: no sign-in needed; says whether the database answers.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';

const startedAt = Date.now();

export default async function healthRoutes(app: FastifyInstance): Promise<void> {
  app.withTypeProvider<ZodTypeProvider>().get(
    '/health',
    {
      schema: {
        summary: 'Liveness and database check (no sign-in needed)',
        tags: ['health'],
        security: [],
        response: {
          200: z.object({ status: z.literal('ok'), database: z.enum(['pglite', 'postgres']), uptimeS: z.number() }),
          503: z.object({ status: z.literal('unavailable'), database: z.enum(['pglite', 'postgres']), uptimeS: z.number() }),
        },
      },
    },
    async (_request, reply) => {
      const { db } = app.deps;
      const uptimeS = Math.round((Date.now() - startedAt) / 1000);
      try {
        await db.raw.query('SELECT 1');
        return { status: 'ok' as const, database: db.engine, uptimeS };
      } catch {
        return reply.status(503).send({ status: 'unavailable' as const, database: db.engine, uptimeS });
      }
    },
  );
}
