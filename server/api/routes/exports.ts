// Exports and the report of a plan: GeoJSON, KML, the fleet CSV, the bill of
// materials CSV and the PDF report, streamed with a file name. The work is in
// server/app/exports.ts and server/app/report.ts; this file parses and shapes.
import { Readable } from 'node:stream';
import type { FastifyInstance, FastifyReply } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { planExport, type ExportFormat } from '../../app/exports.ts';
import { planBillOfMaterials } from '../../app/plan-figures.ts';
import { planReport } from '../../app/report.ts';
import { reportFile, reportFileInput } from '../../app/report-files.ts';
import { LinkEngine } from '../../jobs/link-engine.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, planParams } from '../schemas.ts';
import { asApiError } from './links.ts';

function attachment(reply: FastifyReply, contentType: string, fileName: string): FastifyReply {
  return reply.header('content-type', contentType).header('content-disposition', `attachment; filename="${fileName}"`).header('cache-control', 'private, no-store');
}

export default async function exportRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const engine = app.linkEngine;
  const tags = ['exports'];

  const formats: Array<{ path: string; format: ExportFormat; summary: string }> = [
    { path: '/plans/:planId/export.geojson', format: 'geojson', summary: 'The plan as GeoJSON (RFC 7946, [lon, lat]): one Feature per node, gateway and site with properties.id, properties.kind (node | gateway | site), status, best margin (dB), delivery, kit' },
    { path: '/plans/:planId/export.kml', format: 'kml', summary: 'The plan as KML 2.2: the same features, one folder per kind, nodes styled by status' },
    { path: '/plans/:planId/export.csv', format: 'csv', summary: 'The fleet as CSV (RFC 4180): one row per node with its link results and kit, units in the headers' },
    { path: '/plans/:planId/bom.csv', format: 'bom', summary: 'Bill of materials as CSV: antennas, feedline metres, connectors, masts, gateway radios, site works, with catalog prices (USD)' },
  ];
  for (const entry of formats) {
    api.get(entry.path, { schema: { summary: entry.summary, tags, params: planParams } }, async (request, reply) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const file = await planExport(engine, plan, entry.format).catch(asApiError);
      return attachment(reply, file.contentType, file.fileName).send(Readable.from(file.chunks));
    });
  }

  const money = z.number().describe('USD');
  const bomResponse = z.object({
    lines: z.array(z.object({ category: z.enum(['antenna', 'feedline', 'connector', 'mast', 'gateway', 'site']), name: z.string(), quantity: z.number(), unit: z.enum(['each', 'm']), unitCostUsd: money.nullable(), costUsd: money })),
    totalsUsd: z.record(z.string(), money),
    nodeKitCostUsd: money,
    gatewayKitCostUsd: money,
    kitCostUsd: money.describe('USD: node and gateway kit (antennas, feedlines, connectors and surge arrestors, masts); the report’s “Kit cost”'),
    totalUsd: money.describe('USD: kit cost plus gateway radios and site works'),
    unpriced: z.array(z.string()),
    notes: z.array(z.string()),
  });
  api.get(
    '/plans/:planId/bom',
    { schema: { summary: 'Bill of materials as JSON, priced as the report and bom.csv price it (one kit price per node and gateway from the team’s catalog), without the link predictions', tags, params: planParams, response: { 200: bomResponse, ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      return planBillOfMaterials(db, plan).catch(asApiError);
    },
  );

  api.get(
    '/plans/:planId/report.pdf',
    {
      schema: {
        summary: 'The plan report as PDF: cover, map (hillshade, latest coverage, nodes and gateways), service counts, redundancy, capacity, the latest gateway siting run, risks, bill of materials, assumptions, cautions',
        tags,
        params: planParams,
        querystring: z.strictObject({ tz: z.string().max(64).regex(/^[A-Za-z0-9_+\-/]+$/, 'must be an IANA time zone such as Europe/Berlin').optional().describe('time zone for the printed times (the app sends the viewer’s); default UTC') }),
      },
    },
    async (request, reply) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const report = await planReport(engine, config, plan, { timeZone: request.query.tz ?? null }).catch(asApiError);
      return attachment(reply, 'application/pdf', report.fileName).send(report.pdf);
    },
  );
}

/**
 * Loopback admin route for `earshot report` / `earshot export` while this server holds
 * the data folder (registered inside server/api/routes/admin.ts, behind its secret check):
 * POST /_admin/report-file → { fileName, contentType, base64, counts }.
 */
export async function reportAdminRoutes(app: FastifyInstance): Promise<void> {
  const api = app.withTypeProvider<ZodTypeProvider>();
  const { db, config } = app.deps;
  const engine = new LinkEngine(db, config);
  app.addHook('onClose', async () => engine.close());
  api.post('/report-file', { schema: { hide: true, body: reportFileInput } }, async (request) => {
    const file = await reportFile(engine, config, request.body).catch(asApiError);
    return { fileName: file.fileName, contentType: file.contentType, base64: file.bytes.toString('base64'), counts: file.counts ?? null };
  });
}
