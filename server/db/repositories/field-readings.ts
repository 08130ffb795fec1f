// Field readings an installer records on a visit (model FieldReading).
import type { Database } from '../client.ts';
import type { FieldReading, Prisma } from '../generated/client.ts';
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
  /** The node's kit when the reading was taken (see kitSnapshot in server/app/calibration.ts). */
  kit?: Prisma.InputJsonValue | null;
  /** 'manual' (default) or 'import'. */
  source?: string;
}

/** Generous limits: up to 500 rows on a loaded machine can exceed Prisma's 5 s default (imports: 20 000 rows). */
const transactionLimits = { maxWait: 30_000, timeout: 120_000 };
/** Rows per multi-row INSERT (11 columns a row stays far below PostgreSQL's 65 535 bind parameters). */
const INSERT_CHUNK = 1000;

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
    for (let start = 0; start < readings.length; start += INSERT_CHUNK) {
      const data = readings.slice(start, start + INSERT_CHUNK).map(({ kit, ...reading }) => ({ ...reading, ...(kit ? { kit } : {}), planId, createdById }));
      created.push(...(await tx.fieldReading.createManyAndReturn({ data })));
    }
    if (audit) await recordAudit({ prisma: tx }, audit(created));
    return created;
  }, transactionLimits);
}

/** What makes two readings the same uplink: node, gateway, time (ms) and SF. */
export function readingKey(reading: { nodeId: string; gatewayId: string | null; measuredAt: Date; sf: number }): string {
  return `${reading.nodeId}|${reading.gatewayId ?? ''}|${reading.measuredAt.getTime()}|${reading.sf}`;
}

/** Stored readings of these nodes in a time window, as duplicate keys → reading id. */
export async function existingReadingKeys(db: Database, planId: string, nodeIds: readonly string[], from: Date, to: Date): Promise<Map<string, string>> {
  const rows = await db.prisma.fieldReading.findMany({ where: { planId, nodeId: { in: [...nodeIds] }, measuredAt: { gte: from, lte: to } }, select: { id: true, nodeId: true, gatewayId: true, measuredAt: true, sf: true } });
  return new Map(rows.map((row) => [readingKey(row), row.id]));
}

/** Every reading of a plan heard at a known gateway (the calibration fit's input), oldest first. */
export async function listReadingsForCalibration(db: Database, planId: string): Promise<FieldReading[]> {
  return db.prisma.fieldReading.findMany({ where: { planId, gatewayId: { not: null } }, orderBy: [{ measuredAt: 'asc' }, { id: 'asc' }] });
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
