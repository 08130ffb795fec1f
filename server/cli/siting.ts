// `earshot siting`: where to put gateways and how few will do, from the command
// line. Same use case as the API (server/app/siting.ts). The database is reached
// as `earshot link` does (server/cli/links.ts): DATABASE_URL directly; an
// embedded folder held by a running server through its loopback /_admin/siting
// route; otherwise the folder directly under the pid lock.
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import { dataFolderHolder, openDatabase } from '../db/client.ts';
import { LinkEngine } from '../jobs/link-engine.ts';
import { AppError } from '../app/errors.ts';
import { FIELD_RANGES } from '../planning/field-ranges.ts';
import { sitingReport, type SitingReportInput, type SitingResult } from '../app/siting.ts';
import { CliUsageError, defineCommand, flagOption, integerOption, numberOption, stringOption, type CommandDefinition } from './framework.ts';
import { callRunningServer, readRunningServer } from './running-server.ts';

/** Runs a siting request on the configured database, or through the server that holds it. */
export async function runSiting(input: SitingReportInput, env: NodeJS.ProcessEnv = process.env): Promise<unknown> {
  const config = loadConfig(env);
  if (!config.databaseUrl) {
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      const server = readRunningServer(config);
      // A large matrix on cold terrain takes minutes.
      const answer = server ? await callRunningServer(server, 'siting', input, 1_800_000) : null;
      if (answer !== null) return answer;
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder} and no server answers for it; wait and retry, or stop that process`);
    }
  }
  const db = await openDatabase(config);
  const engine = new LinkEngine(db, config);
  try {
    const run = await sitingReport({ db, engine }, input);
    return { ...run, createdAt: run.createdAt.toISOString(), startedAt: run.startedAt?.toISOString() ?? null, finishedAt: run.finishedAt?.toISOString() ?? null, appliedAt: run.appliedAt?.toISOString() ?? null };
  } catch (error) {
    if (error instanceof AppError) throw new CliUsageError(error.message);
    throw error;
  } finally {
    await engine.close();
    await db.close();
  }
}

const positive = () => numberOption().refine((v) => v >= 0, { message: 'must be ≥ 0' });

export const sitingCommands: CommandDefinition[] = [
  defineCommand({
    words: 'siting',
    options: z.strictObject({
      plan: stringOption(),
      k: integerOption().refine((v) => v >= 1 && v <= 3, { message: 'must be 1, 2 or 3' }),
      'terrain-points': integerOption()
        .refine((v) => v >= 0 && v <= 500, { message: 'must be 0–500' })
        .optional(),
      'spacing-m': positive().optional(),
      'no-sites': flagOption(),
      'keep-existing': flagOption(),
      'budget-usd': positive().optional(),
      'max-gateways': integerOption()
        .refine((v) => v >= 0, { message: 'must be ≥ 0' })
        .optional(),
      'max-nodes-per-gateway': integerOption()
        .refine((v) => v >= FIELD_RANGES.maxNodesPerGateway.min && v <= FIELD_RANGES.maxNodesPerGateway.max, {
          message: `must be ${FIELD_RANGES.maxNodesPerGateway.min}–${FIELD_RANGES.maxNodesPerGateway.max} ${FIELD_RANGES.maxNodesPerGateway.unit}`,
        })
        .optional(),
      minimise: z.enum(['gateways', 'cost'], { error: 'must be gateways or cost' }).optional(),
      'time-limit-s': positive().optional(),
    }),
    async run(options) {
      const input: SitingReportInput = {
        plan: options.plan,
        requiredGateways: options.k,
        candidates: { sites: !options['no-sites'], terrainPoints: options['terrain-points'] ?? 0, ...(options['spacing-m'] !== undefined ? { spacingM: options['spacing-m'] } : {}) },
        keepExistingGateways: options['keep-existing'],
        ...(options.minimise ? { minimise: options.minimise } : {}),
        ...(options['budget-usd'] !== undefined ? { budgetUsd: options['budget-usd'] } : {}),
        ...(options['max-gateways'] !== undefined ? { maxGateways: options['max-gateways'] } : {}),
        ...(options['max-nodes-per-gateway'] !== undefined ? { maxNodesPerGateway: options['max-nodes-per-gateway'] } : {}),
        ...(options['time-limit-s'] !== undefined ? { timeLimitS: options['time-limit-s'] } : {}),
      };
      const run = (await runSiting(input)) as { status: string; error: string | null };
      if (run.status !== 'done') throw new Error(`the siting run ${run.status}: ${run.error ?? 'no reason given'}`);
      return run;
    },
    formatText: (value) => {
      const result = (value as { result: SitingResult }).result;
      const lines = result.selected.map((s) => `${String(s.rank).padStart(2)}. ${s.name.padEnd(36)} ${s.lat.toFixed(5)},${s.lon.toFixed(5)}  ${s.costUsd.toFixed(0).padStart(7)} USD  heard by ${s.nodesHeard} nodes, ${s.nodesOnlyHere} depend on it${s.kept ? '  (kept as built)' : ''}`);
      lines.push(`${result.objective.gateways} gateways, ${result.objective.costUsd} USD; ${result.coveredNodeIds.length} of ${result.nodesTotal} nodes covered (${result.nodesCoverable} coverable) with k = ${result.requiredGateways}`);
      lines.push(`${result.optimal ? 'proven optimal' : `not proven optimal (gap ${result.gapPercent ?? '?'} %)`} by ${result.solver} in ${result.seconds} s; greedy: ${result.greedy.gateways} gateways, ${result.greedy.costUsd} USD`);
      for (const u of result.uncovered) lines.push(`not covered: ${u.name} — ${u.reason}`);
      return lines.join('\n');
    },
  }),
];
