// Exports of a plan for GIS tools and spreadsheets: GeoJSON, KML, the fleet CSV
// (one row per node) and the bill of materials CSV. Every figure comes from
// planFigures() (the link engine's fleet results), never recomputed here.
import type { PlanRow } from '../db/repositories/plans.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import { csvLines, type CsvValue } from '../report/csv.ts';
import { geoJsonChunks, kmlChunks, type PlanFeature } from '../report/features.ts';
import { planFigures, type NodeFigure, type PlanFigures } from './plan-figures.ts';

export type ExportFormat = 'geojson' | 'kml' | 'csv' | 'bom';

export const EXPORT_TYPES: Record<ExportFormat, { contentType: string; extension: string }> = {
  geojson: { contentType: 'application/geo+json; charset=utf-8', extension: 'geojson' },
  kml: { contentType: 'application/vnd.google-earth.kml+xml; charset=utf-8', extension: 'kml' },
  csv: { contentType: 'text/csv; charset=utf-8; header=present', extension: 'csv' },
  bom: { contentType: 'text/csv; charset=utf-8; header=present', extension: 'csv' },
};

const round = (v: number | null, digits: number) => (v === null ? null : Math.round(v * 10 ** digits) / 10 ** digits);

/** A file name of the plan's name (letters, digits, dashes) for Content-Disposition. */
export function exportFileName(plan: Pick<PlanRow, 'name' | 'id'>, suffix: string, extension: string): string {
  const base = plan.name.normalize('NFKD').replace(/[^\w-]+/g, '-').replace(/-+/g, '-').replace(/^-|-$/g, '').slice(0, 60).toLowerCase() || plan.id;
  return `${base}-${suffix}.${extension}`;
}

/** Every node, gateway and site as a feature with the figures a GIS user filters on. */
export function planFeatures(figures: PlanFigures): PlanFeature[] {
  const features: PlanFeature[] = [];
  for (const site of figures.sites) {
    features.push({ kind: 'site', id: site.id, name: site.name, lat: site.lat, lon: site.lon, properties: { siteKind: site.kind, costUsd: site.costUsd, maxAntennaHeightAglM: site.maxAntennaHeightAglM, hasGateway: site.hasGateway } });
  }
  for (const g of figures.gateways) {
    features.push({
      kind: 'gateway',
      id: g.id,
      name: g.name,
      lat: g.lat,
      lon: g.lon,
      properties: { siteId: g.siteId, nodesBestServed: g.bestServerOf, antennaDesignId: g.antennaDesignId, antennaName: g.antennaName, antennaHeightAglM: g.antennaHeightAglM, feedlineId: g.feedlineId, feedlineName: g.feedlineName, feedlineLengthM: g.feedlineLengthM, mastOptionId: g.mastOptionId, mastName: g.mastName, kitCostUsd: g.kitCostUsd },
    });
  }
  for (const n of figures.nodes) {
    features.push({
      kind: 'node',
      id: n.id,
      name: n.name,
      lat: n.lat,
      lon: n.lon,
      status: n.status,
      properties: {
        status: n.status,
        bestMarginDb: round(n.bestMarginDb, 2),
        deliveryProbability: round(n.combinedDeliveryProbability, 4),
        gatewaysHeard: n.gatewaysHeard,
        bestGatewayId: n.bestGatewayId,
        bestGatewayName: n.bestGatewayName,
        sf: n.sf,
        deviceType: n.deviceType,
        environment: n.environment,
        installStatus: n.installStatus,
        antennaDesignId: n.kit.antennaDesignId,
        antennaName: n.kit.antennaName,
        antennaHeightAglM: n.kit.antennaHeightAglM,
        feedlineId: n.kit.feedlineId,
        feedlineName: n.kit.feedlineName,
        feedlineLengthM: n.kit.feedlineLengthM,
        mastOptionId: n.kit.mastOptionId,
        mastName: n.kit.mastName,
        kitCostUsd: n.kit.costUsd,
      },
    });
  }
  return features;
}

/** The fleet CSV columns: one row per node, units in the headers. */
export const NODE_CSV_COLUMNS: ReadonlyArray<{ header: string; value: (n: NodeFigure) => CsvValue }> = [
  { header: 'node_id', value: (n) => n.id },
  { header: 'name', value: (n) => n.name },
  { header: 'lat_deg', value: (n) => n.lat },
  { header: 'lon_deg', value: (n) => n.lon },
  { header: 'device_type', value: (n) => n.deviceType },
  { header: 'environment', value: (n) => n.environment },
  { header: 'install_status', value: (n) => n.installStatus },
  { header: 'status', value: (n) => n.status },
  { header: 'best_margin_db', value: (n) => round(n.bestMarginDb, 2) },
  { header: 'delivery_probability', value: (n) => round(n.combinedDeliveryProbability, 4) },
  { header: 'gateways_heard', value: (n) => n.gatewaysHeard },
  { header: 'best_gateway_id', value: (n) => n.bestGatewayId },
  { header: 'best_gateway_name', value: (n) => n.bestGatewayName },
  { header: 'distance_m', value: (n) => round(n.distanceM, 0) },
  { header: 'rssi_dbm', value: (n) => round(n.rssiDbm, 1) },
  { header: 'snr_db', value: (n) => round(n.snrDb, 1) },
  { header: 'sf', value: (n) => n.sf },
  { header: 'time_on_air_ms', value: (n) => round(n.timeOnAirMs, 1) },
  { header: 'within_power_limit', value: (n) => n.legal },
  { header: 'messages_per_hour', value: (n) => n.messagesPerHour },
  { header: 'duty_cycle_messages_per_hour', value: (n) => round(n.dutyCycleMessagesPerHour, 1) },
  { header: 'antenna_design_id', value: (n) => n.kit.antennaDesignId },
  { header: 'antenna_name', value: (n) => n.kit.antennaName },
  { header: 'antenna_height_agl_m', value: (n) => n.kit.antennaHeightAglM },
  { header: 'feedline_id', value: (n) => n.kit.feedlineId },
  { header: 'feedline_name', value: (n) => n.kit.feedlineName },
  { header: 'feedline_length_m', value: (n) => n.kit.feedlineLengthM },
  { header: 'mast_option_id', value: (n) => n.kit.mastOptionId },
  { header: 'mast_name', value: (n) => n.kit.mastName },
  { header: 'kit_cost_usd', value: (n) => n.kit.costUsd },
  { header: 'warnings', value: (n) => n.warnings.join('; ') },
];

/** Text pieces of one export of the figures. */
export function* exportChunks(figures: PlanFigures, format: ExportFormat): Generator<string> {
  const title = `${figures.plan.name} (earshot plan ${figures.plan.id})`;
  switch (format) {
    case 'geojson':
      yield* geoJsonChunks(title, planFeatures(figures));
      return;
    case 'kml':
      yield* kmlChunks(title, planFeatures(figures));
      return;
    case 'csv':
      yield* csvLines(NODE_CSV_COLUMNS, figures.nodes);
      return;
    case 'bom': {
      const bom = figures.bom;
      const total = (name: string, costUsd: number) => ({ category: 'total', name, quantity: null, unit: null, unit_cost_usd: null, cost_usd: costUsd });
      const rows: Array<Record<string, CsvValue>> = [
        ...bom.lines.map((l) => ({ category: l.category, name: l.name, quantity: l.quantity, unit: l.unit, unit_cost_usd: l.unitCostUsd, cost_usd: l.costUsd })),
        total('Node kit (antennas, feedlines, connectors, masts and mounts)', bom.nodeKitCostUsd),
        total('Gateway kit (antennas, feedlines, connectors, masts)', bom.gatewayKitCostUsd),
        total('Kit cost (nodes and gateways)', bom.kitCostUsd),
        total('Total', bom.totalUsd),
      ];
      const headers = ['category', 'name', 'quantity', 'unit', 'unit_cost_usd', 'cost_usd'];
      yield* csvLines(headers.map((header) => ({ header, value: (row: Record<string, CsvValue>) => row[header] })), rows);
      return;
    }
  }
}

/** Figures and the export's pieces for a plan (the API route and the CLI both call this). */
export async function planExport(engine: LinkEngine, plan: PlanRow, format: ExportFormat): Promise<{ fileName: string; contentType: string; chunks: Iterable<string> }> {
  const figures = await planFigures(engine, plan);
  const type = EXPORT_TYPES[format];
  return { fileName: exportFileName(plan, format === 'bom' ? 'bom' : 'export', type.extension), contentType: type.contentType, chunks: exportChunks(figures, format) };
}
