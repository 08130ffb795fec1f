// The plan report: planFigures() (the fleet table's figures), a map rendered
// from the plan's elevation layers and the latest finished coverage run, and
// the PDF writer of server/report/pdf.ts. The API route and `earshot report`
// both call planReport().
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { latestDoneCoverageRun } from '../db/repositories/scenarios.ts';
import { allTerrainLayers } from '../db/repositories/terrain-layers.ts';
import { RESULT_FILES, resolveFilePath, resultDir, type CoverageJobParams } from '../jobs/coverage-job.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import { openGeoRaster, type GeoRaster } from '../terrain/raster.ts';
import { composeMapImage, fitView, paddedBox, renderMapTiles } from '../report/map.ts';
import { renderReportPdf, type ReportModel } from '../report/pdf.ts';
import { exportFileName } from './exports.ts';
import { planFigures, type PlanFigures } from './plan-figures.ts';

/** The map's raster size: about 2 pixels per point across the page's text width. */
const MAP_WIDTH_PX = 990;
const MAP_HEIGHT_PX = 1000;

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

async function openElevation(engine: LinkEngine, config: Config, planId: string): Promise<GeoRaster[]> {
  const rows = (await allTerrainLayers(engine.database, planId)).filter((row) => row.kind === 'elevation');
  const rasters: GeoRaster[] = [];
  for (const row of rows) {
    try {
      rasters.push(await openGeoRaster(resolveFilePath(config, row.filePath)));
    } catch {
      // An unreadable layer leaves the map without relief there; the link engine reports it in the warnings.
    }
  }
  return rasters;
}

async function latestMargin(engine: LinkEngine, config: Config, planId: string): Promise<{ raster: GeoRaster; description: string } | null> {
  const run = await latestDoneCoverageRun(engine.database, planId);
  if (!run) return null;
  const path = join(resultDir(config, run.id), RESULT_FILES.margin);
  if (!existsSync(path)) return null;
  const params = (run.params ?? {}) as Partial<CoverageJobParams>;
  const raster = await openGeoRaster(path).catch(() => null);
  if (!raster) return null;
  const when = run.finishedAt ? run.finishedAt.toISOString().slice(0, 16).replace('T', ' ') : '';
  const gateways = Array.isArray(run.gatewayIds) ? run.gatewayIds.length : 0;
  return { raster, description: `Coverage run ${run.id} (${params.mode ?? '?'} mode, ${gateways} gateway(s), radius ${params.radiusKm ?? '?'} km, SF${params.sf ?? '?'}, node antenna ${params.targetHeightM ?? '?'} m AGL), finished ${when} UTC.` };
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

export interface PlanReportOptions {
  onProgress?: (fraction: number) => void;
}

/** The report PDF of a plan and its file name. */
export async function planReport(engine: LinkEngine, config: Config, plan: PlanRow, options: PlanReportOptions = {}): Promise<{ fileName: string; pdf: Buffer; figures: PlanFigures }> {
  const figures = await planFigures(engine, plan, options.onProgress ? (x) => options.onProgress?.(x * 0.8) : undefined);
  const box = paddedBox([...figures.nodes, ...figures.gateways, ...figures.sites]);
  const elevation = await openElevation(engine, config, plan.id);
  const margin = await latestMargin(engine, config, plan.id);
  try {
    let map: ReportModel['map'] = null;
    if (box) {
      const view = fitView(box, MAP_WIDTH_PX, MAP_HEIGHT_PX);
      const tiles = await renderMapTiles(view, elevation, margin?.raster ?? null);
      map = { view, image: composeMapImage(view, tiles), coverage: margin?.description ?? null, terrain: figures.assumptions.terrain };
    }
    options.onProgress?.(0.9);
    const model: ReportModel = {
      title: `${plan.name}: coverage report`,
      plan: { id: plan.id, name: plan.name, description: plan.description, teamName: figures.plan.teamName },
      generatedAt: figures.generatedAt,
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
  } finally {
    await Promise.all([...elevation.map((r) => r.close()), margin?.raster.close()]);
  }
}
