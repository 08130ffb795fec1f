// The installer's visit sheet for one node: where it is, how to reach it,
// what to bring, the build sheet for a home-made antenna, mast height,
// expected readings, blanks for the measured RSSI/SNR, and cautions.
// JSON (?format=json) and printable HTML from the same document.
import { buildSheet, BuildSheetError, type BuildSheet } from '../radio/build-sheets.ts';
import { installCautions, percentileRange, type ExpectedRange } from '../planning/check.ts';
import type { NodeRecommendation } from './recommend.ts';
import type { NodeLinksOutcome, PlanContext } from '../jobs/link-engine.ts';

export interface VisitSheet {
  title: string;
  generatedAt: string;
  plan: { id: string; name: string; bandPlan: string; frequencyMhz: number };
  node: { id: string; name: string; deviceType: string; lat: number; lon: number; environment: string; installStatus: string; accessNotes: string };
  status: string;
  combinedDeliveryProbability: number;
  kit: {
    antenna: { id: string; name: string; homemade: boolean; gainDbi: number };
    feedline: { id: string; name: string; lengthM: number } | null;
    antennaHeightAglM: number;
    mastOptionId: string | null;
    meetsTarget: boolean;
    recommended: { antennaDesignId: string; mastHeightM: number; feedlineId: string | null; feedlineLengthM: number; cost: number; reason: string } | null;
  };
  buildSheet: BuildSheet | null;
  gateways: Array<{ id: string; name: string; distanceM: number; aimAzimuthDeg: number; elevationDeg: number; sf: number; expectedRssiDbm: ExpectedRange; expectedSnrDb: ExpectedRange; sigmaDb: number; marginDb: number }>;
  measurements: Array<{ gatewayId: string; gatewayName: string; sf: number; measuredRssiDbm: null; measuredSnrDb: null; time: null }>;
  cautions: string[];
  warnings: string[];
}

export function visitSheet(ctx: PlanContext, outcome: NodeLinksOutcome, recommendation: NodeRecommendation | null): VisitSheet {
  const node = outcome.node;
  const row = node.row;
  let sheet: BuildSheet | null = null;
  const warnings = [...node.warnings];
  const designId = node.antenna.buildSheetId;
  if (node.antenna.homemade && designId) {
    try {
      sheet = buildSheet(designId, ctx.settings.frequencyMhz);
    } catch (error) {
      if (!(error instanceof BuildSheetError)) throw error;
      warnings.push(`build sheet: ${error.message}`);
    }
  }
  const gatewayName = new Map(ctx.gateways.map((g) => [g.row.id, g.row.name]));
  const meets = outcome.status === 'served';
  const first = recommendation?.options[0] ?? null;
  return {
    title: `Visit sheet: ${row.name}`,
    generatedAt: new Date().toISOString(),
    plan: { id: ctx.plan.id, name: ctx.plan.name, bandPlan: ctx.settings.bandPlan.name, frequencyMhz: ctx.settings.frequencyMhz },
    node: { id: row.id, name: row.name, deviceType: row.deviceType, lat: row.lat, lon: row.lon, environment: row.environment, installStatus: row.installStatus === 'needs_visit' ? 'needs-visit' : row.installStatus, accessNotes: row.notes },
    status: outcome.status,
    combinedDeliveryProbability: outcome.combinedDeliveryProbability,
    kit: {
      antenna: { id: node.antenna.id, name: node.antenna.name, homemade: node.antenna.homemade, gainDbi: node.antenna.gainDbi },
      feedline: node.feedline ? { id: node.feedline.id, name: node.feedline.name, lengthM: node.kit.feedlineLengthM } : null,
      antennaHeightAglM: node.antennaHeightAglM,
      mastOptionId: row.mastOptionId,
      meetsTarget: meets,
      recommended: !meets && first ? { antennaDesignId: first.antennaDesignId, mastHeightM: first.mastHeightM, feedlineId: first.feedlineId, feedlineLengthM: first.feedlineLengthM, cost: first.cost, reason: first.reason } : null,
    },
    buildSheet: sheet,
    gateways: outcome.links.map((link) => ({
      id: link.gatewayId,
      name: gatewayName.get(link.gatewayId) ?? link.gatewayId,
      distanceM: link.distanceM,
      aimAzimuthDeg: link.nodeAzimuthDeg,
      elevationDeg: link.nodeElevationDeg,
      sf: link.usedSf,
      expectedRssiDbm: percentileRange(link.rssiDbm, link.sigmaDb),
      expectedSnrDb: percentileRange(link.snrDb, link.sigmaDb),
      sigmaDb: link.sigmaDb,
      marginDb: link.marginDb,
    })),
    measurements: outcome.links.map((link) => ({ gatewayId: link.gatewayId, gatewayName: gatewayName.get(link.gatewayId) ?? link.gatewayId, sf: link.usedSf, measuredRssiDbm: null, measuredSnrDb: null, time: null })),
    cautions: installCautions(ctx.settings.bandPlan.cautions),
    warnings,
  };
}

function esc(value: unknown): string {
  return String(value ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

const dec = (value: number, digits = 1) => (Number.isFinite(value) ? value.toFixed(digits) : '—');

/** Printable HTML of a visit sheet (no scripts, no external resources). */
export function visitSheetHtml(sheet: VisitSheet): string {
  const k = sheet.kit;
  const rows = sheet.gateways
    .map((g) => `<tr><td>${esc(g.name)}</td><td>${dec(g.distanceM / 1000, 2)} km</td><td>${dec(g.aimAzimuthDeg, 0)}°</td><td>SF${g.sf}</td><td>${dec(g.expectedRssiDbm.p10)} … ${dec(g.expectedRssiDbm.p90)} dBm</td><td>${dec(g.expectedSnrDb.p10)} … ${dec(g.expectedSnrDb.p90)} dB</td><td>${dec(g.marginDb)} dB</td></tr>`)
    .join('');
  const blanks = sheet.measurements.map((m) => `<tr><td>${esc(m.gatewayName)}</td><td>SF${m.sf}</td><td class="blank"></td><td class="blank"></td><td class="blank"></td></tr>`).join('');
  const build = sheet.buildSheet
    ? `<h2>Build sheet: ${esc(sheet.buildSheet.designName)} at ${dec(sheet.buildSheet.frequencyMhz, 1)} MHz</h2><table><tr><th>Element</th><th>Count</th><th>Length</th></tr>${sheet.buildSheet.elements.map((e) => `<tr><td>${esc(e.name)}</td><td>${e.count}</td><td>${dec(e.lengthMm, 1)} mm (${dec(e.lengthIn, 3)} in)</td></tr>`).join('')}</table><ul>${sheet.buildSheet.notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>`
    : '';
  const recommended = k.recommended
    ? `<p class="warn">The current kit does not meet the plan's target. Recommended: ${esc(k.recommended.antennaDesignId)} at ${dec(k.recommended.mastHeightM)} m, feedline ${esc(k.recommended.feedlineId ?? 'none')} ${k.recommended.feedlineId ? `${dec(k.recommended.feedlineLengthM)} m` : ''} (cost ${dec(k.recommended.cost, 2)}): ${esc(k.recommended.reason)}</p>`
    : '';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${esc(sheet.title)}</title>
<style>
body{font-family:system-ui,sans-serif;margin:1.5cm;color:#111}h1{font-size:1.4em}h2{font-size:1.1em;margin-top:1.2em}
table{border-collapse:collapse;width:100%;margin:.4em 0}td,th{border:1px solid #888;padding:.25em .4em;text-align:left;font-size:.9em}
td.blank{height:1.6em;min-width:5em}.warn{border-left:4px solid #b00;padding-left:.5em}.cautions li{margin:.2em 0}
@media print{body{margin:1cm}}
</style></head><body>
<h1>${esc(sheet.title)}</h1>
<p>Plan ${esc(sheet.plan.name)} · ${esc(sheet.plan.bandPlan)} · ${dec(sheet.plan.frequencyMhz, 1)} MHz · generated ${esc(sheet.generatedAt)}</p>
<h2>Where</h2>
<p>${esc(sheet.node.name)} (${esc(sheet.node.deviceType)}) at ${dec(sheet.node.lat, 6)}, ${dec(sheet.node.lon, 6)} · ${esc(sheet.node.environment)} · status ${esc(sheet.node.installStatus)}</p>
<p><strong>Access notes:</strong> ${esc(sheet.node.accessNotes || 'none recorded')}</p>
<h2>What to bring</h2>
<ul><li>Antenna: ${esc(k.antenna.name)} (${dec(k.antenna.gainDbi)} dBi)${k.antenna.homemade ? ' — home-made, see the build sheet' : ''}</li>
<li>Feedline: ${k.feedline ? `${esc(k.feedline.name)}, ${dec(k.feedline.lengthM)} m` : 'none (radio at the antenna)'}</li>
<li>Antenna height above ground: ${dec(k.antennaHeightAglM)} m${k.mastOptionId ? ` (mast ${esc(k.mastOptionId)})` : ''}</li></ul>
${recommended}
${build}
<h2>Expected readings (10th–90th percentile)</h2>
<p>Predicted status: <strong>${esc(sheet.status)}</strong>, probability that at least one gateway hears a message ${dec(sheet.combinedDeliveryProbability * 100)} %.</p>
<table><tr><th>Gateway</th><th>Distance</th><th>Aim (from north)</th><th>SF</th><th>RSSI</th><th>SNR</th><th>Margin</th></tr>${rows}</table>
<h2>Measured on site</h2>
<table><tr><th>Gateway</th><th>SF</th><th>RSSI (dBm)</th><th>SNR (dB)</th><th>Time</th></tr>${blanks}</table>
<h2>Cautions</h2>
<ul class="cautions">${sheet.cautions.map((c) => `<li>${esc(c)}</li>`).join('')}</ul>
${sheet.warnings.length ? `<h2>Notes</h2><ul>${sheet.warnings.map((w) => `<li>${esc(w)}</li>`).join('')}</ul>` : ''}
</body></html>
`;
}
