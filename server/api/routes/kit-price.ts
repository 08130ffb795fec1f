// POST /plans/:planId/kit-price: the one price of a node kit not saved yet (the kit chooser),
// computed by the same function as the recommendation and the visit sheet.
// GET /status-words: the served / marginal / unserved words, defined once in server/planning/status.ts.
import type { FastifyInstance } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { nodeKitPrice } from '../../app/kit-price.ts';
import { STATUS_WORDS } from '../../planning/status.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, id, nonNegative, planParams } from '../schemas.ts';
import { loadCatalog } from '../../app/recommend.ts';
import { kitPriceSchema as kitPriceResponse } from '../link-answers.ts';

const word = z.object({ label: z.string(), meaning: z.string() });

export default async function kitPriceRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;

  api.post(
    '/plans/:planId/kit-price',
    {
      schema: {
        summary: "A node kit's full price (antenna, feedline, connectors, mast or mount) with part names; nothing is saved",
        tags: ['kit'],
        params: planParams,
        body: z.strictObject({
          antennaDesignId: id(),
          antennaHeightAglM: nonNegative().max(300, 'must be ≤ 300 m'),
          feedlineId: id().nullable().optional(),
          feedlineLengthM: nonNegative().max(500, 'must be ≤ 500 m').optional(),
          mastOptionId: id().nullable().optional(),
        }),
        response: { 200: kitPriceResponse, ...errorResponses },
      },
    },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const catalog = await loadCatalog(db, plan.teamId);
      const body = request.body;
      const antenna = catalog.antennas.find((a) => a.id === body.antennaDesignId);
      if (!antenna) throw new ApiError(400, 'invalid_input', `antennaDesignId: no antenna design "${body.antennaDesignId}" in the kit catalog`);
      const feedline = body.feedlineId ? catalog.feedlines.find((f) => f.id === body.feedlineId) : null;
      if (body.feedlineId && !feedline) throw new ApiError(400, 'invalid_input', `feedlineId: no feedline "${body.feedlineId}" in the kit catalog`);
      if (body.mastOptionId && !catalog.masts.some((m) => m.id === body.mastOptionId)) throw new ApiError(400, 'invalid_input', `mastOptionId: no mast option "${body.mastOptionId}" in the kit catalog`);
      return nodeKitPrice({ antenna, feedline: feedline ?? null, feedlineLengthM: body.feedlineLengthM ?? 0, antennaHeightAglM: body.antennaHeightAglM, mastOptionId: body.mastOptionId }, catalog.masts);
    },
  );

  api.get(
    '/status-words',
    { schema: { summary: 'The words for served, marginal and unserved (one definition for every view)', tags: ['links'], response: { 200: z.object({ served: word, marginal: word, unserved: word }), ...errorResponses } } },
    async () => STATUS_WORDS,
  );
}
