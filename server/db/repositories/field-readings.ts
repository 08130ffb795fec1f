// Field readings an installer records on a visit (model FieldReading).
import type { Database } from '../client.ts';
import type { FieldReading } from '../generated/client.ts';
import { recordAudit, type AuditInput } from './audit.ts';

export interface NewFieldReading {
  nodeId: string;
  gatewayId: string | null;
  rssiDbm: number;
  snrDb: number;
  sf: number;
  measuredAt: Date;
  lat: number | null;
  lon: number | null;
  note: string;
}

/** Generous limits: up to 500 rows on a loaded machine can exceed Prisma's 5 s default. */
const transactionLimits = { maxWait: 30_000, timeout: 60_000 };

/**
 * Stores several readings in one transaction (all or nothing), with their audit entry
 * (built from the created rows) in the same transaction: if the audit insert fails, no
 * reading is kept (the bulk pattern of createNodesAtomically in ./nodes.ts).
 */
export async function createFieldReadings(
  db: Database,
  planId: string,
  createdById: string | null,
  readings: readonly NewFieldReading[],
  audit?: (created: FieldReading[]) => AuditInput,
): Promise<FieldReading[]> {
  return db.prisma.$transaction(async (tx) => {
    const created: FieldReading[] = [];
    for (const reading of readings) created.push(await tx.fieldReading.create({ data: { ...reading, planId, createdById } }));
    if (audit) await recordAudit({ prisma: tx }, audit(created));
    return created;
  }, transactionLimits);
}

/** Readings of one node, newest first. */
export async function listNodeReadings(db: Database, planId: string, nodeId: string, limit = 100): Promise<FieldReading[]> {
  return db.prisma.fieldReading.findMany({ where: { planId, nodeId }, orderBy: { measuredAt: 'desc' }, take: limit });
}

/** Readings of a plan, newest first, with offset pagination. */
export async function listPlanReadings(db: Database, planId: string, offset: number, limit: number): Promise<{ items: FieldReading[]; total: number }> {
  const [items, total] = await Promise.all([
    db.prisma.fieldReading.findMany({ where: { planId }, orderBy: [{ measuredAt: 'desc' }, { id: 'asc' }], skip: offset, take: limit }),
    db.prisma.fieldReading.count({ where: { planId } }),
  ]);
  return { items, total };
}
