// Antenna readings: a sweep taken at a node and the tuning result (model AntennaReading).
import type { Database } from '../client.ts';
import type { AntennaReading, Prisma } from '../generated/client.ts';
import { writeWithAudit, type AuditInput } from './audit.ts';

export interface NewAntennaReading {
  nodeId: string;
  bandId: string;
  design: string | null;
  lengthMm: number | null;
  resonanceMhz: number;
  vswrAtResonance: number;
  vswrAtBandCentre: number;
  returnLossDbAtBandCentre: number | null;
  vswr2LowMhz: number | null;
  vswr2HighMhz: number | null;
  newLengthMm: number | null;
  trimMm: number | null;
  fileName: string;
  result: Prisma.InputJsonValue;
  note: string;
  measuredAt: Date;
}

/** Stores one reading and its audit entry in one transaction (neither without the other). */
export async function createAntennaReading(
  db: Database,
  planId: string,
  createdById: string | null,
  reading: NewAntennaReading,
  audit: (created: AntennaReading) => AuditInput,
): Promise<AntennaReading> {
  return writeWithAudit(db, (tx) => tx.prisma.antennaReading.create({ data: { ...reading, planId, createdById } }), audit);
}

/** A node's antenna readings, newest first. */
export async function listAntennaReadings(db: Database, planId: string, nodeId: string, limit = 100): Promise<AntennaReading[]> {
  return db.prisma.antennaReading.findMany({ where: { planId, nodeId }, orderBy: [{ measuredAt: 'desc' }, { id: 'desc' }], take: limit });
}
