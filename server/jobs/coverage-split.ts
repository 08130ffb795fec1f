// A multi-gateway coverage run split into a child per gateway (issue 20). The
// coverage run (CoverageRun row, the parent job on the `coverage` queue) records
// a LinkRun of kind coverage-parts with one tile per gateway; any worker takes a
// tile (the `link-tiles` queue and LinkTileExecutor of link-runs.ts: claim,
// retry, fail, cancel and completion are the fleet link table's), predicts that
// gateway's part with predictGatewayPart and writes it (window, products, loss)
// to the shared files folder under the run, atomically (temp file + rename),
// keyed by run and gateway so a retry overwrites it; the tile's result records
// the file's size and SHA-256. The parent waits, reports the progress summed
// from its children, and once every child is done reads the parts back and runs
// composeCoverage once over them, as the whole run does in one job.
import { createHash } from 'node:crypto';
import { readFileSync, rmdirSync, rmSync } from 'node:fs';
import { dirname, relative } from 'node:path';
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import { coveragePartFile, resolveStoredFile, writeFileAtomic } from '../db/files.ts';
import { findCoverageRunById, type CoverageRunRow } from '../db/repositories/coverage-runs.ts';
import { cancelLinkRun, createLinkRun, failedLinkTile, findLinkRunById, latestLinkRunOf, linkRunTotals, linkTileResults, unfinishedLinkTiles, type LinkRunRow } from '../db/repositories/link-runs.ts';
import { transactionLimits } from '../db/repositories/audit.ts';
import { AppError } from '../app/errors.ts';
import type { WindowPlacement } from '../coverage/terrain-window.ts';
import { closeCoverageRasters, openCoverageRasters, predictGatewayPart, WorkerCannotRead, type CoverageRasters, type GatewayPart } from './coverage-compute.ts';
import type { CoverageJobParams } from './coverage-params.ts';
import { storedCoverageParams } from './coverage-params.ts';
import { RunCancelledError, type AreaPool } from './area-runner.ts';
import type { LinkRunJobs } from './link-run-jobs.ts';

/** Kind of a LinkRun whose tiles are the gateways of a split coverage run. */
export const COVERAGE_PARTS_KIND = 'coverage-parts';

/** The params of a coverage-parts LinkRun: its parent. */
export interface CoveragePartsParams {
  coverageRunId: string;
}

/** What a child hands back in its tile's result: where its part is and how to know it is whole. */
export interface CoveragePartResult {
  /** Relative to the files folder. */
  file: string;
  bytes: number;
  sha256: string;
  placement: WindowPlacement;
}

/** Share of a split run's progress the children carry (the rest is the composite). */
const CHILDREN_SHARE = 0.95;

// Part file: "ESCP", u32 header length, JSON header (padded to 4 bytes), then the
// cell arrays in this order, each widthPx × heightPx: loss, power, margin, delivery
// probability (Float32, NaN outside), best SF (Uint8). Little-endian, as the typed arrays are.
const MAGIC = 'ESCP';
const FLOAT_ARRAYS = ['lossDb', 'powerDbm', 'marginDb', 'deliveryProbability'] as const;

/** The bytes of a part file (the typed arrays copied bit for bit, NaN included). */
export function encodeCoveragePart(part: GatewayPart, gatewayId: string): Uint8Array {
  const cells = part.placement.widthPx * part.placement.heightPx;
  const header = Buffer.from(JSON.stringify({ version: 1, gatewayIndex: part.gatewayIndex, gatewayId, placement: part.placement }));
  const headerBytes = Math.ceil(header.length / 4) * 4;
  const out = new Uint8Array(8 + headerBytes + cells * (4 * FLOAT_ARRAYS.length + 1));
  out.set(Buffer.from(MAGIC, 'ascii'), 0);
  new DataView(out.buffer).setUint32(4, header.length, true);
  out.fill(0x20, 8, 8 + headerBytes);
  out.set(header, 8);
  let offset = 8 + headerBytes;
  const arrays: Float32Array[] = [part.lossDb, part.products.powerDbm, part.products.marginDb, part.products.deliveryProbability];
  for (const values of arrays) {
    if (values.length !== cells) throw new Error(`part of gateway ${part.gatewayIndex}: an array has ${values.length} cells, the window ${cells}`);
    out.set(new Uint8Array(values.buffer, values.byteOffset, values.byteLength), offset);
    offset += values.byteLength;
  }
  out.set(part.products.bestSf, offset);
  return out;
}

/** A part file read back; throws when it is not one or not whole. */
export function decodeCoveragePart(bytes: Uint8Array): { gatewayId: string; part: GatewayPart } {
  const text = (from: number, to: number) => Buffer.from(bytes.buffer, bytes.byteOffset + from, to - from).toString('utf8');
  if (bytes.length < 8 || text(0, 4) !== MAGIC) throw new Error('not a coverage part file');
  const headerLength = new DataView(bytes.buffer, bytes.byteOffset).getUint32(4, true);
  const header = JSON.parse(text(8, 8 + headerLength)) as { version: number; gatewayIndex: number; gatewayId: string; placement: WindowPlacement };
  if (header.version !== 1) throw new Error(`coverage part file version ${header.version} is unknown`);
  const cells = header.placement.widthPx * header.placement.heightPx;
  let offset = 8 + Math.ceil(headerLength / 4) * 4;
  if (bytes.length !== offset + cells * (4 * FLOAT_ARRAYS.length + 1)) throw new Error(`coverage part file of gateway ${header.gatewayIndex} has ${bytes.length} bytes, not the ${offset + cells * 17} its window needs`);
  const floats: Float32Array[] = [];
  for (let k = 0; k < FLOAT_ARRAYS.length; k++) {
    // A copy: the file's buffer need not be 4-byte aligned (and a Buffer's slice is a view).
    const copy = new Uint8Array(cells * 4);
    copy.set(bytes.subarray(offset, offset + cells * 4));
    floats.push(new Float32Array(copy.buffer));
    offset += cells * 4;
  }
  const bestSf = new Uint8Array(bytes.subarray(offset, offset + cells));
  const [lossDb, powerDbm, marginDb, deliveryProbability] = floats;
  return { gatewayId: header.gatewayId, part: { gatewayIndex: header.gatewayIndex, placement: header.placement, lossDb, products: { powerDbm, marginDb, bestSf, deliveryProbability } } };
}

function sha256(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/**
 * One child: gateway `index` of the coverage run named by `params`. `checkpoint(cellsDone)`
 * records how far it got and says whether this attempt still owns the tile of a running run
 * (false: stop, write nothing). Returns the tile's result, or null when told to stop.
 */
export class CoveragePartExecutor {
  constructor(
    private readonly db: Database,
    private readonly config: Pick<Config, 'filesDir' | 'dataDir'>,
    private readonly pool: () => AreaPool | undefined = () => undefined,
  ) {}

  async predict(params: CoveragePartsParams, index: number, cells: number, workerId: string, checkpoint: (cellsDone: number) => Promise<boolean>): Promise<CoveragePartResult | null> {
    const run = await findCoverageRunById(this.db, params.coverageRunId);
    if (!run || run.status !== 'running') return null;
    const jobParams = storedCoverageParams<CoverageJobParams>(run.params) as CoverageJobParams;
    const gateway = jobParams.gateways[index];
    if (!gateway) throw new Error(`coverage run ${run.id} has no gateway ${index}`);
    let rasters: CoverageRasters | null = null;
    const controller = new AbortController();
    let checking: Promise<void> = Promise.resolve();
    let lastCheck = 0;
    try {
      try {
        rasters = await openCoverageRasters(this.config, jobParams, workerId);
      } catch (error) {
        // The tile executor passes an AppError's message on as it is (it already names the worker).
        if (error instanceof WorkerCannotRead) throw new AppError('unprocessable', 'terrain_unreadable', error.message);
        throw error;
      }
      const part = await predictGatewayPart(rasters, jobParams, index, {
        pool: this.pool(),
        workers: 1,
        signal: controller.signal,
        onProgress: (fraction) => {
          const now = Date.now();
          if (now - lastCheck < 250) return;
          lastCheck = now;
          // Progress and the cancel check in one statement, chained so they stay in order; a failed
          // check (a busy database) is dropped: the next one, or the completion, decides.
          checking = checking.then(async () => {
            try {
              if (!(await checkpoint(Math.floor(0.9 * fraction * cells)))) controller.abort();
            } catch {
              // Best effort, as the coverage job's own progress writes.
            }
          });
        },
      });
      await checking;
      if (controller.signal.aborted) return null;
      const bytes = encodeCoveragePart(part, gateway.id);
      const file = coveragePartFile(this.config, run.id, index);
      // Last look before the part replaces any earlier attempt's: a cancelled or taken-over attempt writes nothing.
      const written = await writeFileAtomic(file, bytes, () => checkpoint(cells));
      await this.dropIfRunEnded(run.id, file);
      if (!written) return null;
      return { file: relative(this.config.filesDir, file), bytes: bytes.length, sha256: sha256(bytes), placement: part.placement };
    } catch (error) {
      if (error instanceof RunCancelledError || controller.signal.aborted) return null;
      throw error;
    } finally {
      await checking;
      await closeCoverageRasters(rasters);
    }
  }

  /**
   * A child that passed its last check just before a cancel can still rename its part (and
   * `writeFileAtomic` makes the folder) after the parent removed the parts folder. Looked at
   * after the write: if the coverage run has ended meanwhile, its parts are nobody's, so this
   * part and the folder (when empty) go. If the run still ran at this look, the rename came
   * before the run ended, so the parent's own removal, which follows the end, takes the part.
   * Only an ended run counts: a taken-over attempt must not remove a part its successor owns.
   */
  private async dropIfRunEnded(coverageRunId: string, file: string): Promise<void> {
    const now = await findCoverageRunById(this.db, coverageRunId);
    if (now && (now.status === 'queued' || now.status === 'running')) return;
    rmSync(file, { force: true });
    try {
      rmdirSync(dirname(file));
    } catch {
      // Not empty (another part or a retry's file) or already gone: the parent's sweep has it.
    }
  }
}

/** What the parent's wait ends with. */
export type PartsOutcome = { kind: 'parts'; partsRunId: string; parts: GatewayPart[] } | { kind: 'failed'; error: string } | { kind: 'cancelled' } | { kind: 'stopped' };

/**
 * The children of a split run: the coverage-parts LinkRun of this coverage run, made
 * once under a lock on the coverage run's row (a retried parent finds its children
 * and waits for them again; only a cancelled set is made anew).
 */
async function childrenOf(db: Database, run: CoverageRunRow, params: CoverageJobParams): Promise<LinkRunRow> {
  return db.prisma.$transaction(async (tx) => {
    const inTx: Database = { ...db, prisma: tx as unknown as Database['prisma'], changes: undefined };
    await tx.$queryRaw`SELECT "id" FROM "CoverageRun" WHERE "id" = ${run.id} FOR UPDATE`;
    const latest = await latestLinkRunOf(inTx, COVERAGE_PARTS_KIND, 'coverageRunId', run.id);
    if (latest && latest.status !== 'cancelled') return latest;
    const tiles = params.gateways.map((g, index) => ({ nodeIds: [], gatewayIds: [g.id], pairs: Math.max(1, params.windowCells?.[index] ?? 1) }));
    const partsParams: CoveragePartsParams = { coverageRunId: run.id };
    return createLinkRun(inTx, run.planId, { kind: COVERAGE_PARTS_KIND, params: partsParams, createdById: null, tiles });
  }, transactionLimits);
}

/**
 * The parent's wait: makes (or finds) the children, queues the unfinished ones on `jobs`,
 * reports the progress summed from them through `report` until every child is done, then
 * reads their parts back (checking size and SHA-256). A failed child fails the run with its
 * message; `signal` (the run was cancelled) cancels every child.
 */
export async function awaitCoverageParts(
  db: Database,
  config: Pick<Config, 'filesDir' | 'dataDir'>,
  run: CoverageRunRow,
  params: CoverageJobParams,
  options: {
    jobs: LinkRunJobs;
    workerId: string;
    /** The run was cancelled (its progress write found it no longer running). */
    signal: AbortSignal;
    /** This process is stopping: the wait ends with 'stopped', the run and its children go on. */
    shutdown?: AbortSignal;
    report: (fraction: number) => void;
    settled: () => Promise<void>;
    pollMs?: number;
  },
): Promise<PartsOutcome> {
  const children = await childrenOf(db, run, params);
  const failure = async (): Promise<PartsOutcome> => {
    const tile = await failedLinkTile(db, children.id);
    const gateway = tile ? params.gateways[tile.index] : undefined;
    const error = tile && gateway ? `gateway "${gateway.name}" (child ${tile.index + 1} of ${params.gateways.length}): ${tile.error ?? 'failed'}` : (children.error ?? 'a child of the run failed');
    return { kind: 'failed', error };
  };
  if (children.status === 'failed') return failure();
  if (children.status !== 'done') await options.jobs.enqueue(children.id, await unfinishedLinkTiles(db, children.id));
  for (;;) {
    const row = await findLinkRunById(db, children.id);
    if (!row) throw new Error('the children of the coverage run are gone');
    if (row.status === 'done') break;
    if (row.status === 'failed') return failure();
    if (row.status === 'cancelled') return { kind: 'cancelled' };
    const totals = await linkRunTotals(db, children.id);
    options.report((CHILDREN_SHARE * Math.min(row.pairsTotal, totals.pairsDone + totals.pairsRunning)) / Math.max(1, row.pairsTotal));
    await options.settled();
    if (options.signal.aborted) {
      const pending = await unfinishedLinkTiles(db, children.id);
      await cancelLinkRun(db, row.planId, children.id);
      await options.jobs.withdraw(children.id, pending);
      return { kind: 'cancelled' };
    }
    if (options.shutdown?.aborted) return { kind: 'stopped' };
    await new Promise((resolve) => setTimeout(resolve, options.pollMs ?? 300));
  }
  const parts: GatewayPart[] = [];
  for (const tile of await linkTileResults(db, children.id)) {
    const result = tile.result as CoveragePartResult | null;
    const gateway = params.gateways[tile.index];
    const where = `the part of gateway "${gateway?.name ?? tile.index}" (child ${tile.index + 1} of ${params.gateways.length})`;
    if (!result) throw new Error(`${where} has no result`);
    let bytes: Uint8Array;
    try {
      bytes = readFileSync(resolveStoredFile(config, result.file));
    } catch (error) {
      // The parts reach the parent through the shared files folder, as the terrain reaches the children.
      throw new WorkerCannotRead(`worker ${options.workerId} could not read ${where} from its files folder: ${error instanceof Error ? error.message : String(error)}`);
    }
    if (bytes.length !== result.bytes || sha256(bytes) !== result.sha256) {
      throw new WorkerCannotRead(`worker ${options.workerId} read ${where} with ${bytes.length} bytes and another checksum than its child wrote (${result.bytes} bytes): the files folder is not the one the child wrote to`);
    }
    const decoded = decodeCoveragePart(bytes);
    if (decoded.part.gatewayIndex !== tile.index || decoded.gatewayId !== gateway?.id) throw new Error(`${where}: the file holds gateway ${decoded.part.gatewayIndex} (${decoded.gatewayId})`);
    parts.push(decoded.part);
  }
  return { kind: 'parts', partsRunId: children.id, parts };
}

/** The children of a coverage run as its GET reports them, or null for a run done whole in one job. */
export async function coverageChildren(db: Database, run: CoverageRunRow): Promise<{ children: { total: number; done: number; retried: number; failed: number; cancelled: number }; workers: string[]; fraction: number } | null> {
  const parts = await latestLinkRunOf(db, COVERAGE_PARTS_KIND, 'coverageRunId', run.id);
  if (!parts) return null;
  const totals = await linkRunTotals(db, parts.id);
  return {
    children: { total: parts.tilesTotal, done: totals.tilesDone, retried: totals.tilesRetried, failed: totals.tilesFailed, cancelled: totals.tilesCancelled },
    workers: totals.workers,
    fraction: (CHILDREN_SHARE * Math.min(parts.pairsTotal, totals.pairsDone + totals.pairsRunning)) / Math.max(1, parts.pairsTotal),
  };
}
