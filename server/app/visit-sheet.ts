// The installer's visit sheet for one node: where it is, how to reach it,
// what to bring, the build sheet for a home-made antenna, mast height,
// expected readings, blanks for the measured RSSI/SNR, and cautions.
// JSON (?format=json) and printable HTML from the same document.
import { buildSheet, BuildSheetError, type BuildSheet } from '../radio/build-sheets.ts';
import { installCautions, percentileRange, type ExpectedRange } from '../planning/check.ts';
import type { NodeRecommendation } from './recommend.ts';
import type { NodeLinksOutcome, PlanContext } from '../jobs/link-engine.ts';
import { nodeKitPrice, type NodeKitPrice } from './kit-price.ts';
import { STATUS_WORDS, statusPhrase, type LinkStatus } from '../planning/status.ts';
import { fittedCautions, CAUTIONS_FOOTER, type CautionGroup } from '../planning/cautions.ts';
import type { MastOption } from '../radio/masts.ts';

export interface VisitSheet {
  title: string;
  generatedAt: string;
  plan: { id: string; name: string; bandPlan: string; frequencyMhz: number };
  node: { id: string; name: string; deviceType: string; lat: number; lon: number; environment: string; installStatus: string; accessNotes: string };
  status: LinkStatus;
  combinedDeliveryProbability: number;
  kit: {
    antenna: { id: string; name: string; homemade: boolean; gainDbi: number };
    feedline: { id: string; name: string; lengthM: number } | null;
    antennaHeightAglM: number;
    mastOptionId: string | null;
    mastName: string | null;
    /** The one kit price (server/app/kit-price.ts), with part names. */
    price: NodeKitPrice;
    meetsTarget: boolean;
    recommended: { antennaDesignId: string; antennaName: string; mastHeightM: number; mastName: string | null; feedlineId: string | null; feedlineName: string | null; feedlineLengthM: number; cost: number; price: NodeKitPrice; reason: string } | null;
  };
  buildSheet: BuildSheet | null;
  gateways: Array<{ id: string; name: string; distanceM: number; aimAzimuthDeg: number; elevationDeg: number; sf: number; expectedRssiDbm: ExpectedRange; expectedSnrDb: ExpectedRange; sigmaDb: number; marginDb: number }>;
  measurements: Array<{ gatewayId: string; gatewayName: string; sf: number; measuredRssiDbm: null; measuredSnrDb: null; time: null }>;
  cautions: string[];
  /** Cautions fitted to this node's height and power (a 1 m probe gets no mast-work list). */
  fittedCautions: CautionGroup[];
  cautionsFooter: string;
  statusText: string;
  warnings: string[];
}

/** Cautions fitted to a node as it stands: its height, gain, EIRP and legal check, pit or building. */
export function nodeCautions(outcome: NodeLinksOutcome): CautionGroup[] {
  const node = outcome.node;
  const legal = outcome.links.find((l) => l.legal)?.legal ?? null;
  return fittedCautions({ role: 'node', antennaHeightAglM: node.antennaHeightAglM, peakEirpDbm: legal?.peakEirpDbm ?? null, antennaGainDbi: node.antenna.gainDbi, legal, enclosed: node.row.environment !== 'outdoor' });
}

export function visitSheet(ctx: PlanContext, outcome: NodeLinksOutcome, recommendation: NodeRecommendation | null, masts: readonly MastOption[] = []): VisitSheet {
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
  const price = nodeKitPrice({ antenna: node.antenna, feedline: node.feedline, feedlineLengthM: node.kit.feedlineLengthM, antennaHeightAglM: node.antennaHeightAglM, mastOptionId: row.mastOptionId }, masts);
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
      mastName: price.mastName,
      price,
      meetsTarget: meets,
      recommended: !meets && first ? { antennaDesignId: first.antennaDesignId, antennaName: first.antennaName, mastHeightM: first.mastHeightM, mastName: first.mastName, feedlineId: first.feedlineId, feedlineName: first.feedlineName, feedlineLengthM: first.feedlineLengthM, cost: first.price.totalUsd, price: first.price, reason: first.reason } : null,
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
    fittedCautions: nodeCautions(outcome),
    cautionsFooter: CAUTIONS_FOOTER,
    statusText: statusPhrase(outcome.status as LinkStatus, outcome.combinedDeliveryProbability),
    warnings,
  };
}

function esc(value: unknown): string {
  return String(value ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

const dec = (value: number, digits = 1) => (Number.isFinite(value) ? value.toFixed(digits) : '—');

/** Printable HTML of a visit sheet (no scripts, no external resources). */
const priceRows = (price: NodeKitPrice): string =>
  `${price.lines.map((l) => `<tr><td>${esc(l.name)}</td><td>${l.unit === 'm' ? `${dec(l.quantity)} m` : `× ${l.quantity}`}</td><td class="num">${dec(l.costUsd, 2)} USD</td></tr>`).join('')}<tr class="total"><th colspan="2">Kit total</th><td class="num">${dec(price.totalUsd, 2)} USD</td></tr>`;

/** A readable time in the viewer's zone when known (?tz= from the app), else UTC said plainly. */
export function sheetTime(iso: string, timeZone?: string): string {
  const date = new Date(iso);
  try {
    return `${date.toLocaleString('en-GB', { timeZone: timeZone ?? 'UTC', dateStyle: 'medium', timeStyle: 'short' })}${timeZone ? '' : ' UTC'}`;
  } catch {
    return `${date.toLocaleString('en-GB', { timeZone: 'UTC', dateStyle: 'medium', timeStyle: 'short' })} UTC`;
  }
}

export function visitSheetHtml(sheet: VisitSheet, timeZone?: string): string {
  const k = sheet.kit;
  const rows = sheet.gateways
    .map((g) => `<tr><td>${esc(g.name)}</td><td>${dec(g.distanceM / 1000, 2)} km</td><td>${dec(g.aimAzimuthDeg, 0)}°</td><td>SF${g.sf}</td><td>${dec(g.expectedRssiDbm.p10)} … ${dec(g.expectedRssiDbm.p90)} dBm</td><td>${dec(g.expectedSnrDb.p10)} … ${dec(g.expectedSnrDb.p90)} dB</td><td>${dec(g.marginDb)} dB</td></tr>`)
    .join('');
  const blanks = sheet.measurements.map((m) => `<tr><td>${esc(m.gatewayName)}</td><td>SF${m.sf}</td><td class="blank"></td><td class="blank"></td><td class="blank"></td></tr>`).join('');
  const build = sheet.buildSheet
    ? `<h2>Build sheet: ${esc(sheet.buildSheet.designName)} at ${dec(sheet.buildSheet.frequencyMhz, 1)} MHz</h2><table><tr><th>Element</th><th>Count</th><th>Length</th></tr>${sheet.buildSheet.elements.map((e) => `<tr><td>${esc(e.name)}</td><td>${e.count}</td><td>${dec(e.lengthMm, 1)} mm (${dec(e.lengthIn, 3)} in)</td></tr>`).join('')}</table><ul>${sheet.buildSheet.notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>`
    : '';
  const recommended = k.recommended
    ? `<div class="warn"><p>The current kit does not meet the plan's target. Recommended instead: ${esc(k.recommended.antennaName)} at ${dec(k.recommended.mastHeightM)} m${k.recommended.mastName ? ` on ${esc(k.recommended.mastName)}` : ''}, ${k.recommended.feedlineName ? `${esc(k.recommended.feedlineName)} ${dec(k.recommended.feedlineLengthM)} m` : 'no feedline'}: ${esc(k.recommended.reason)}</p><div class="scroll"><table>${priceRows(k.recommended.price)}</table></div></div>`
    : '';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><link rel="icon" href="data:,"><title>${esc(sheet.title)}</title>
<style>
body{font-family:system-ui,sans-serif;margin:1.5cm;color:#111}h1{font-size:1.4em}h2{font-size:1.1em;margin-top:1.2em}
table{border-collapse:collapse;width:100%;margin:.4em 0}.scroll{overflow-x:auto}td.num{text-align:right;white-space:nowrap}tr.total th,tr.total td{font-weight:700}
@media (max-width:600px){body{margin:.6rem;font-size:15px;overflow-wrap:break-word}td,th{font-size:.85em;padding:.2em .25em}h1{font-size:1.2em}.scroll td,.scroll th{white-space:nowrap}}td,th{border:1px solid #888;padding:.25em .4em;text-align:left;font-size:.9em}
td.blank{height:1.6em;min-width:5em}.warn{border-left:4px solid #b00;padding-left:.5em}.cautions li{margin:.2em 0}
@media print{body{margin:1cm}}
</style></head><body>
<h1>${esc(sheet.title)}</h1>
<p>Plan ${esc(sheet.plan.name)} · ${esc(sheet.plan.bandPlan)} · ${dec(sheet.plan.frequencyMhz, 1)} MHz · generated ${esc(sheetTime(sheet.generatedAt, timeZone))}</p>
<h2>Where</h2>
<p>${esc(sheet.node.name)} (${esc(sheet.node.deviceType)}) at ${dec(sheet.node.lat, 6)}, ${dec(sheet.node.lon, 6)} · ${esc(sheet.node.environment)} · install status: ${esc(sheet.node.installStatus.replace('-', ' '))}</p>
<p><strong>Access notes:</strong> ${esc(sheet.node.accessNotes || 'none recorded')}</p>
<h2>What to bring</h2>
<ul><li>Antenna: ${esc(k.antenna.name)} (${dec(k.antenna.gainDbi)} dBi)${k.antenna.homemade ? ' — home-made, see the build sheet' : ''}</li>
<li>Feedline: ${k.feedline ? `${esc(k.feedline.name)}, ${dec(k.feedline.lengthM)} m` : 'none (radio at the antenna)'}</li>
<li>Antenna height above ground: ${dec(k.antennaHeightAglM)} m${k.mastName ? ` (${esc(k.mastName)})` : ''}</li></ul>
<div class="scroll"><table>${priceRows(k.price)}</table></div>
${recommended}
${build}
<h2>Expected readings (10th–90th percentile)</h2>
<p>Predicted: <strong>${esc(STATUS_WORDS[sheet.status as LinkStatus]?.label ?? sheet.status)}</strong> (${esc(STATUS_WORDS[sheet.status as LinkStatus]?.meaning ?? '')}); at least one gateway hears a message ${dec(sheet.combinedDeliveryProbability * 100)} % of the time.</p>
<div class="scroll"><table><tr><th>Gateway</th><th>Distance</th><th>Aim (from north)</th><th>SF</th><th>RSSI</th><th>SNR</th><th>Margin</th></tr>${rows}</table></div>
<h2>Measured on site</h2>
<div class="scroll"><table><tr><th>Gateway</th><th>SF</th><th>RSSI (dBm)</th><th>SNR (dB)</th><th>Time</th></tr>${blanks}</table></div>
<h2>Cautions</h2>
${sheet.fittedCautions.length ? `<ul class="cautions">${sheet.fittedCautions.map((g) => `<li><strong>${esc(g.topic)}:</strong> ${esc(g.items.join(' '))}</li>`).join('')}</ul>` : ''}
<p>${esc(CAUTIONS_FOOTER)}</p>
${sheet.warnings.length ? `<h2>Notes</h2><ul>${sheet.warnings.map((w) => `<li>${esc(w)}</li>`).join('')}</ul>` : ''}
</body></html>
`;
}
