// Use case: turn an antenna sweep into a tuning result, and optionally keep it as an
// antenna reading of a node (audited). The API route (server/api/routes/tuning.ts) and
// the CLI (`earshot tune`, server/cli/tuning.ts) both call these functions.
import type { Database } from '../db/client.ts';
import { AppError, type AppErrorKind } from './errors.ts';
import { NotFoundError } from '../db/errors.ts';
import { createAntennaReading, listAntennaReadings } from '../db/repositories/antenna-readings.ts';
import type { AuditPrincipal } from '../db/repositories/audit.ts';
import { findAntennaDesignRow } from '../db/repositories/kit.ts';
import { findNode } from '../db/repositories/nodes.ts';
import type { AntennaReading, Prisma } from '../db/generated/client.ts';
import { analyseSweep, TuningInputError, type TuneResult } from '../tuning/analyse.ts';
import { parseSweep, SweepFileError } from '../tuning/sweep-file.ts';

/** Something the caller must fix: `field` is the input it concerns ("file", "band", "design", "lengthMm"); an AppError, so the API maps its kind. */
export class TuneError extends AppError {
  constructor(
    readonly field: string,
    message: string,
    kind: AppErrorKind = 'invalid_input',
  ) {
    super(kind, kind === 'too_large' ? 'payload_too_large' : 'invalid_input', `${field}: ${message}`);
  }
}

/** Largest sweep file accepted (a 100 000-point .s1p is about 4 MB). */
export const MAX_SWEEP_FILE_BYTES = 8 * 1024 * 1024;

export interface TuneInput {
  /** File text: Touchstone .s1p or CSV. */
  text: string;
  /** Original file name; its extension picks the reader (.s1p, .csv), else the content does. */
  fileName?: string;
  bandId: string;
  designId?: string;
  lengthMm?: number;
}

/** Pure use case: sweep text → tuning result; every problem becomes a TuneError naming the field (and the line for file problems). */
export function tuneSweep(input: TuneInput): TuneResult {
  if (Buffer.byteLength(input.text, 'utf8') > MAX_SWEEP_FILE_BYTES) throw new TuneError('file', `larger than ${MAX_SWEEP_FILE_BYTES / 1024 / 1024} MB`, 'too_large');
  if (input.text.includes('\u0000')) throw new TuneError('file', 'binary data: send the Touchstone (.s1p) or CSV text the analyser exported');
  try {
    const sweep = parseSweep(input.text, input.fileName ?? '');
    return analyseSweep({ sweep, bandId: input.bandId, designId: input.designId, lengthMm: input.lengthMm });
  } catch (error) {
    if (error instanceof SweepFileError) throw new TuneError('file', error.message);
    if (error instanceof TuningInputError) throw new TuneError(error.field, error.message.slice(error.field.length + 2));
    throw error;
  }
}

export interface AttachInput extends Omit<TuneInput, 'bandId' | 'designId'> {
  planId: string;
  /** The plan's band plan when absent. */
  bandPlanId: string;
  nodeId: string;
  bandId?: string;
  /** The node's antenna's build sheet when absent. */
  designId?: string;
  note?: string;
  measuredAt?: Date;
}

/** The reading as stored, answered with the tuning result it holds. */
export interface AntennaReadingView {
  id: string;
  planId: string;
  nodeId: string;
  fileName: string;
  note: string;
  measuredAt: string;
  createdAt: string;
  createdById: string | null;
  result: TuneResult;
}

export function antennaReadingView(row: AntennaReading): AntennaReadingView {
  return {
    id: row.id,
    planId: row.planId,
    nodeId: row.nodeId,
    fileName: row.fileName,
    note: row.note,
    measuredAt: row.measuredAt.toISOString(),
    createdAt: row.createdAt.toISOString(),
    createdById: row.createdById,
    result: row.result as unknown as TuneResult,
  };
}

/** Tunes a sweep taken at a node and stores it as an antenna reading of that node, audited in the same transaction. */
export async function tuneAndAttach(db: Database, principal: AuditPrincipal, input: AttachInput): Promise<{ result: TuneResult; reading: AntennaReadingView }> {
  const node = await findNode(db, input.planId, input.nodeId);
  if (!node) throw new NotFoundError('node');
  let designId = input.designId;
  if (designId === undefined) {
    const antenna = await findAntennaDesignRow(db, principal.teamId, node.antennaDesignId);
    if (antenna?.buildSheetId) designId = antenna.buildSheetId;
    else if (input.lengthMm !== undefined) throw new TuneError('design', `the node's antenna "${node.antennaDesignId}" has no build sheet: give the design that was built`);
  }
  const measuredAt = input.measuredAt ?? new Date();
  if (measuredAt.getTime() > Date.now() + 24 * 3600 * 1000) throw new TuneError('measuredAt', 'must not be in the future');
  const result = tuneSweep({ text: input.text, fileName: input.fileName, bandId: input.bandId ?? input.bandPlanId, designId, lengthMm: input.lengthMm });
  const row = await createAntennaReading(
    db,
    input.planId,
    principal.userId,
    {
      nodeId: node.id,
      bandId: result.bandId,
      design: result.design,
      lengthMm: result.lengthMm,
      resonanceMhz: result.resonanceMhz,
      vswrAtResonance: result.vswrAtResonance,
      vswrAtBandCentre: result.vswrAtBandCentre,
      returnLossDbAtBandCentre: result.returnLossDbAtBandCentre,
      vswr2LowMhz: result.vswr2BandMhz?.[0] ?? null,
      vswr2HighMhz: result.vswr2BandMhz?.[1] ?? null,
      newLengthMm: result.newLengthMm,
      trimMm: result.trimMm,
      fileName: (input.fileName ?? '').slice(0, 200),
      result: result as unknown as Prisma.InputJsonValue,
      note: input.note ?? '',
      measuredAt,
    },
    (created) => ({
      principal,
      action: 'create',
      entity: 'antenna-reading',
      entityId: created.id,
      detail: { planId: input.planId, nodeId: node.id, resonanceMhz: result.resonanceMhz, vswrAtBandCentre: result.vswrAtBandCentre, trimMm: result.trimMm },
    }),
  );
  return { result, reading: antennaReadingView(row) };
}

/** A node's antenna readings, newest first; NotFoundError when the node is not in the plan. */
export async function nodeAntennaReadings(db: Database, planId: string, nodeId: string): Promise<AntennaReadingView[]> {
  const node = await findNode(db, planId, nodeId);
  if (!node) throw new NotFoundError('node');
  return (await listAntennaReadings(db, planId, nodeId)).map(antennaReadingView);
}
