// Use cases of calibration from field readings (issue 15): import readings in bulk,
// fit the model's bias and spread to them (server/calibration, pure), keep the fit,
// apply it to the plan and revert it. The API (server/api/routes/calibration.ts) parses
// and shapes; everything that decides lives here or in the pure room.
import type { Database } from '../db/client.ts';
import { writeWithAudit, type AuditPrincipal } from '../db/repositories/audit.ts';
import { applyCalibration, createCalibration, findAppliedCalibration, listCalibrations, revertCalibration, type CalibrationRow } from '../db/repositories/calibrations.ts';
import { createFieldReadings, existingReadingKeys, listReadingsForCalibration, readingKey, type NewFieldReading } from '../db/repositories/field-readings.ts';
import { listNodesForLinks } from '../db/repositories/links.ts';
import type { NodeRow } from '../db/repositories/nodes.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import type { FieldReading, Prisma } from '../db/generated/client.ts';
import { CalibrationInputError, fitCalibration, groupKey, type CalibrationFit, type CalibrationGrouping, type Residual } from '../calibration/fit.ts';
import type { LinkEngine, NodeLinksOutcome, PlanContext } from '../jobs/link-engine.ts';
import { bearingsBetween } from '../planning/geometry.ts';
import type { LinkResult } from '../planning/link.ts';
import { AppError, type AppErrorKind } from './errors.ts';

/** A use-case failure the caller must fix; it carries a kind (server/app/errors.ts) the API maps to a status. */
export class CalibrationError extends AppError {
  constructor(
    kind: AppErrorKind,
    code: string,
    message: string,
    readonly extra?: Record<string, unknown>,
  ) {
    super(kind, code, message);
  }
}

export interface Actor extends AuditPrincipal {
  userId: string | null;
}

// ---------------------------------------------------------------------------------------
// The kit a reading was taken with

/** What of a node decides its prediction besides the plan and gateways (kept on every reading). */
export interface KitSnapshot {
  antennaDesignId: string;
  antennaHeightAglM: number;
  feedlineId: string | null;
  feedlineLengthM: number;
  txPowerDbm: number;
  environment: 'outdoor' | 'indoor' | 'pit';
  buildingType: string | null;
}

export function kitSnapshot(node: Pick<NodeRow, 'antennaDesignId' | 'antennaHeightAglM' | 'feedlineId' | 'feedlineLengthM' | 'txPowerDbm' | 'environment' | 'buildingType'>): KitSnapshot {
  return {
    antennaDesignId: node.antennaDesignId,
    antennaHeightAglM: node.antennaHeightAglM,
    feedlineId: node.feedlineId,
    feedlineLengthM: node.feedlineLengthM,
    txPowerDbm: node.txPowerDbm,
    environment: node.environment,
    buildingType: node.buildingType,
  };
}

function isKitSnapshot(value: unknown): value is KitSnapshot {
  const v = value as KitSnapshot;
  return !!v && typeof v === 'object' && typeof v.antennaDesignId === 'string' && typeof v.antennaHeightAglM === 'number' && typeof v.txPowerDbm === 'number' && typeof v.environment === 'string';
}

// ---------------------------------------------------------------------------------------
// Import

/** One validated row of an import (the API checked types and ranges). */
export interface ReadingImportRow {
  /** 1-based row of the file (CSV: not counting the header). */
  row: number;
  nodeId?: string;
  devEui?: string;
  nodeName?: string;
  /** Gateway id or its exact name in the plan. */
  gatewayId: string;
  rssiDbm: number;
  snrDb: number;
  sf: number;
  measuredAt: Date;
  lat?: number;
  lon?: number;
  note?: string;
}

export interface RowProblem {
  row: number;
  field: string;
  message: string;
}

export interface ReadingImportOutcome {
  dryRun: boolean;
  valid: boolean;
  rowCount: number;
  /** Rows that will be (or were) stored. */
  created: number;
  /** Rows recognised as an uplink already stored, or repeated in this import; never stored twice. */
  duplicates: Array<{ row: number; sameAs: string }>;
  errors: RowProblem[];
  readings: FieldReading[];
  preview: NewFieldReading[];
}

/** Readings measured more than a day ahead of the server clock are refused. */
const FUTURE_TOLERANCE_MS = 24 * 3600 * 1000;

/**
 * Resolves node and gateway references (node id, DevEUI or exact name; gateway id or
 * exact name), recognises duplicates and stores every new row in one transaction with its
 * audit entry, or (with row errors) nothing. Rows are numbered from 1 like the node import.
 */
export async function importReadings(
  db: Database,
  actor: Actor,
  plan: PlanRow,
  input: { rowCount: number; rows: readonly ReadingImportRow[]; errors: readonly RowProblem[] },
  dryRun: boolean,
): Promise<ReadingImportOutcome> {
  const { rows, rowCount } = input;
  const errors: RowProblem[] = [...input.errors];
  const nodes = await listNodesForLinks(db, plan.id);
  const gateways = await db.prisma.gateway.findMany({ where: { planId: plan.id }, select: { id: true, name: true } });
  const nodeById = new Map(nodes.map((n) => [n.id, n]));
  const nodesByEui = new Map<string, NodeRow[]>();
  const nodesByName = new Map<string, NodeRow[]>();
  for (const n of nodes) {
    if (n.devEui) nodesByEui.set(n.devEui, [...(nodesByEui.get(n.devEui) ?? []), n]);
    nodesByName.set(n.name, [...(nodesByName.get(n.name) ?? []), n]);
  }
  const gatewayById = new Map(gateways.map((g) => [g.id, g.id]));
  const gatewaysByName = new Map<string, string[]>();
  for (const g of gateways) gatewaysByName.set(g.name, [...(gatewaysByName.get(g.name) ?? []), g.id]);

  const resolved: Array<{ row: number; reading: NewFieldReading }> = [];
  for (const input of rows) {
    const row = input.row;
    let node: NodeRow | undefined;
    if (input.nodeId !== undefined) {
      node = nodeById.get(input.nodeId);
      if (!node) errors.push({ row, field: 'nodeId', message: `no node "${input.nodeId}" in this plan` });
    } else if (input.devEui !== undefined) {
      const found = nodesByEui.get(input.devEui) ?? [];
      if (found.length === 1) node = found[0];
      else errors.push({ row, field: 'devEui', message: found.length === 0 ? `no node with DevEUI ${input.devEui} in this plan` : `${found.length} nodes share DevEUI ${input.devEui}; give nodeId` });
    } else if (input.nodeName !== undefined) {
      const found = nodesByName.get(input.nodeName) ?? [];
      if (found.length === 1) node = found[0];
      else errors.push({ row, field: 'nodeName', message: found.length === 0 ? `no node named "${input.nodeName}" in this plan` : `${found.length} nodes are named "${input.nodeName}"; give nodeId or devEui` });
    }
    let gatewayId = gatewayById.get(input.gatewayId);
    if (!gatewayId) {
      const named = gatewaysByName.get(input.gatewayId) ?? [];
      if (named.length === 1) gatewayId = named[0];
      else errors.push({ row, field: 'gatewayId', message: named.length === 0 ? `no gateway "${input.gatewayId}" (id or name) in this plan` : `${named.length} gateways are named "${input.gatewayId}"; give the gateway id` });
    }
    if (input.measuredAt.getTime() > Date.now() + FUTURE_TOLERANCE_MS) errors.push({ row, field: 'measuredAt', message: 'must not be in the future' });
    if (!node || !gatewayId) continue;
    resolved.push({
      row,
      reading: {
        nodeId: node.id,
        gatewayId,
        rssiDbm: input.rssiDbm,
        snrDb: input.snrDb,
        sf: input.sf,
        measuredAt: input.measuredAt,
        lat: input.lat ?? null,
        lon: input.lon ?? null,
        note: input.note ?? '',
        kit: kitSnapshot(node) as unknown as Prisma.InputJsonValue,
        source: 'import',
      },
    });
  }
  errors.sort((a, b) => a.row - b.row);

  // Duplicates: the same uplink (node, gateway, time, SF) already stored or earlier in this import.
  const duplicates: Array<{ row: number; sameAs: string }> = [];
  const fresh: NewFieldReading[] = [];
  if (resolved.length > 0) {
    const times = resolved.map((r) => r.reading.measuredAt.getTime());
    const stored = await existingReadingKeys(db, plan.id, [...new Set(resolved.map((r) => r.reading.nodeId))], new Date(Math.min(...times)), new Date(Math.max(...times)));
    const seen = new Map<string, number>();
    for (const { row, reading } of resolved) {
      const key = readingKey(reading);
      const storedId = stored.get(key);
      const earlier = seen.get(key);
      if (storedId) duplicates.push({ row, sameAs: `stored reading ${storedId}` });
      else if (earlier !== undefined) duplicates.push({ row, sameAs: `row ${earlier}` });
      else {
        seen.set(key, row);
        fresh.push(reading);
      }
    }
  }
  const base = { rowCount, duplicates, errors: errors.slice(0, 500) };
  if (dryRun) return { dryRun: true, valid: errors.length === 0, created: errors.length === 0 ? fresh.length : 0, ...base, readings: [], preview: fresh.slice(0, 100) };
  if (errors.length > 0) {
    const rowsWithErrors = new Set(errors.map((e) => e.row)).size;
    throw new CalibrationError('invalid_input', 'invalid_rows', `${rowsWithErrors} of ${base.rowCount} rows have errors; nothing was imported (first: row ${errors[0].row} ${errors[0].field}: ${errors[0].message})`, { rows: errors.slice(0, 500) });
  }
  const readings =
    fresh.length === 0
      ? []
      : await createFieldReadings(db, plan.id, actor.userId, fresh, () => ({ principal: actor, action: 'import', entity: 'field-reading', entityId: plan.id, detail: { planId: plan.id, count: fresh.length, duplicates: duplicates.length } }));
  return { dryRun: false, valid: true, created: readings.length, ...base, readings, preview: [] };
}

// ---------------------------------------------------------------------------------------
// Pairing readings with predictions

export interface ExcludedReading {
  readingId: string;
  nodeId: string;
  gatewayId: string | null;
  reason: string;
}

/** A reading taken more than this far from its node counts as taken where it says (a drive test). */
const READING_POSITION_TOLERANCE_M = 30;

/**
 * Measured − predicted for every reading heard at a known gateway. The prediction is for
 * the same node and gateway with the kit the reading was taken with (its snapshot), at the
 * reading's own position when it carries one away from the node; the model as it stands
 * without any applied calibration (so a new fit never folds an old bias in twice).
 */
export async function pairReadings(engine: LinkEngine, ctx: PlanContext, readings: readonly FieldReading[], nodes: ReadonlyMap<string, NodeRow>, grouping: CalibrationGrouping): Promise<{ residuals: Residual[]; excluded: ExcludedReading[] }> {
  const residuals: Residual[] = [];
  const excluded: ExcludedReading[] = [];
  const gatewayIds = new Set(ctx.gateways.map((g) => g.row.id));
  // Readings sharing a node and a variant (kit + place) share one prediction.
  const variants = new Map<string, { node: NodeRow; variant: NodeRow; current: boolean; readings: FieldReading[] }>();
  for (const reading of readings) {
    const node = nodes.get(reading.nodeId);
    if (!node) continue; // cascade-deleted with its node
    if (!reading.gatewayId || !gatewayIds.has(reading.gatewayId)) {
      excluded.push({ readingId: reading.id, nodeId: reading.nodeId, gatewayId: reading.gatewayId, reason: reading.gatewayId ? 'its gateway is left out of the predictions (see the plan warnings)' : 'no gateway recorded' });
      continue;
    }
    const kit = isKitSnapshot(reading.kit) ? reading.kit : kitSnapshot(node);
    const moved = reading.lat !== null && reading.lon !== null && bearingsBetween(node.lat, node.lon, reading.lat, reading.lon).distanceM > READING_POSITION_TOLERANCE_M;
    const variant: NodeRow = { ...node, ...kit, ...(moved ? { lat: reading.lat as number, lon: reading.lon as number } : {}) };
    const current = !moved && JSON.stringify(kit) === JSON.stringify(kitSnapshot(node));
    const key = current ? `${node.id}|current` : `${node.id}|${JSON.stringify(kit)}|${moved ? `${reading.lat},${reading.lon}` : ''}`;
    const entry = variants.get(key);
    if (entry) entry.readings.push(reading);
    else variants.set(key, { node, variant, current, readings: [reading] });
  }
  for (const { node, variant, current, readings: group } of variants.values()) {
    let outcome: NodeLinksOutcome;
    try {
      // Never saved: these predictions are the model without the applied calibration.
      outcome = (await engine.nodeLinks(ctx, await engine.resolveNode(ctx, current ? node : variant), null, false)).outcome;
    } catch (error) {
      for (const reading of group) excluded.push({ readingId: reading.id, nodeId: reading.nodeId, gatewayId: reading.gatewayId, reason: `no prediction: ${(error as Error).message}` });
      continue;
    }
    const links = new Map<string, LinkResult>(outcome.links.map((link) => [link.gatewayId, link]));
    let clutterClass: string | null = null;
    if (grouping === 'clutter' && ctx.terrain) clutterClass = (await ctx.terrain.sampleClutter(variant.lat, variant.lon))?.clutterClass ?? null;
    for (const reading of group) {
      const link = links.get(reading.gatewayId as string);
      if (!link) {
        excluded.push({ readingId: reading.id, nodeId: reading.nodeId, gatewayId: reading.gatewayId, reason: `the gateway is beyond the plan's link range (${ctx.settings.maxLinkRangeM / 1000} km)` });
        continue;
      }
      residuals.push({
        readingId: reading.id,
        nodeId: reading.nodeId,
        gatewayId: link.gatewayId,
        measuredRssiDbm: reading.rssiDbm,
        predictedRssiDbm: uncalibratedRssiDbm(link),
        distanceM: link.distanceM,
        environment: variant.environment,
        clutterClass,
      });
    }
  }
  return { residuals, excluded };
}

/** The link's RSSI without a calibration's bias (0 in the uncalibrated context the fit uses). */
export function uncalibratedRssiDbm(link: LinkResult): number {
  return link.rssiDbm - link.calibrationBiasDb;
}

// ---------------------------------------------------------------------------------------
// Fit, history, apply, revert

export interface CalibrationView extends Omit<CalibrationFit, 'grouping'> {
  id: string;
  planId: string;
  grouping: CalibrationGrouping;
  createdAt: string;
  createdById: string | null;
  applied: boolean;
  appliedAt: string | null;
  revertedAt: string | null;
  excluded: ExcludedReading[];
  residuals: Array<{ readingId: string; nodeId: string; gatewayId: string; distanceM: number; residualDb: number; group: string }>;
}

interface StoredResult extends Omit<CalibrationFit, 'grouping' | 'n' | 'biasDb' | 'sigmaDb'> {
  excluded: ExcludedReading[];
  residuals: CalibrationView['residuals'];
}

export function calibrationView(row: CalibrationRow, appliedId: string | null, withResiduals = true): CalibrationView {
  const result = row.result as unknown as StoredResult;
  return {
    ...result,
    id: row.id,
    planId: row.planId,
    grouping: row.grouping as CalibrationGrouping,
    n: row.n,
    biasDb: row.biasDb,
    sigmaDb: row.sigmaDb,
    createdAt: row.createdAt.toISOString(),
    createdById: row.createdById,
    applied: row.id === appliedId,
    appliedAt: row.appliedAt ? row.appliedAt.toISOString() : null,
    revertedAt: row.revertedAt ? row.revertedAt.toISOString() : null,
    residuals: withResiduals ? (result.residuals ?? []) : [],
  };
}

export interface FitRequest {
  grouping?: CalibrationGrouping;
  folds?: number;
  seed?: number;
}

/**
 * Fits the plan's readings against the model as is (no applied calibration: a new fit never
 * folds an old bias in twice) and stores the calibration (audited); it is not applied.
 */
export async function createPlanCalibration(db: Database, engine: LinkEngine, actor: Actor, plan: PlanRow, request: FitRequest): Promise<CalibrationView> {
  const grouping = request.grouping ?? 'none';
  const ctx = await engine.planContext(plan, { calibration: null });
  const readings = await listReadingsForCalibration(db, plan.id);
  if (readings.length === 0) throw new CalibrationError('unprocessable', 'no_readings', 'readings: the plan has no field readings heard at a gateway; record or import some first');
  const nodes = new Map((await listNodesForLinks(db, plan.id)).map((n) => [n.id, n]));
  const { residuals, excluded } = await pairReadings(engine, ctx, readings, nodes, grouping);
  let fit: CalibrationFit;
  try {
    fit = fitCalibration(residuals, { grouping, folds: request.folds, seed: request.seed });
  } catch (error) {
    if (error instanceof CalibrationInputError) throw new CalibrationError('unprocessable', 'too_few_readings', `${error.message} (${excluded.length} reading(s) could not be paired with a prediction)`);
    throw error;
  }
  const { grouping: _g, n, biasDb, sigmaDb, ...rest } = fit;
  const result: StoredResult = {
    ...rest,
    excluded,
    residuals: residuals.map((r) => ({ readingId: r.readingId, nodeId: r.nodeId, gatewayId: r.gatewayId, distanceM: Math.round(r.distanceM), residualDb: Math.round((r.measuredRssiDbm - r.predictedRssiDbm) * 100) / 100, group: groupKey(r, grouping) })),
  };
  const row = await writeWithAudit(
    db,
    (tx) => createCalibration(tx, plan.id, actor.userId, { grouping, readingIds: residuals.map((r) => r.readingId), n, biasDb, sigmaDb, result: result as unknown as Prisma.InputJsonValue }),
    (created) => ({ principal: actor, action: 'create', entity: 'calibration', entityId: created.id, detail: { planId: plan.id, n, biasDb, sigmaDb, grouping } }),
  );
  const applied = await findAppliedCalibration(db, plan.id);
  return calibrationView(row, applied?.id ?? null);
}

export async function calibrationHistory(db: Database, plan: PlanRow, offset: number, limit: number): Promise<{ items: CalibrationView[]; total: number; appliedId: string | null }> {
  const [{ items, total }, applied] = await Promise.all([listCalibrations(db, plan.id, offset, limit), findAppliedCalibration(db, plan.id)]);
  const appliedId = applied?.id ?? null;
  return { items: items.map((row) => calibrationView(row, appliedId, false)), total, appliedId };
}

/** Applies a calibration to the plan (audited in the same transaction). */
export async function applyPlanCalibration(db: Database, actor: Actor, plan: PlanRow, calibrationId: string): Promise<{ applied: CalibrationView; previousId: string | null; changed: boolean }> {
  const outcome = await writeWithAudit(
    db,
    (tx) => applyCalibration(tx, plan.id, calibrationId, actor.userId),
    (done) => ({ principal: actor, action: done.changed ? 'apply' : 'apply-unchanged', entity: 'calibration', entityId: done.applied.id, detail: { planId: plan.id, biasDb: done.applied.biasDb, sigmaDb: done.applied.sigmaDb, replaced: done.previous?.id ?? null } }),
  );
  return { applied: calibrationView(outcome.applied, outcome.applied.id, false), previousId: outcome.previous?.id ?? null, changed: outcome.changed };
}

/** Reverts the applied calibration; the one before it (if any) is applied again. */
export async function revertPlanCalibration(db: Database, actor: Actor, plan: PlanRow): Promise<{ reverted: CalibrationView; restored: CalibrationView | null }> {
  const current = await findAppliedCalibration(db, plan.id);
  if (!current) throw new CalibrationError('conflict', 'nothing_applied', 'no calibration is applied to this plan');
  const outcome = await writeWithAudit(
    db,
    async (tx) => {
      const done = await revertCalibration(tx, plan.id, actor.userId);
      if (!done) throw new CalibrationError('conflict', 'nothing_applied', 'no calibration is applied to this plan');
      return done;
    },
    (done) => ({ principal: actor, action: 'revert', entity: 'calibration', entityId: done.reverted.id, detail: { planId: plan.id, restored: done.restored?.id ?? null } }),
  );
  const restoredId = outcome.restored?.id ?? null;
  return { reverted: calibrationView(outcome.reverted, restoredId, false), restored: outcome.restored ? calibrationView(outcome.restored, restoredId, false) : null };
}

/** The figures the link engine applies for a plan (null = none applied). */
export async function appliedCalibrationFigures(db: Database, planId: string): Promise<{ id: string; biasDb: number; sigmaDb: number } | null> {
  const row = await findAppliedCalibration(db, planId);
  return row ? { id: row.id, biasDb: row.biasDb, sigmaDb: row.sigmaDb } : null;
}
