// The kit catalog: antenna designs, feedline types and mast options. Built-ins come from
// server/radio (teamId null) and are re-synced on every open, so a new release's catalog
// reaches existing databases; teams add their own rows (teamId set, cuid ids).
// The *ForTeam helpers return the server/radio shapes the computation rooms take.
import { createHash } from 'node:crypto';
import { parseStoredPattern } from '../../radio/pattern-schema.ts';
import type { Database } from '../database.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';
import { builtInAntennaDesigns, type AntennaDesign as RadioAntennaDesign } from '../../radio/antennas.ts';
import { builtInFeedlines, fitAttenuation, type FeedlineType as RadioFeedline, type AttenuationPoint } from '../../radio/feedlines.ts';
import { builtInMastOptions, type MastOption as RadioMastOption } from '../../radio/masts.ts';

export type AntennaDesignRow = Awaited<ReturnType<Database['prisma']['antennaDesign']['findFirstOrThrow']>>;
export type FeedlineRow = Awaited<ReturnType<Database['prisma']['feedlineType']['findFirstOrThrow']>>;
export type MastRow = Awaited<ReturnType<Database['prisma']['mastOption']['findFirstOrThrow']>>;

export type KitKind = 'antenna-designs' | 'feedlines' | 'masts';

const referenceMhz = 915;

function attenuationAt(fit: { a: number; b: number }, frequencyMhz: number): number {
  return fit.a * Math.sqrt(frequencyMhz) + fit.b * frequencyMhz; // alpha(f) = a*sqrt(f) + b*f, see server/radio/feedlines.ts
}

function json(value: unknown): Prisma.InputJsonValue {
  return JSON.parse(JSON.stringify(value)) as Prisma.InputJsonValue;
}

function antennaData(design: RadioAntennaDesign) {
  const { id: _id, name, kind, gainDbi, pattern, polarization, bandMhz, typicalVswr, costUsd, homemade, buildSheetId, notes, ...rest } = design;
  return {
    name,
    kind,
    gainDbi,
    pattern: json(pattern),
    polarization,
    fromMhz: bandMhz.fromMhz,
    toMhz: bandMhz.toMhz,
    typicalVswr,
    costUsd,
    homemade,
    buildSheetId: buildSheetId ?? null,
    notes: notes.join('\n'),
    details: json({ ...rest, notes }),
  };
}

function feedlineData(feedline: RadioFeedline) {
  const { id: _id, name, impedanceOhm, velocityFactor, table, fit, costUsdPerM, notes, ...rest } = feedline;
  return {
    name,
    lossDbPer100m: Math.round(attenuationAt(fit, referenceMhz) * 1000) / 1000,
    referenceMhz,
    lossTable: json(table),
    connectorLossDb: 0,
    impedanceOhm,
    velocityFactor,
    costUsdPerM,
    notes: notes.join('\n'),
    details: json({ ...rest, fit, notes }),
  };
}

function mastData(mast: RadioMastOption) {
  const { id: _id, name, heightM, costUsd, notes, ...rest } = mast;
  return { name, heightM, costUsd, notes: notes.join('\n'), details: json({ ...rest, notes }) };
}

/** Hash of the built-in catalog as this release ships it (stored in each built-in row's details). */
function catalogHash(): string {
  return createHash('sha256').update(JSON.stringify([builtInAntennaDesigns, builtInFeedlines, builtInMastOptions])).digest('hex').slice(0, 16);
}

/**
 * Brings the built-in catalog (teamId null) up to this release's server/radio lists.
 * Cheap when nothing changed: three counts of rows carrying the current catalog hash.
 */
export async function syncBuiltInKit(db: Database): Promise<void> {
  const hash = catalogHash();
  const current = { path: ['catalogHash'], equals: hash };
  const [antennas, feedlines, masts] = await Promise.all([
    db.prisma.antennaDesign.count({ where: { teamId: null, details: current } }),
    db.prisma.feedlineType.count({ where: { teamId: null, details: current } }),
    db.prisma.mastOption.count({ where: { teamId: null, details: current } }),
  ]);
  if (antennas === builtInAntennaDesigns.length && feedlines === builtInFeedlines.length && masts === builtInMastOptions.length) return;
  const stamp = (details: Prisma.InputJsonValue) => ({ ...(details as Record<string, unknown>), catalogHash: hash }) as Prisma.InputJsonValue;
  const ops = [
    ...builtInAntennaDesigns.map((design) => {
      const data = antennaData(design);
      const row = { ...data, details: stamp(data.details) };
      return db.prisma.antennaDesign.upsert({ where: { id: design.id }, create: { id: design.id, teamId: null, ...row }, update: row });
    }),
    ...builtInFeedlines.map((feedline) => {
      const data = feedlineData(feedline);
      const row = { ...data, details: stamp(data.details) };
      return db.prisma.feedlineType.upsert({ where: { id: feedline.id }, create: { id: feedline.id, teamId: null, ...row }, update: row });
    }),
    ...builtInMastOptions.map((mast) => {
      const data = mastData(mast);
      const row = { ...data, details: stamp(data.details) };
      return db.prisma.mastOption.upsert({ where: { id: mast.id }, create: { id: mast.id, teamId: null, ...row }, update: row });
    }),
  ];
  await db.prisma.$transaction(ops);
}

const visible = (teamId: string) => ({ OR: [{ teamId: null }, { teamId }] });
const order = [{ teamId: { sort: 'asc', nulls: 'first' } }, { name: 'asc' }, { id: 'asc' }] as const;

export async function listAntennaDesigns(db: Database, teamId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = visible(teamId);
  const [items, total] = await Promise.all([
    db.prisma.antennaDesign.findMany({ where, orderBy: [...order], ...window }),
    db.prisma.antennaDesign.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function listFeedlines(db: Database, teamId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = visible(teamId);
  const [items, total] = await Promise.all([
    db.prisma.feedlineType.findMany({ where, orderBy: [...order], ...window }),
    db.prisma.feedlineType.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function listMasts(db: Database, teamId: string, query: PageQuery) {
  const window = pageWindow(query);
  const where = visible(teamId);
  const [items, total] = await Promise.all([
    db.prisma.mastOption.findMany({ where, orderBy: [...order], ...window }),
    db.prisma.mastOption.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function findAntennaDesignRow(db: Database, teamId: string, id: string) {
  return db.prisma.antennaDesign.findFirst({ where: { id, ...visible(teamId) } });
}
export async function findFeedlineRow(db: Database, teamId: string, id: string) {
  return db.prisma.feedlineType.findFirst({ where: { id, ...visible(teamId) } });
}
export async function findMastRow(db: Database, teamId: string, id: string) {
  return db.prisma.mastOption.findFirst({ where: { id, ...visible(teamId) } });
}

export type AntennaDesignCreate = Omit<Prisma.AntennaDesignUncheckedCreateInput, 'id' | 'teamId' | 'version' | 'createdAt' | 'updatedAt'>;
export type FeedlineCreate = Omit<Prisma.FeedlineTypeUncheckedCreateInput, 'id' | 'teamId' | 'version' | 'createdAt' | 'updatedAt'>;
export type MastCreate = Omit<Prisma.MastOptionUncheckedCreateInput, 'id' | 'teamId' | 'version' | 'createdAt' | 'updatedAt'>;

export async function createAntennaDesign(db: Database, teamId: string, data: AntennaDesignCreate) {
  return db.prisma.antennaDesign.create({ data: { ...data, teamId } });
}
export async function createFeedline(db: Database, teamId: string, data: FeedlineCreate) {
  return db.prisma.feedlineType.create({ data: { ...data, teamId } });
}
export async function createMast(db: Database, teamId: string, data: MastCreate) {
  return db.prisma.mastOption.create({ data: { ...data, teamId } });
}

// Updates and deletes only ever touch the team's own rows: built-ins are read-only.
export async function updateAntennaDesign(db: Database, teamId: string, id: string, version: number, patch: Partial<AntennaDesignCreate>) {
  return versionedUpdate('antenna design', {
    attempt: () => db.prisma.antennaDesign.updateMany({ where: { id, teamId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => db.prisma.antennaDesign.findFirst({ where: { id, teamId } }),
  });
}
export async function updateFeedline(db: Database, teamId: string, id: string, version: number, patch: Partial<FeedlineCreate>) {
  return versionedUpdate('feedline', {
    attempt: () => db.prisma.feedlineType.updateMany({ where: { id, teamId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => db.prisma.feedlineType.findFirst({ where: { id, teamId } }),
  });
}
export async function updateMast(db: Database, teamId: string, id: string, version: number, patch: Partial<MastCreate>) {
  return versionedUpdate('mast option', {
    attempt: () => db.prisma.mastOption.updateMany({ where: { id, teamId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => db.prisma.mastOption.findFirst({ where: { id, teamId } }),
  });
}
export async function deleteKitRow(db: Database, teamId: string, kind: KitKind, id: string): Promise<void> {
  const where = { id, teamId };
  const { count } =
    kind === 'antenna-designs'
      ? await db.prisma.antennaDesign.deleteMany({ where })
      : kind === 'feedlines'
        ? await db.prisma.feedlineType.deleteMany({ where })
        : await db.prisma.mastOption.deleteMany({ where });
  if (count === 0) throw new NotFoundError(kind === 'antenna-designs' ? 'antenna design' : kind === 'feedlines' ? 'feedline' : 'mast option');
}

/** A catalog row in the shape server/radio computes with. */
export function toRadioAntennaDesign(row: AntennaDesignRow): RadioAntennaDesign {
  const { catalogHash: _hash, ...details } = (row.details ?? {}) as Partial<RadioAntennaDesign> & { catalogHash?: string };
  return {
    relativeCost: 1,
    priceNote: row.teamId ? 'entered by the team' : '',
    source: row.teamId ? 'team catalog' : '',
    ...details,
    id: row.id,
    name: row.name,
    kind: row.kind as RadioAntennaDesign['kind'],
    gainDbi: row.gainDbi,
    // Parsed through the same schema the API checks with (no pattern = an omni of gainDbi).
    pattern: parseStoredPattern(row.pattern, row.name),
    polarization: row.polarization as RadioAntennaDesign['polarization'],
    bandMhz: { fromMhz: row.fromMhz, toMhz: row.toMhz },
    typicalVswr: row.typicalVswr,
    costUsd: row.costUsd,
    homemade: row.homemade,
    buildSheetId: row.buildSheetId ?? undefined,
    notes: Array.isArray(details.notes) ? details.notes : row.notes ? row.notes.split('\n') : [],
  };
}

export function toRadioFeedline(row: FeedlineRow): RadioFeedline {
  const { catalogHash: _hash, ...details } = (row.details ?? {}) as Partial<RadioFeedline> & { catalogHash?: string };
  const table = (Array.isArray(row.lossTable) && row.lossTable.length > 0
    ? row.lossTable
    : [{ frequencyMhz: row.referenceMhz, lossDbPer100m: row.lossDbPer100m }]) as unknown as AttenuationPoint[];
  return {
    outerDiameterMm: 0,
    minBendRadiusMm: 0,
    priceNote: row.teamId ? 'entered by the team' : '',
    source: row.teamId ? 'team catalog' : '',
    ...details,
    id: row.id,
    name: row.name,
    impedanceOhm: row.impedanceOhm,
    velocityFactor: row.velocityFactor ?? 0.66,
    table,
    fit: details.fit ?? fitAttenuation(table),
    costUsdPerM: row.costUsdPerM,
    notes: Array.isArray(details.notes) ? details.notes : row.notes ? row.notes.split('\n') : [],
  };
}

export function toRadioMastOption(row: MastRow): RadioMastOption {
  const { catalogHash: _hash, ...details } = (row.details ?? {}) as Partial<RadioMastOption> & { catalogHash?: string };
  return {
    mounting: 'ground',
    priceNote: row.teamId ? 'entered by the team' : '',
    guyed: false,
    professionalInstall: false,
    cautions: [],
    ...details,
    id: row.id,
    name: row.name,
    heightM: row.heightM,
    costUsd: row.costUsd,
    notes: Array.isArray(details.notes) ? details.notes : row.notes ? row.notes.split('\n') : [],
  };
}

export async function findAntennaDesignForTeam(db: Database, teamId: string, id: string): Promise<RadioAntennaDesign> {
  const row = await findAntennaDesignRow(db, teamId, id);
  if (!row) throw new NotFoundError(`antenna design "${id}"`);
  return toRadioAntennaDesign(row);
}
export async function findFeedlineForTeam(db: Database, teamId: string, id: string): Promise<RadioFeedline> {
  const row = await findFeedlineRow(db, teamId, id);
  if (!row) throw new NotFoundError(`feedline "${id}"`);
  return toRadioFeedline(row);
}
export async function findMastOptionForTeam(db: Database, teamId: string, id: string): Promise<RadioMastOption> {
  const row = await findMastRow(db, teamId, id);
  if (!row) throw new NotFoundError(`mast option "${id}"`);
  return toRadioMastOption(row);
}
