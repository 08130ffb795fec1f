// `earshot plans` and `earshot nodes --plan ID`: ids and names to feed `link`, `recommend`
// and scripts. Reached like the admin commands (server/cli/admin.ts): DATABASE_URL directly,
// the running server's loopback route when it holds the embedded folder, else the folder itself.
import { z } from 'zod';
import { loadConfig } from '../config.ts';
import { dataFolderHolder, openDatabase } from '../db/client.ts';
import { NotFoundError } from '../db/errors.ts';
import { listNodesForAdmin, listPlansForAdmin, type NodeListItem, type PlanListItem } from '../app/fleet-lists.ts';
import { CliUsageError, defineCommand, stringOption, type CommandDefinition } from './framework.ts';
import { callRunningServer, readRunningServer } from './running-server.ts';

type ListOperation = 'plans-list' | 'nodes-list';

async function runListOperation(operation: ListOperation, body: Record<string, unknown>): Promise<unknown> {
  const config = loadConfig();
  if (!config.databaseUrl) {
    const holder = dataFolderHolder(config.dataDir);
    if (holder !== null) {
      const server = readRunningServer(config);
      const answer = server ? await callRunningServer(server, operation, body, 30_000) : null;
      if (answer !== null) return answer;
      throw new CliUsageError(`the data folder ${config.dataDir} is in use by process ${holder} and no server answers for it; wait and retry`);
    }
  }
  const db = await openDatabase(config);
  try {
    return operation === 'plans-list' ? await listPlansForAdmin(db, body as never) : await listNodesForAdmin(db, body as never);
  } catch (error) {
    if (error instanceof NotFoundError) throw new CliUsageError(error.message);
    throw error;
  } finally {
    await db.close();
  }
}

export const fleetListCommands: CommandDefinition[] = [
  defineCommand({
    words: 'plans',
    options: z.strictObject({ team: stringOption().optional().describe('only this team (slug)') }),
    examples: ['earshot plans', 'earshot plans --team demo --json'],
    run: (options) => runListOperation('plans-list', options.team ? { team: options.team } : {}),
    formatText: (result) => {
      const { items } = result as { items: PlanListItem[] };
      if (items.length === 0) return 'no plans';
      return items.map((p) => `${p.id}  ${p.name}  (team ${p.team}; ${p.nodes} nodes, ${p.gateways} gateways)`).join('\n');
    },
  }),
  defineCommand({
    words: 'nodes',
    options: z.strictObject({ plan: stringOption().describe('plan id (see earshot plans)') }),
    examples: ['earshot nodes --plan <plan id from earshot plans>'],
    run: (options) => runListOperation('nodes-list', { plan: options.plan }),
    formatText: (result) => {
      const view = result as { plan: { name: string }; items: NodeListItem[]; gateways: Array<{ id: string; name: string }> };
      const nodes = view.items.map((n) => `${n.id}  ${n.name}  (${n.lat.toFixed(5)}, ${n.lon.toFixed(5)}; ${n.installStatus})`);
      const gateways = view.gateways.map((g) => `${g.id}  ${g.name}`);
      return [`plan ${view.plan.name}: ${view.items.length} nodes`, ...nodes, '', `gateways: ${view.gateways.length}`, ...gateways].join('\n');
    },
  }),
];
