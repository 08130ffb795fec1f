// The plan report: planFigures() (the fleet table's figures), a map rendered
// from the plan's elevation layers and the latest finished coverage run, and
// the PDF writer of server/report/pdf.ts. The API route and `earshot report`
// both call planReport().
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { latestDoneCoverageRun, planPositions } from '../db/repositories/scenarios.ts';
import { allTerrainLayers } from '../db/repositories/terrain-layers.ts';
import type { CoverageJobParams } from '../jobs/coverage-params.ts';
import { RESULT_FILES, resolveStoredFile, resultDir } from '../db/files.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import { renderMapInWorker } from '../jobs/map-worker.ts';
import { fitView, paddedBox } from '../report/map.ts';
import { isTimeZone, MAX_RISK_NAMES, renderReportPdf, reportTime, type ReportModel } from '../report/pdf.ts';
import { AppError } from './errors.ts';
import { exportFileName } from './exports.ts';
import { planFigures, type PlanFigures } from './plan-figures.ts';

/** The map's raster size: about 2 pixels per point across the page's text width. */
const MAP_WIDTH_PX = 990;
const MAP_HEIGHT_PX = 1000;
/**
 * Decoded file tiles each map raster keeps while the map is drawn: a map tile reads the 2 × 2
 * file tiles under it and its neighbours share them, so two rows of file tiles across the
 * ~5-tile-wide view (≤ 16 at 256 × 256 × 4 bytes, 4 MB) let each be decoded once, not ~4 times.
 */
const MAP_DECODED_TILES = 16;

const PROPAGATION_SOURCES: Record<string, string> = {
  p1812: 'ITU-R P.1812 path-specific method (terrain profile, diffraction, clutter)',
  bullington: 'ITU-R P.526 Bullington diffraction over the terrain profile',
  deygout: 'ITU-R P.526 Deygout multiple knife-edge diffraction',
  'free-space': 'ITU-R P.525 free-space loss',
};

function basisOf(f: PlanFigures): Array<[string, string]> {
  const a = f.assumptions;
  return [
    ['Band plan', `${a.bandPlanName} (${a.bandPlanId})`],
    ['Uplink channel', `${a.frequencyMhz} MHz, ${a.bandwidthKhz} kHz, CR ${a.codingRate}`],
    ['Propagation method', `${a.method}: ${PROPAGATION_SOURCES[a.method] ?? 'see the propagation room'}`],
    ['Location variability σ', `${a.sigmaDb.toFixed(1)} dB (${a.sigmaSource})`],
    ['Target', `margin ≥ ${a.targetMarginDb} dB and delivery ≥ ${(a.targetDelivery * 100).toFixed(0)} %`],
    ['Terrain', a.terrain],
  ];
}

function assumptionsOf(f: PlanFigures): Array<[string, string]> {
  const a = f.assumptions;
  return [
    ['Status rule', a.statusRule],
    ['Delivery over gateways', `probability that at least one gateway receives: 1 − Π(1 − p_i), gateways independent; correlation ρ = ${a.gatewayCorrelation}`],
    ['Location variability σ', `${a.sigmaDb.toFixed(1)} dB: ${a.sigmaSource}`],
    ['Power limit', a.maxEirpDbm === null ? a.limitSource : `${a.maxEirpDbm.toFixed(1)} dBm EIRP: ${a.limitSource}`],
    ['Range considered', `gateways within ${a.maxLinkRangeKm} km of a node`],
    ['Propagation', `${a.method}: ${PROPAGATION_SOURCES[a.method] ?? a.method}`],
    ['Redundancy', 'gateways hearing a node with margin ≥ 0 dB at the SF it uses'],
    ['Duty cycle', 'messages per hour the band plan’s duty-cycle rule allows at the SF used (no rule: no limit)'],
    ['Kit prices', 'catalog prices (built-in illustrative list prices or the team’s own), not quotes'],
  ];
}

async function elevationPaths(engine: LinkEngine, config: Config, planId: string): Promise<string[]> {
  const rows = (await allTerrainLayers(engine.database, planId)).filter((row) => row.kind === 'elevation');
  return rows.map((row) => resolveStoredFile(config, row.filePath));
}

/** The latest finished coverage run's margin raster file and the words the map's caption gives it; null: no run or no file. */
async function latestMargin(engine: LinkEngine, config: Config, planId: string, timeZone: string | null): Promise<{ path: string; description: string } | null> {
  const run = await latestDoneCoverageRun(engine.database, planId);
  if (!run) return null;
  const path = join(resultDir(config, run.id), RESULT_FILES.margin);
  if (!existsSync(path)) return null;
  const params = (run.params ?? {}) as Partial<CoverageJobParams>;
  const when = run.finishedAt ? reportTime(run.finishedAt, timeZone) : 'at an unrecorded time';
  const gateways = Array.isArray(run.gatewayIds) ? run.gatewayIds.length : 0;
  return { path, description: `Coverage run ${run.id} (${params.mode ?? '?'} mode, ${gateways} gateway(s), radius ${params.radiusKm ?? '?'} km, SF${params.sf ?? '?'}, node antenna ${params.targetHeightM ?? '?'} m AGL), finished ${when}.` };
}

function capacityRows(f: PlanFigures): Array<[string, string]> | null {
  const c = f.capacity;
  if (!c) return null;
  return [
    ['Uplink channels', String(c.channels)],
    ['Mean delivery ratio (links and collisions)', `${(c.meanDeliveryRatio * 100).toFixed(1)} %`],
    ['Mean link delivery (collisions aside)', `${(c.meanLinkDeliveryProbability * 100).toFixed(1)} %`],
    ['Nodes over the duty-cycle or dwell budget', String(c.overBudgetNodes)],
    ...c.gateways.map((g): [string, string] => [`Gateway ${g.name}`, `${g.nodes} nodes heard, offered load ${g.offeredLoadErlang.toFixed(3)} erlang, downlink airtime ${(g.downlinkAirtimeShare * 100).toFixed(2)} %`]),
  ];
}

const SOURCE_WORDS: Record<string, string> = { site: 'site', terrain: 'terrain point', gateway: 'existing gateway' };

/** The latest siting run's answer as the report shows it (chosen sites by name, k, cost, optimality, uncovered nodes by name). */
function sitingSection(f: PlanFigures, timeZone: string | null): ReportModel['siting'] {
  const r = f.siting;
  if (!r) return null;
  const usd = (v: number) => `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`;
  const optimality = r.optimal ? 'optimal (proven by the solver)' : r.status === 'feasible' ? `feasible, not proven optimal${r.gapPercent === null ? '' : ` (gap ${r.gapPercent.toFixed(2)} %)`}` : 'infeasible: no choice of candidates meets the request';
  const state = r.appliedAt ? `applied ${reportTime(r.appliedAt, timeZone)}` : 'not applied';
  const summary: Array<[string, string]> = [
    ['Run', `${r.runId}, finished ${r.finishedAt ? reportTime(r.finishedAt, timeZone) : 'at an unrecorded time'}; ${state}`],
    ['Gateways each node needs (k)', String(r.requiredGateways)],
    ['Chosen', `${r.objective.gateways} gateway(s), ${usd(r.objective.costUsd)} (minimising ${r.minimise})`],
    ['Result', `${optimality}; solver ${r.solver}`],
    ['Nodes coverable', `${r.nodesCoverable} of ${r.nodesTotal}`],
    ['Greedy choice for comparison', `${r.greedy.gateways} gateway(s), ${usd(r.greedy.costUsd)}, ${r.greedy.nodesCovered} nodes covered`],
    ['Gateways in the plan', `${r.before.gateways} before, ${r.after.gateways} after applying`],
  ];
  if (r.shortOfRequired.length) summary.push(['Heard by fewer than k candidates', `${r.shortOfRequired.length} node(s), e.g. ${r.shortOfRequired.slice(0, 5).map((n) => n.name).join(', ')}`]);
  const shown = r.uncovered.slice(0, MAX_RISK_NAMES);
  const notes = [
    'From the siting run as it was solved (the siting use case’s stored answer, not solved again for this report).',
    r.planChangedSince ? 'The plan’s nodes, gateways, sites, terrain or settings changed since this run: its answer may no longer hold (start a new run to refresh it).' : 'The plan is unchanged since this run.',
    ...(r.message ? [r.message] : []),
    ...r.warnings.slice(0, 5),
  ];
  return {
    summary,
    selected: r.selected.map((x) => [String(x.rank), `${x.name} (${SOURCE_WORDS[x.source] ?? x.source}${x.kept ? ', kept' : ''})`, `${x.antennaHeightAglM.toFixed(1)} m AGL`, usd(x.costUsd), String(x.nodesHeard), String(x.nodesOnlyHere)]),
    uncovered: shown.map((u) => [u.name, u.reason]),
    uncoveredMore: r.uncovered.length - shown.length,
    note: notes.join(' '),
  };
}

export interface PlanReportOptions {
  onProgress?: (fraction: number) => void;
  /** IANA time zone for the printed times (the viewer's); default UTC. */
  timeZone?: string | null;
}

/** The report PDF of a plan and its file name. */
export async function planReport(engine: LinkEngine, config: Config, plan: PlanRow, options: PlanReportOptions = {}): Promise<{ fileName: string; pdf: Buffer; figures: PlanFigures }> {
  const timeZone = options.timeZone ?? null;
  if (timeZone !== null && !isTimeZone(timeZone)) throw new AppError('invalid_input', 'invalid_input', `tz: "${timeZone}" is not an IANA time zone (such as Europe/Berlin)`);
  // The map first, from the plan's positions alone, then the fleet pass. The map is drawn in a
  // thread of its own (server/jobs/map-worker.ts) whose raster buffers are all released when it
  // ends, so none of them is still resident under the fleet's and the PDF's peaks (the 5,000-node
  // bench: npm run bench -- report).
  let map: ReportModel['map'] = null;
  const box = paddedBox(await planPositions(engine.database, plan.id));
  if (box) {
    const margin = await latestMargin(engine, config, plan.id, timeZone);
    const view = fitView(box, MAP_WIDTH_PX, MAP_HEIGHT_PX);
    const drawn = await renderMapInWorker({ view, elevationPaths: await elevationPaths(engine, config, plan.id), marginPath: margin?.path ?? null, decodedTileCache: MAP_DECODED_TILES });
    map = { view, image: drawn.png, coverage: drawn.marginShown ? (margin?.description ?? null) : null, terrain: '' };
  }
  options.onProgress?.(0.1);
  const figures = await planFigures(engine, plan, options.onProgress ? (x) => options.onProgress?.(0.1 + x * 0.8) : undefined);
  if (map) map.terrain = figures.assumptions.terrain;
  options.onProgress?.(0.9);
  const model: ReportModel = {
    title: `${plan.name}: coverage report`,
    plan: { id: plan.id, name: plan.name, description: plan.description, teamName: figures.plan.teamName },
    generatedAt: figures.generatedAt,
    timeZone,
    basis: basisOf(figures),
    counts: figures.counts,
    redundancy: figures.redundancy,
    nodes: figures.nodes,
    gateways: figures.gateways,
    sites: figures.sites,
    map,
    capacity: capacityRows(figures),
    capacityNote: figures.capacity
      ? `Model: ${figures.capacity.method}. ${figures.capacity.cautions.join(' ')} Sources: ${figures.capacity.sources.join('; ')}.`
      : 'No capacity figures: the plan has no gateway (or no node) to load. The duty-cycle check per node (band plan rule, at the SF used) is in the risk list.',
    siting: sitingSection(figures, timeZone),
    risks: [
      { title: 'Unserved nodes', explanation: 'Best margin below 0 dB: messages get through less than half the time.', entries: figures.risks.unserved },
      { title: 'Heard by a single gateway', explanation: 'One gateway hears these nodes with margin ≥ 0 dB: a fault or outage at that gateway loses them.', entries: figures.risks.singleGateway },
      { title: 'Illegal configurations', explanation: `Radiated power above the ${figures.assumptions.bandPlanName} limit on at least one link: reduce transmit power or antenna gain.`, entries: figures.risks.illegal },
      { title: 'Over the duty cycle', explanation: figures.capacity ? 'More messages per hour than the band plan’s duty-cycle (or dwell-time) budget allows at the SF the node uses (capacity engine).' : 'More messages per hour than the band plan’s duty-cycle rule allows at the SF the node uses.', entries: figures.risks.overDutyCycle },
    ],
    bom: figures.bom,
    assumptions: assumptionsOf(figures),
    warnings: figures.warnings,
    cautions: figures.cautions,
  };
  const pdf = await renderReportPdf(model);
  options.onProgress?.(1);
  return { fileName: exportFileName(plan, 'report', 'pdf'), pdf, figures };
}
