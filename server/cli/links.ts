// `earshot link` and `earshot recommend`: the same numbers as the API, for scripts.
// The database is opened the way the admin commands do it (server/cli/admin.ts):
// DATABASE_URL directly; an embedded data folder only when no process holds it
// (openDatabase takes the pid lock), so a PGlite folder is never opened twice.
// While a server runs on the folder, these commands say so and point at the API.
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import { dataFolderHolder, openDatabase, type Database } from '../db/client.ts';
import { findPlanById } from '../db/repositories/links.ts';
import { LinkEngine, LinkInputError } from '../api/routes/links-service.ts';
import { nodeLinksView } from '../api/routes/links.ts';
import { recommendForNode } from '../api/routes/recommend.ts';
import { PlanSettingsError } from '../planning/settings.ts';
import { CliUsageError, defineCommand, numberOption, stringOption, type CliCommand } from './framework.ts';

async function withEngine<T>(run: (engine: LinkEngine, db: Database) => Promise<T>): Promise<T> {
  const config = loadConfig(process.env);
  if (!config.databaseUrl) {
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      const adminPath = join(config.dataDir, 'admin.json');
      let where = '';
      if (existsSync(adminPath)) {
        try {
          const admin = JSON.parse(readFileSync(adminPath, 'utf8')) as { host?: string; port?: number };
          where = ` at http://${admin.host ?? '127.0.0.1'}:${admin.port ?? 8080}/api/v1`;
        } catch {
          where = '';
        }
      }
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder}; ask the running server${where} (GET /plans/PLAN/nodes/NODE/links with a token from "earshot token issue") or stop it first`);
    }
  }
  const db = await openDatabase(config);
  const engine = new LinkEngine(db, config);
  try {
    return await run(engine, db);
  } catch (error) {
    if (error instanceof LinkInputError || error instanceof PlanSettingsError) throw new CliUsageError(error.message);
    throw error;
  } finally {
    await engine.close();
    await db.close();
  }
}

async function planContextFor(engine: LinkEngine, db: Database, planId: string) {
  const plan = await findPlanById(db, planId);
  if (!plan) throw new CliUsageError(`--plan: no plan "${planId}"`);
  return engine.planContext(plan);
}

export const linkCommands: CliCommand[] = [
  defineCommand({
    words: 'link',
    summary: "A node's predicted links to the plan's gateways (--plan ID --node ID [--gateway ID])",
    options: z.strictObject({ plan: stringOption(), node: stringOption(), gateway: stringOption().optional() }),
    async run(options) {
      return withEngine(async (engine, db) => {
        const ctx = await planContextFor(engine, db, options.plan);
        if (options.gateway && !ctx.gateways.some((g) => g.row.id === options.gateway)) throw new CliUsageError(`--gateway: no gateway "${options.gateway}" in plan ${options.plan}`);
        const outcome = await engine.linksForNode(ctx, options.node).catch((error: unknown) => {
          if (error instanceof LinkInputError && error.statusCode === 404) throw new CliUsageError(`--node: no node "${options.node}" in plan ${options.plan}`);
          throw error;
        });
        const view = nodeLinksView(ctx, outcome);
        if (!options.gateway) return view;
        const links = view.links.filter((link) => link.gatewayId === options.gateway);
        if (links.length === 0) throw new CliUsageError(`--gateway: gateway "${options.gateway}" is beyond ${(ctx.settings.maxLinkRangeM / 1000).toFixed(0)} km of the node`);
        return { ...view, links };
      });
    },
    formatText: (result) => {
      const view = result as ReturnType<typeof nodeLinksView>;
      const lines = view.links.map((l) => `${(l.gatewayName ?? l.gatewayId).padEnd(20)} ${(l.distanceM / 1000).toFixed(2).padStart(7)} km  loss ${l.basicLossDb.toFixed(1)} dB  RSSI ${l.rssiDbm.toFixed(1)} dBm  SNR ${l.snrDb.toFixed(1)} dB  margin ${l.marginDb.toFixed(1)} dB  SF${l.bestSf ?? '–'}  delivery ${(l.deliveryProbability * 100).toFixed(1)} %`);
      return [...lines, `status ${view.status}, at least one gateway hears it ${(view.combinedDeliveryProbability * 100).toFixed(1)} %`].join('\n');
    },
  }),
  defineCommand({
    words: 'recommend',
    summary: 'Kit options for a node, cheapest meeting the target first (--plan ID --node ID [--target-margin-db N] [--target-delivery P] [--max-cost N])',
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
      return withEngine(async (engine, db) => {
        const ctx = await planContextFor(engine, db, options.plan);
        const row = await engine.nodeRow(ctx, options.node).catch(() => {
          throw new CliUsageError(`--node: no node "${options.node}" in plan ${options.plan}`);
        });
        return recommendForNode(engine, ctx, row, { targetMarginDb: options['target-margin-db'], targetDelivery: options['target-delivery'], maxCost: options['max-cost'] });
      });
    },
  }),
];
