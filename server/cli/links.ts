// `earshot link` and `earshot recommend`: the same numbers as the API, for scripts.
// The database is reached the way the admin commands do it (server/cli/admin.ts):
// DATABASE_URL directly; an embedded data folder directly only when no process holds
// it (openDatabase takes the pid lock), so a PGlite folder is never opened twice.
// While a server runs on the folder (it wrote <dataDir>/admin.json with its port and
// a local secret), the command asks that server's loopback admin route
// (/_admin/link, /_admin/recommend), which runs the same function
// (linkReport / recommendReport in server/app/links.ts) and returns the same JSON.
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import { dataFolderHolder, openDatabase } from '../db/client.ts';
import { LinkEngine } from '../jobs/link-engine.ts';
import { AppError } from '../app/errors.ts';
import { linkReport, recommendReport, type NodeLinksView } from '../app/links.ts';
import type { NodeRecommendation } from '../app/recommend.ts';
import { cautionLines } from '../planning/cautions.ts';
import { PlanSettingsError } from '../planning/settings.ts';
import { CliUsageError, defineCommand, numberOption, stringOption, type CommandDefinition } from './framework.ts';
import { callRunningServer, readRunningServer } from './running-server.ts';

type LinkOperation = 'link' | 'recommend';

/** Runs a link operation on the configured database, or through the server that holds it. */
export async function runLinkOperation(operation: LinkOperation, body: Record<string, unknown>, env: NodeJS.ProcessEnv = process.env): Promise<unknown> {
  const config = loadConfig(env);
  if (!config.databaseUrl) {
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      const server = readRunningServer(config);
      // A recommendation over a big catalog on cold terrain can take a while.
      const answer = server ? await callRunningServer(server, operation, body, 300_000) : null;
      if (answer !== null) return answer;
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder} and no server answers for it; wait and retry, or stop that process`);
    }
  }
  const db = await openDatabase(config);
  // One node at a time: its few paths run in-thread (starting workers would cost more).
  const engine = new LinkEngine(db, config, { workers: 0 });
  try {
    return operation === 'link' ? await linkReport(engine, body as never) : await recommendReport(engine, body as never);
  } catch (error) {
    if (error instanceof AppError || error instanceof PlanSettingsError) throw new CliUsageError(error.message);
    throw error;
  } finally {
    await engine.close();
    await db.close();
  }
}

export const linkCommands: CommandDefinition[] = [
  defineCommand({
    words: 'link',
    options: z.strictObject({ plan: stringOption(), node: stringOption(), gateway: stringOption().optional() }),
    async run(options) {
      return runLinkOperation('link', { plan: options.plan, node: options.node, ...(options.gateway ? { gateway: options.gateway } : {}) });
    },
    formatText: (result) => {
      const view = result as NodeLinksView;
      const lines = view.links.map((l) => `${(l.gatewayName ?? l.gatewayId).padEnd(20)} ${(l.distanceM / 1000).toFixed(2).padStart(7)} km  loss ${l.basicLossDb.toFixed(1)} dB  RSSI ${l.rssiDbm.toFixed(1)} dBm  SNR ${l.snrDb.toFixed(1)} dB  margin ${l.marginDb.toFixed(1)} dB  SF${l.bestSf ?? '–'}  delivery ${(l.deliveryProbability * 100).toFixed(1)} %`);
      return [...lines, `status ${view.status}, at least one gateway hears it ${(view.combinedDeliveryProbability * 100).toFixed(1)} %`].join('\n');
    },
  }),
  defineCommand({
    words: 'recommend',
    options: z.strictObject({
      plan: stringOption(),
      node: stringOption(),
      'target-margin-db': numberOption().optional(),
      'target-delivery': numberOption()
        .refine((v) => v >= 0 && v <= 1, { message: 'must be within 0–1' })
        .optional(),
      'max-cost': numberOption()
        .refine((v) => v >= 0, { message: 'must be ≥ 0' })
        .optional(),
    }),
    async run(options) {
      const body: Record<string, unknown> = { plan: options.plan, node: options.node };
      if (options['target-margin-db'] !== undefined) body.targetMarginDb = options['target-margin-db'];
      if (options['target-delivery'] !== undefined) body.targetDelivery = options['target-delivery'];
      if (options['max-cost'] !== undefined) body.maxCost = options['max-cost'];
      return runLinkOperation('recommend', body);
    },
    formatText: (result) => formatRecommendation(result as NodeRecommendation),
  }),
];

/** The recommendation as text: ranked options with the one kit price, advice, fitted cautions. */
export function formatRecommendation(rec: NodeRecommendation): string {
  const lines = [`Kit options for node ${rec.nodeId} (target margin ${rec.target.targetMarginDb.toFixed(1)} dB, delivery ${(rec.target.targetDelivery * 100).toFixed(0)} %), cheapest meeting the target first:`];
  rec.options.slice(0, 5).forEach((o, i) => {
    const parts = [o.antennaName, `at ${o.mastHeightM.toFixed(1)} m${o.mastName ? ` (${o.mastName})` : ''}`, o.feedlineName ? `${o.feedlineName}, ${o.feedlineLengthM.toFixed(1)} m` : 'no feedline'];
    const margin = o.marginDb === null ? 'no gateway in range' : `margin ${o.marginDb.toFixed(1)} dB`;
    lines.push(`${i + 1}. ${parts.join(' · ')}`, `   ${margin} · delivery ${(o.deliveryProbability * 100).toFixed(1)} % · ${o.price.totalUsd.toFixed(2)} USD · ${o.meetsTarget ? 'meets the target' : 'below the target'}`);
  });
  if (rec.options.length === 0) lines.push('(the catalog has no option for this node)');
  const notes = [...rec.advice, ...rec.warnings];
  if (notes.length > 0) lines.push('', ...notes.map((n) => `- ${n}`));
  if (rec.fittedCautions.length > 0) lines.push('', 'Cautions for the first option:', ...cautionLines(rec.fittedCautions).map((c) => `! ${c}`));
  lines.push('', rec.cautionsFooter);
  return lines.join('\n');
}
