// Field readings an installer records on a visit (model FieldReading).
import type { Database } from '../client.ts';
import type { FieldReading } from '../generated/client.ts';

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

/** Stores several readings in one transaction (all or nothing). */
export async function createFieldReadings(db: Database, planId: string, createdById: string | null, readings: readonly NewFieldReading[]): Promise<FieldReading[]> {
  return db.prisma.$transaction(
    readings.map((reading) => db.prisma.fieldReading.create({ data: { ...reading, planId, createdById } })),
  );
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
