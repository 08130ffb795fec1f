// The command index: every command's words and one-line summary, and the module that
// defines it. The dispatcher (server/cli.ts) lists commands from here and imports a
// command's module only when that command runs (or its --help is asked), so `earshot
// airtime` never loads the database, Fastify, turf or geotiff. Each module is imported by
// a literal `import()` (the compiled build rewrites the `.ts` specifiers).
// test/unit/foundation/cli-help.test.ts checks that index and modules agree both ways.
import type { CliCommand, CommandDefinition } from './framework.ts';

type Loader = () => Promise<CommandDefinition[]>;

const admin: Loader = async () => (await import('./admin.ts')).adminCommands;
const radio: Loader = async () => (await import('./radio.ts')).radioCommands;
const terrain: Loader = async () => (await import('./terrain.ts')).terrainCommands;
const propagation: Loader = async () => (await import('./propagation.ts')).propagationCommands;
const links: Loader = async () => (await import('./links.ts')).linkCommands;
const coverage: Loader = async () => (await import('./coverage.ts')).coverageCommands;
const fleetLists: Loader = async () => (await import('./fleet-lists.ts')).fleetListCommands;
const capacity: Loader = async () => (await import('./capacity.ts')).capacityCommands;
const reports: Loader = async () => (await import('./reports.ts')).reportCommands;
const tuning: Loader = async () => (await import('./tuning.ts')).tuningCommands;
const siting: Loader = async () => (await import('./siting.ts')).sitingCommands;

export interface CommandEntry {
  words: string;
  summary: string;
  load: Loader;
}

export const commandIndex: CommandEntry[] = [
  { words: 'team add', summary: 'Add a team (--slug, --name)', load: admin },
  { words: 'token issue', summary: 'Issue an API token, or with --link a one-time sign-in link for a teammate', load: admin },
  { words: 'token revoke', summary: 'Revoke a token (--token <token> or --id <id>)', load: admin },
  { words: 'airtime', summary: 'LoRa time on air of one frame (SX1276 §4.1.1.6 / SX1261 §6.1.4)', load: radio },
  { words: 'sensitivity', summary: 'LoRa receiver sensitivity, noise floor and SNR floor for an SF and bandwidth', load: radio },
  { words: 'mismatch', summary: 'Reflection coefficient, return loss and mismatch loss from VSWR', load: radio },
  { words: 'build-sheet', summary: 'Cut lengths and tuning advice for a hand-built antenna (--design ID: `earshot build-sheet --help` names the designs)', load: radio },
  { words: 'bands', summary: 'Band plans with their power, duty-cycle and dwell-time limits and LoRaWAN channel plans', load: radio },
  { words: 'battery', summary: 'Battery life estimate for a node, with its assumptions', load: radio },
  { words: 'profile', summary: 'terrain profile along the geodesic between two positions', load: terrain },
  { words: 'terrain upload', summary: 'Upload a GeoTIFF terrain layer to a plan through the running server (--plan ID --file F.tif [--kind elevation|clutter] [--name TEXT])', load: terrain },
  { words: 'predict-path', summary: 'Path loss and field strength over one profile (ITU-R P.1812-8, Bullington, knife-edge, Deygout, free space)', load: propagation },
  { words: 'link', summary: "A node's predicted links to the plan's gateways (--plan ID --node ID [--gateway ID])", load: links },
  { words: 'recommend', summary: 'Kit options for a node, cheapest meeting the target first (--plan ID --node ID [--target-margin-db N] [--target-delivery P] [--max-cost N])', load: links },
  { words: 'coverage', summary: 'area prediction for one gateway on a DEM: los | fast | full → GeoTIFF', load: coverage },
  { words: 'plans', summary: 'List plans with their ids, teams and sizes', load: fleetLists },
  { words: 'nodes', summary: "List a plan's nodes (and gateways) with ids and names", load: fleetLists },
  { words: 'capacity', summary: 'Airtime, offered load, collision survival and duty-cycle budget of node groups at one gateway (--input FILE|-)', load: capacity },
  { words: 'report', summary: "A plan's PDF report: cover, map, service, redundancy, risks, bill of materials, cautions (--plan ID --out FILE.pdf)", load: reports },
  { words: 'export', summary: 'A plan as GeoJSON, KML, the fleet CSV or the bill of materials CSV (--plan ID --format geojson|kml|csv|bom --out FILE)', load: reports },
  { words: 'tune', summary: 'Antenna tuning from a VSWR sweep (--s1p FILE or --csv FILE, --band ID, --design ID --length-mm L)', load: tuning },
  {
    words: 'siting',
    summary: 'Fewest (or cheapest) gateways so every node is heard by k of them (--plan ID --k 1|2|3 [--terrain-points N] [--no-sites] [--keep-existing] [--budget-usd B] [--max-gateways G] [--max-nodes-per-gateway M] [--minimise gateways|cost])',
    load: siting,
  },
];

/** The index entry for these command words, or undefined. */
export function findEntry(words: string): CommandEntry | undefined {
  return commandIndex.find((entry) => entry.words === words);
}

/** Imports the entry's module and returns its command, with the index's summary. */
export async function loadCommand(entry: CommandEntry): Promise<CliCommand> {
  const definition = (await entry.load()).find((candidate) => candidate.words === entry.words);
  if (!definition) throw new Error(`the command index names "${entry.words}" but its module does not define it`);
  return { ...definition, summary: entry.summary };
}

/** Every command, loaded (tests and tools; the dispatcher loads one). */
export async function loadAllCommands(): Promise<CliCommand[]> {
  return Promise.all(commandIndex.map(loadCommand));
}

/** Every loader of the index once (tests: a module's commands must all be indexed). */
export const commandModules: Loader[] = [admin, radio, terrain, propagation, links, coverage, fleetLists, capacity, reports, tuning, siting];
