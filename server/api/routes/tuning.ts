// Antenna tuning from a sweep: POST /tune (JSON or multipart with one file), and a node's
// antenna readings. Thin: parse, call server/app/tuning.ts, shape.
import multipart from '@fastify/multipart';
import type { FastifyInstance, FastifyRequest } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { MAX_SWEEP_FILE_BYTES, nodeAntennaReadings, tuneAndAttach, tuneSweep, type TuneInput } from '../../app/tuning.ts';
import { requireRole } from '../auth.ts';
import { ApiError } from '../errors.ts';
import { loadPlanForPrincipal } from '../scope.ts';
import { errorResponses, finite, id } from '../schemas.ts';

const adviceCodes = ['on-centre', 'trim', 'lengthen', 'radials', 'no-trim-fixes', 'match-fair', 'band-edge', 'sweep-partial', 'length-missing', 'estimate'] as const;

/** The tuning result as answered (every field listed: the serializer strips unlisted ones). */
export const tuneResultSchema = z.object({
  bandId: z.string(),
  bandName: z.string(),
  bandFromMhz: z.number(),
  bandToMhz: z.number(),
  bandCentreMhz: z.number().describe('middle of the band plan range: what the trim aims at'),
  resonanceMhz: z.number().describe('frequency of least |Γ|, refined between samples'),
  resonanceLine: z.number().int().describe('file line of the least-|Γ| sample'),
  vswrAtResonance: z.number(),
  returnLossDbAtResonance: z.number().nullable(),
  vswrAtBandCentre: z.number(),
  returnLossDbAtBandCentre: z.number().nullable().describe('dB; null for a perfect match'),
  vswr2BandMhz: z.tuple([z.number(), z.number()]).nullable().describe('[low, high] MHz around the resonance where VSWR < 2 (common practice target); null when VSWR ≥ 2 even at resonance'),
  channels: z.array(z.object({ frequencyMhz: z.number(), vswr: z.number(), returnLossDb: z.number().nullable() })).describe("the band plan's LoRaWAN default channels inside the sweep"),
  design: z.string().nullable(),
  element: z.string().nullable().describe('what the length is of: radiator, each leg, arm'),
  lengthMm: z.number().nullable(),
  newLengthMm: z.number().nullable().describe('length × resonance / band centre (resonant frequency ∝ 1/length: common practice)'),
  trimMm: z.number().nullable().describe('positive: cut this much off; negative: the element is this much short'),
  advice: z.array(z.object({ code: z.enum(adviceCodes), message: z.string(), buildSheetNotes: z.array(z.string()).optional() })),
  lengthRule: z.string(),
  cautions: z.array(z.string()),
  sweep: z.object({ source: z.enum(['touchstone', 'csv']), description: z.string(), points: z.number().int(), fromMhz: z.number(), toMhz: z.number() }),
  chart: z.array(z.object({ frequencyMhz: z.number(), vswr: z.number() })).describe('VSWR against frequency, at most 600 points'),
});

const antennaReadingSchema = z.object({
  id: z.string(),
  planId: z.string(),
  nodeId: z.string(),
  fileName: z.string(),
  note: z.string(),
  measuredAt: z.string(),
  createdAt: z.string(),
  createdById: z.string().nullable(),
  result: tuneResultSchema,
});

const lengthMm = finite().positive('must be > 0 mm').max(2000, 'must be ≤ 2000 mm');
/** JSON body (multipart forms carry the same names, with the file as the one file part). */
export const tuneBody = z
  .strictObject({
    s1p: z.string().optional().describe('Touchstone one-port file text'),
    csv: z.string().optional().describe('CSV text: frequency and VSWR, return loss or S11 (dB)'),
    fileName: z.string().max(200, 'must be at most 200 characters').optional(),
    band: id().optional().describe("band plan id (server/radio band plans); the plan's band when attaching to a node"),
    design: id().optional().describe("build sheet id or catalog design with one; the node's antenna when attaching"),
    lengthMm: lengthMm.optional(),
    planId: id().optional(),
    nodeId: id().optional(),
    note: z.string().max(2000, 'must be at most 2000 characters').optional(),
    measuredAt: z.iso.datetime({ offset: true, error: 'must be an ISO 8601 date-time, e.g. 2026-05-01T10:30:00Z' }).optional(),
  })
  .superRefine((body, ctx) => {
    if ((body.s1p === undefined) === (body.csv === undefined)) ctx.addIssue({ code: 'custom', path: ['s1p'], message: 'give the sweep as exactly one of s1p or csv' });
    if ((body.planId === undefined) !== (body.nodeId === undefined)) ctx.addIssue({ code: 'custom', path: ['nodeId'], message: 'planId and nodeId go together (to attach the result to a node)' });
    if (body.planId === undefined && body.band === undefined) ctx.addIssue({ code: 'custom', path: ['band'], message: 'is required (or attach to a node: its plan gives the band)' });
  });
type TuneBody = z.infer<typeof tuneBody>;

const nodeParams = z.strictObject({ planId: id(), nodeId: id() });

/** Multipart form → the same object as the JSON body (numbers from their text). */
async function multipartBody(request: FastifyRequest): Promise<Record<string, unknown>> {
  const body: Record<string, unknown> = {};
  let files = 0;
  for await (const part of request.parts()) {
    if (part.type === 'file') {
      files++;
      const buffer = await part.toBuffer();
      if (part.file.truncated) throw new ApiError(413, 'payload_too_large', `file: larger than ${MAX_SWEEP_FILE_BYTES / 1024 / 1024} MB`);
      const name = part.filename ?? '';
      body[name.toLowerCase().endsWith('.csv') ? 'csv' : 's1p'] = buffer.toString('utf8');
      if (name) body.fileName = name;
    } else if (typeof part.value === 'string') {
      body[part.fieldname] = part.fieldname === 'lengthMm' && part.value.trim() !== '' ? Number(part.value) : part.value;
      if (part.fieldname === 'lengthMm' && part.value.trim() === '') delete body.lengthMm;
    }
  }
  if (files !== 1) throw new ApiError(400, 'invalid_input', `file: send exactly one sweep file (got ${files})`);
  return body;
}

export default async function tuningRoutes(app: FastifyInstance): Promise<void> {
  const typed = app.withTypeProvider<ZodTypeProvider>();
  const { db } = app.deps;
  const tags = ['tuning'];
  await app.register(multipart, { limits: { fileSize: MAX_SWEEP_FILE_BYTES, files: 1, fields: 12 }, throwFileSizeLimit: false });

  typed.post(
    '/tune',
    {
      bodyLimit: MAX_SWEEP_FILE_BYTES + 64 * 1024,
      schema: {
        summary: 'Antenna tuning from a VSWR sweep: resonance, VSWR and return loss at the band centre and channels, the VSWR < 2 band, and the trim; with planId + nodeId the result is kept as an antenna reading of the node',
        description: `JSON body: ${Object.keys(tuneBody.shape).join(', ')} (s1p or csv = the file text). Or multipart/form-data with one file part (.s1p or .csv) and the same fields. A bad file answers 400 naming the line.`,
        tags,
        response: { 200: tuneResultSchema.extend({ reading: antennaReadingSchema.nullable() }), ...errorResponses },
      },
    },
    async (request) => {
      // Anyone signed in may analyse a sweep; keeping it on a node is an installer's or planner's write.
      requireRole(request, 'installer', 'planner', 'viewer');
      const raw = request.isMultipart() ? await multipartBody(request) : request.body;
      const parsed = tuneBody.safeParse(raw ?? {});
      if (!parsed.success) {
        const issue = parsed.error.issues[0];
        const path = issue.path.join('.') || 'body';
        throw new ApiError(400, 'invalid_input', issue.code === 'unrecognized_keys' ? `${issue.keys.join(', ')}: unknown field` : `${path}: ${issue.message}`);
      }
      const body: TuneBody = parsed.data;
      const input: Omit<TuneInput, 'bandId'> = { text: body.s1p ?? body.csv ?? '', fileName: body.fileName ?? (body.csv !== undefined ? 'sweep.csv' : 'sweep.s1p'), designId: body.design, lengthMm: body.lengthMm };
      if (body.planId && body.nodeId) {
        const writer = requireRole(request, 'installer', 'planner');
        const plan = await loadPlanForPrincipal(db, writer, body.planId);
        const outcome = await tuneAndAttach(db, writer, {
          ...input,
          planId: plan.id,
          bandPlanId: plan.bandPlanId,
          nodeId: body.nodeId,
          bandId: body.band,
          note: body.note,
          measuredAt: body.measuredAt ? new Date(body.measuredAt) : undefined,
        });
        return { ...outcome.result, reading: outcome.reading };
      }
      // TuneError is an AppError: the error handler answers it (400 naming the field and the line).
      return { ...tuneSweep({ ...input, bandId: body.band ?? '' }), reading: null };
    },
  );

  typed.get(
    '/plans/:planId/nodes/:nodeId/antenna-readings',
    { schema: { summary: "A node's antenna readings (sweeps and their tuning results), newest first", tags, params: nodeParams, response: { 200: z.object({ items: z.array(antennaReadingSchema), total: z.number().int() }), ...errorResponses } } },
    async (request) => {
      const plan = await loadPlanForPrincipal(db, request.principal, request.params.planId);
      const items = await nodeAntennaReadings(db, plan.id, request.params.nodeId);
      return { items, total: items.length };
    },
  );
}
