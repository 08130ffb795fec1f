// Calibrations of a plan (model Calibration) and the one applied (model AppliedCalibration,
// keyed by plan: at most one at a time). Apply and revert run inside writeWithAudit, so the
// change, the plan's touched timestamp and the audit entry commit together.
import type { Database } from '../client.ts';
import type { Calibration, Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';

export type CalibrationRow = Calibration;

export interface NewCalibration {
  grouping: string;
  readingIds: string[];
  n: number;
  biasDb: number;
  sigmaDb: number;
  result: Prisma.InputJsonValue;
}

export async function createCalibration(db: Database, planId: string, createdById: string | null, data: NewCalibration): Promise<CalibrationRow> {
  return db.prisma.calibration.create({ data: { ...data, readingIds: data.readingIds, planId, createdById } });
}

export async function findCalibration(db: Database, planId: string, id: string): Promise<CalibrationRow | null> {
  return db.prisma.calibration.findFirst({ where: { id, planId } });
}

/** A plan's calibrations, newest first (history), without the heavy result unless asked. */
export async function listCalibrations(db: Database, planId: string, offset: number, limit: number): Promise<{ items: CalibrationRow[]; total: number }> {
  const [items, total] = await Promise.all([
    db.prisma.calibration.findMany({ where: { planId }, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }], skip: offset, take: limit }),
    db.prisma.calibration.count({ where: { planId } }),
  ]);
  return { items, total };
}

/** The calibration applied to a plan, or null. */
export async function findAppliedCalibration(db: Database, planId: string): Promise<CalibrationRow | null> {
  const applied = await db.prisma.appliedCalibration.findUnique({ where: { planId }, include: { calibration: true } });
  return applied?.calibration ?? null;
}

/** The plan's updatedAt moves, so every answer keyed by the plan row (the node-links front cache) misses. */
async function touchPlan(db: Database, planId: string): Promise<void> {
  await db.prisma.plan.update({ where: { id: planId }, data: { updatedAt: new Date() } });
}

/**
 * Applies a calibration (call inside writeWithAudit). Returns the applied row and the one
 * it replaced; applying the one already applied changes nothing (`changed` false).
 */
export async function applyCalibration(db: Database, planId: string, calibrationId: string, userId: string | null): Promise<{ applied: CalibrationRow; previous: CalibrationRow | null; changed: boolean }> {
  const target = await findCalibration(db, planId, calibrationId);
  if (!target) throw new NotFoundError('calibration');
  const current = await db.prisma.appliedCalibration.findUnique({ where: { planId }, include: { calibration: true } });
  if (current?.calibrationId === target.id) return { applied: target, previous: null, changed: false };
  const now = new Date();
  const applied = await db.prisma.calibration.update({ where: { id: target.id }, data: { appliedAt: now, appliedById: userId, previousAppliedId: current?.calibrationId ?? null, revertedAt: null, revertedById: null } });
  await db.prisma.appliedCalibration.upsert({ where: { planId }, create: { planId, calibrationId: target.id, appliedAt: now, appliedById: userId }, update: { calibrationId: target.id, appliedAt: now, appliedById: userId } });
  await touchPlan(db, planId);
  return { applied, previous: current?.calibration ?? null, changed: true };
}

/**
 * Reverts the applied calibration (call inside writeWithAudit): the one applied before it
 * comes back if it still exists, else the plan has none. Null when nothing is applied.
 */
export async function revertCalibration(db: Database, planId: string, userId: string | null): Promise<{ reverted: CalibrationRow; restored: CalibrationRow | null } | null> {
  const current = await db.prisma.appliedCalibration.findUnique({ where: { planId }, include: { calibration: true } });
  if (!current) return null;
  const now = new Date();
  const reverted = await db.prisma.calibration.update({ where: { id: current.calibrationId }, data: { revertedAt: now, revertedById: userId } });
  const restored = reverted.previousAppliedId ? await findCalibration(db, planId, reverted.previousAppliedId) : null;
  if (restored) {
    await db.prisma.appliedCalibration.update({ where: { planId }, data: { calibrationId: restored.id, appliedAt: now, appliedById: userId } });
  } else {
    await db.prisma.appliedCalibration.delete({ where: { planId } });
  }
  await touchPlan(db, planId);
  return { reverted, restored };
}
