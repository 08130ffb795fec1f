// Terrain layers of a plan (model TerrainLayer): one row per uploaded GeoTIFF, the file under
// <filesDir>/<filePath>. Callers resolve the plan through the team scope first.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { recordAudit, transactionLimits, type AuditInput } from './audit.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';

export type TerrainLayerRow = Awaited<ReturnType<Database['prisma']['terrainLayer']['findFirstOrThrow']>>;
export type TerrainLayerCreate = Omit<Prisma.TerrainLayerUncheckedCreateInput, 'planId' | 'createdAt'> & { id: string };

/**
 * Inserts a row, runs `beforeCommit` (the caller moves the file into place there) and inserts
 * the audit entry, in one transaction: if any step or the commit fails, no row and no entry are
 * kept (the caller removes a file it already moved).
 */
export async function createTerrainLayerWith<T>(
  db: Database,
  planId: string,
  data: TerrainLayerCreate,
  audit: (row: TerrainLayerRow) => AuditInput,
  beforeCommit: (row: TerrainLayerRow) => Promise<T> | T,
): Promise<{ row: TerrainLayerRow; result: T }> {
  return db.prisma.$transaction(async (tx) => {
    const row = await tx.terrainLayer.create({ data: { ...data, planId } });
    const result = await beforeCommit(row);
    // After the file move, so a refused audit entry also exercises the caller's file clean-up.
    await recordAudit({ prisma: tx }, audit(row));
    return { row, result };
  }, transactionLimits);
}

export async function findTerrainLayer(db: Database, planId: string, id: string): Promise<TerrainLayerRow | null> {
  return db.prisma.terrainLayer.findFirst({ where: { id, planId } });
}

export async function listTerrainLayers(db: Database, planId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = { planId };
  const [items, total] = await Promise.all([
    db.prisma.terrainLayer.findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }),
    db.prisma.terrainLayer.count({ where }),
  ]);
  return toPage(items, total, window);
}

/** Every layer of a plan (for tiles and stores), finest resolution first. */
export async function allTerrainLayers(db: Database, planId: string): Promise<TerrainLayerRow[]> {
  return db.prisma.terrainLayer.findMany({ where: { planId }, orderBy: [{ resolutionM: 'asc' }, { createdAt: 'asc' }] });
}

/** File paths (relative to filesDir) of a plan's layers. */
export async function terrainFilePaths(db: Database, planId: string): Promise<string[]> {
  return (await db.prisma.terrainLayer.findMany({ where: { planId }, select: { filePath: true } })).map((row) => row.filePath);
}

/** Deletes a row; returns it (null when there was none) so the caller can remove its file. */
export async function deleteTerrainLayer(db: Database, planId: string, id: string): Promise<TerrainLayerRow | null> {
  const row = await findTerrainLayer(db, planId, id);
  if (!row) return null;
  const { count } = await db.prisma.terrainLayer.deleteMany({ where: { id, planId } });
  return count === 0 ? null : row;
}

/** Box around the plan's sites, gateways and nodes (null when the plan has none). */
export async function planExtent(db: Database, planId: string): Promise<{ west: number; south: number; east: number; north: number } | null> {
  const select = { _min: { lat: true, lon: true }, _max: { lat: true, lon: true } } as const;
  const parts = await Promise.all([
    db.prisma.site.aggregate({ where: { planId }, ...select }),
    db.prisma.gateway.aggregate({ where: { planId }, ...select }),
    db.prisma.node.aggregate({ where: { planId }, ...select }),
  ]);
  let box: { west: number; south: number; east: number; north: number } | null = null;
  for (const part of parts) {
    if (part._min.lat === null || part._min.lon === null || part._max.lat === null || part._max.lon === null) continue;
    box = box
      ? { west: Math.min(box.west, part._min.lon), south: Math.min(box.south, part._min.lat), east: Math.max(box.east, part._max.lon), north: Math.max(box.north, part._max.lat) }
      : { west: part._min.lon, south: part._min.lat, east: part._max.lon, north: part._max.lat };
  }
  return box;
}
