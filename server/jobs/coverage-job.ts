// Executes one coverage run from its row: every gateway's area prediction on
// the plan's terrain layer, the composite on the union of their windows, the
// result files and the summary. Used alike by the in-process runner and by
// `npm run worker` (BullMQ). A run of several gateways given a parts runner is
// split: a child per gateway (coverage-split.ts), this job waits for them and
// composes their parts; otherwise every gateway is predicted here, one after
// the other. Both ways run the same functions (coverage-compute.ts). The result
// folder is written under a temporary name and renamed; the row goes to done
// once, guarded by its status.
import { existsSync, readdirSync, renameSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import type { Database } from '../db/client.ts';
import type { Config } from '../config.ts';
import { removeCoverageParts, resultDir } from '../db/files.ts';
import { claimCoverageRun, completeCoverageRun, failCoverageRun, findCoverageRunById, reportCoverageProgress } from '../db/repositories/coverage-runs.ts';
import { RunCancelledError, type AreaPool } from './area-runner.ts';
import { closeCoverageRasters, composeCoverage, gatewayPlacement, openCoverageRasters, predictGatewayPart, WorkerCannotRead, type CoverageRasters, type GatewayPart } from './coverage-compute.ts';
import { awaitCoverageParts } from './coverage-split.ts';
import { storedCoverageParams, type CoverageJobParams } from './coverage-params.ts';
import type { LinkRunJobs } from './link-run-jobs.ts';

export interface ExecuteOptions {
  pool?: AreaPool;
  workers?: number;
  workerId: string;
  /** Called before anything is written; a test hook to kill a worker mid-job. */
  onProgress?: (fraction: number) => void;
  /**
   * Where the children of a split run go (the link-tiles runner: BullMQ, or this process).
   * Given, a run of two or more gateways is split into a child per gateway; absent, the
   * run is done whole in this job.
   */
  parts?: LinkRunJobs;
  /** ms between the parent's looks at its children (default 300). */
  pollMs?: number;
  /**
   * This process is stopping: a parent waiting for its children stops waiting and throws
   * CoverageAttemptFailed, leaving the run running (a restart, or the queue, resumes it).
   */
  shutdown?: AbortSignal;
  /**
   * No retry is left after this attempt (default true). Not final: a worker that cannot
   * read a layer or a child's part throws CoverageAttemptFailed, leaving the run running,
   * so the queue hands it to another worker.
   */
  final?: boolean;
}

/** This attempt failed for a reason of its worker (a layer or part it cannot read); another worker may succeed. */
export class CoverageAttemptFailed extends Error {}

export type CoverageOutcome = 'done' | 'failed' | 'cancelled' | 'skipped';

/**
 * Runs the job for `runId`. Returns the final status it left the row in,
 * or 'skipped' when the row was already finished (a duplicate delivery).
 */
export async function executeCoverageRun(db: Database, config: Config, runId: string, options: ExecuteOptions): Promise<CoverageOutcome> {
  const row = await findCoverageRunById(db, runId);
  if (!row) return 'skipped';
  if (!(await claimCoverageRun(db, runId, options.workerId))) return 'skipped';
  const params = storedCoverageParams<CoverageJobParams>(row.params) as CoverageJobParams;
  const split = options.parts !== undefined && params.gateways.length > 1;
  const controller = new AbortController();
  let lastReport = 0;
  let reporting: Promise<void> = Promise.resolve();
  const gatewayCount = params.gateways.length;
  const report = (fraction: number) => {
    options.onProgress?.(fraction);
    const now = Date.now();
    if (now - lastReport < 250 && fraction < 1) return;
    lastReport = now;
    // Progress is best effort: a failed write (a busy or briefly lost database) must neither end a
    // long run nor reject while nobody awaits the chain (that would be an unhandled rejection);
    // the final write of the result is what counts, and it fails the run if the database is gone.
    reporting = reporting.then(async () => {
      try {
        const stillRunning = await reportCoverageProgress(db, runId, fraction);
        if (!stillRunning) controller.abort();
      } catch {
        // Best effort (see above): the next report or the final write tries again.
      }
    });
  };
  let rasters: CoverageRasters | null = null;
  let keepParts = false;
  const dir = resultDir(config, runId);
  const temp = `${dir}.partial-${process.pid}-${Date.now()}`;
  try {
    // Temporary folders of an earlier attempt of this run (a worker killed while writing) go first.
    const parent = join(config.filesDir, 'coverage');
    if (existsSync(parent)) for (const name of readdirSync(parent)) if (name.startsWith(`${runId}.partial-`)) rmSync(join(parent, name), { recursive: true, force: true });
    let parts: GatewayPart[] = [];
    if (split) {
      const waited = await awaitCoverageParts(db, config, row, params, { jobs: options.parts!, workerId: options.workerId, signal: controller.signal, shutdown: options.shutdown, report, settled: () => reporting, pollMs: options.pollMs });
      if (waited.kind === 'cancelled') throw new RunCancelledError();
      if (waited.kind === 'stopped') {
        keepParts = true;
        throw new CoverageAttemptFailed(`worker ${options.workerId} stopped while the run's children ran; the run goes on`);
      }
      if (waited.kind === 'failed') {
        await failCoverageRun(db, runId, waited.error);
        return 'failed';
      }
      parts = waited.parts;
    }
    rasters = await openCoverageRasters(config, params, options.workerId);
    if (split) {
      // The children opened the same layer: their windows must be the ones this worker finds (else the files differ between machines).
      for (const part of parts) {
        const expected = gatewayPlacement(rasters.raster, params, part.gatewayIndex);
        if (JSON.stringify(expected) !== JSON.stringify(part.placement)) {
          throw new WorkerCannotRead(`worker ${options.workerId}: the part of gateway "${params.gateways[part.gatewayIndex].name}" lies on window ${JSON.stringify(part.placement)}, this worker's terrain layer gives ${JSON.stringify(expected)}: the workers do not read the same layer`);
        }
      }
    } else {
      for (let index = 0; index < gatewayCount; index++) {
        parts.push(await predictGatewayPart(rasters, params, index, { pool: options.pool, workers: options.workers, signal: controller.signal, onProgress: (f) => report((index + f * 0.95) / gatewayCount) }));
        await reporting;
        if (controller.signal.aborted) throw new RunCancelledError();
      }
    }
    // Result files: temporary folder first, renamed into place in one step.
    const summaryJson = composeCoverage(rasters.raster, params, parts, runId, temp);
    report(0.99);
    await reporting;
    if (controller.signal.aborted) throw new RunCancelledError();
    // A folder left by an earlier attempt that died after its rename is replaced.
    rmSync(dir, { recursive: true, force: true });
    renameSync(temp, dir);
    const done = await completeCoverageRun(db, runId, { resultPath: join('coverage', runId), summary: summaryJson });
    if (!done) {
      // Another attempt of this run (its worker lost the lock but lived) completed it: its result stays.
      if ((await findCoverageRunById(db, runId))?.status === 'done') return 'skipped';
      rmSync(dir, { recursive: true, force: true });
      return 'cancelled';
    }
    return 'done';
  } catch (error) {
    rmSync(temp, { recursive: true, force: true });
    if (error instanceof CoverageAttemptFailed) throw error;
    if (error instanceof RunCancelledError || controller.signal.aborted) return 'cancelled';
    const message = error instanceof Error ? error.message : String(error);
    if (error instanceof WorkerCannotRead && options.final === false) {
      // The children's parts stay for the next attempt.
      keepParts = true;
      throw new CoverageAttemptFailed(message);
    }
    await failCoverageRun(db, runId, message);
    return 'failed';
  } finally {
    await reporting;
    await closeCoverageRasters(rasters);
    if (split && !keepParts) removeCoverageParts(config, runId);
  }
}
