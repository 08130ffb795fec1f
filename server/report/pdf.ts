// The plan report as a PDF (pdfkit): cover, map, service and redundancy,
// capacity when a capacity result exists, named risks, bill of materials,
// assumptions and sources, cautions. Page numbers on every page, units on every
// figure, and a layout that reads in grey print: status is told by shape and
// word as well as colour, tables use rules and light grey fills only.
import { existsSync } from 'node:fs';
import PDFDocument from 'pdfkit';
import { MARGIN_CLASSES } from '../coverage/tiles.ts';
import type { LinkStatus } from '../planning/status.ts';
import type { BillOfMaterials } from './bom.ts';
import { metresPerPx, type MapView, viewPx } from './map.ts';
import { GATEWAY_COLOUR, SITE_COLOUR, STATUS_STYLE } from './style.ts';

export interface ReportNode {
  id: string;
  name: string;
  lat: number;
  lon: number;
  status: LinkStatus;
}

export interface ReportRisk {
  nodeName: string;
  detail: string;
}

export interface ReportModel {
  title: string;
  plan: { id: string; name: string; description: string; teamName: string };
  generatedAt: Date;
  /** IANA time zone the printed times are in (the viewer's, ?tz=); null = UTC. */
  timeZone: string | null;
  basis: Array<[string, string]>;
  counts: Record<LinkStatus, number>;
  redundancy: { none: number; one: number; twoOrMore: number };
  nodes: ReportNode[];
  gateways: Array<{ name: string; lat: number; lon: number; bestServerOf: number; antennaHeightAglM: number }>;
  sites: Array<{ name: string; lat: number; lon: number; hasGateway: boolean }>;
  /** The composited map image (RGB PNG of view.widthPx × view.heightPx, see renderMapImage). */
  map: { view: MapView; image: Uint8Array; coverage: string | null; terrain: string } | null;
  /** Capacity figures as label/value pairs, or null when no capacity result exists (the text says so). */
  capacity: Array<[string, string]> | null;
  capacityNote: string;
  /** The latest finished gateway siting run, or null when the plan has none (the text says so). */
  siting: { summary: Array<[string, string]>; selected: string[][]; uncovered: string[][]; uncoveredMore: number; note: string } | null;
  risks: Array<{ title: string; explanation: string; entries: ReportRisk[] }>;
  bom: BillOfMaterials;
  assumptions: Array<[string, string]>;
  warnings: string[];
  cautions: string[];
}

/** True when Intl knows the IANA zone. */
export function isTimeZone(timeZone: string): boolean {
  try {
    new Intl.DateTimeFormat('en-GB', { timeZone });
    return true;
  } catch {
    return false;
  }
}

/** "2 Dec 2026, 09:30 (Europe/Berlin, GMT+1)": a time in the given zone with the zone said; UTC without one. */
export function reportTime(date: Date, timeZone: string | null, style: 'date' | 'time' = 'time'): string {
  const zone = timeZone ?? 'UTC';
  const text = date.toLocaleString('en-GB', style === 'date' ? { timeZone: zone, dateStyle: 'medium' } : { timeZone: zone, dateStyle: 'medium', timeStyle: 'short' });
  if (style === 'date') return text;
  const offset = new Intl.DateTimeFormat('en-GB', { timeZone: zone, timeZoneName: 'shortOffset' }).formatToParts(date).find((p) => p.type === 'timeZoneName')?.value ?? '';
  return zone === 'UTC' ? `${text} UTC` : `${text} (${zone}, ${offset})`;
}

/** Risk entries listed by name per category; the rest are counted (the full list is in export.csv). */
export const MAX_RISK_NAMES = 80;

const A4 = { width: 595.28, height: 841.89 };
const MARGIN = 50;
const CONTENT_W = A4.width - 2 * MARGIN;
const BOTTOM = A4.height - MARGIN - 24;

const FONT_DIRS = ['/usr/share/fonts/truetype/dejavu', '/usr/share/fonts/dejavu', '/usr/local/share/fonts/dejavu'];

function findFonts(): { regular: string; bold: string } | null {
  for (const dir of FONT_DIRS) {
    const regular = `${dir}/DejaVuSans.ttf`;
    const bold = `${dir}/DejaVuSans-Bold.ttf`;
    if (existsSync(regular) && existsSync(bold)) return { regular, bold };
  }
  return null;
}

/** Characters the standard PDF fonts (WinAnsi) lack, spelt in ASCII when no Unicode font is installed. */
const ASCII_FALLBACK: Record<string, string> = { 'σ': 'sigma', '≥': '>=', '≤': '<=', '−': '-', '–': '-', '—': '-', '→': '->', '·': '.', '²': '2', 'ρ': 'rho', 'Π': 'prod', '…': '...', '×': 'x', '’': "'", '‘': "'", '“': '"', '”': '"', '°': ' deg', '±': '+/-', '⊕': '(+)' };

const usd = (v: number | null) => (v === null ? 'not priced' : `${v.toLocaleString('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 })} USD`);
const pct = (part: number, whole: number) => (whole > 0 ? `${((part / whole) * 100).toFixed(1)} %` : '–');

interface Column {
  header: string;
  width: number;
  align?: 'left' | 'right';
}

/** A number as pdfkit writes it in a content stream (PDFObject.number: rounded to 1e-6). */
function pdfNumber(n: number): number {
  if (n > -1e21 && n < 1e21) return Math.round(n * 1e6) / 1e6;
  throw new Error(`unsupported number: ${n}`);
}

/** The Bézier constant of a quarter circle, 4(√2 − 1)/3, as pdfkit's ellipse() uses it. */
const KAPPA = 4.0 * ((Math.sqrt(2) - 1.0) / 3.0); // pdfkit's own expression, so the last bit agrees too

/**
 * The path operators of many status symbols, one per line: the bytes pdfkit writes for
 * circle(x, y, r) (served: moveTo and four Bézier quarters, ellipse() of pdfkit 0.x), a diamond
 * polygon (marginal) or a triangle polygon (unserved), each operator on its own line, so
 * `doc.addContent(path)` puts exactly what those calls would in the content stream.
 */
export function statusSymbolsPath(status: LinkStatus, points: ReadonlyArray<{ x: number; y: number }>, r: number): string {
  const lines: string[] = [];
  const n = pdfNumber;
  const polygon = (corners: ReadonlyArray<readonly [number, number]>) => {
    lines.push(`${n(corners[0][0])} ${n(corners[0][1])} m`);
    for (let k = 1; k < corners.length; k++) lines.push(`${n(corners[k][0])} ${n(corners[k][1])} l`);
    lines.push('h');
  };
  for (const { x: cx, y: cy } of points) {
    if (status === 'served') {
      const x = cx - r;
      const y = cy - r;
      const o = r * KAPPA;
      const xe = x + r * 2;
      const ye = y + r * 2;
      const xm = x + r;
      const ym = y + r;
      lines.push(`${n(x)} ${n(ym)} m`);
      lines.push(`${n(x)} ${n(ym - o)} ${n(xm - o)} ${n(y)} ${n(xm)} ${n(y)} c`);
      lines.push(`${n(xm + o)} ${n(y)} ${n(xe)} ${n(ym - o)} ${n(xe)} ${n(ym)} c`);
      lines.push(`${n(xe)} ${n(ym + o)} ${n(xm + o)} ${n(ye)} ${n(xm)} ${n(ye)} c`);
      lines.push(`${n(xm - o)} ${n(ye)} ${n(x)} ${n(ym + o)} ${n(x)} ${n(ym)} c`);
      lines.push('h');
    } else if (status === 'marginal') polygon([[cx, cy - r * 1.15], [cx + r * 1.15, cy], [cx, cy + r * 1.15], [cx - r * 1.15, cy]]);
    else polygon([[cx - r * 1.1, cy - r * 0.8], [cx + r * 1.1, cy - r * 0.8], [cx, cy + r * 1.1]]);
  }
  return lines.join('\n');
}

class ReportWriter {
  readonly doc: PDFKit.PDFDocument;
  private readonly unicode: boolean;

  constructor(title: string, author: string) {
    this.doc = new PDFDocument({ size: 'A4', margin: MARGIN, bufferPages: true, info: { Title: title, Author: author, Creator: 'earshot', Producer: 'earshot (pdfkit)' } });
    const fonts = findFonts();
    this.unicode = fonts !== null;
    if (fonts) {
      this.doc.registerFont('body', fonts.regular);
      this.doc.registerFont('bold', fonts.bold);
    } else {
      this.doc.registerFont('body', 'Helvetica');
      this.doc.registerFont('bold', 'Helvetica-Bold');
    }
    this.doc.font('body').fontSize(10).fillColor('#000');
  }

  t(text: string): string {
    return this.unicode ? text : text.replace(/[^\x20-\x7e\n]/g, (c) => ASCII_FALLBACK[c] ?? (c.normalize('NFKD').replace(/[^\x20-\x7e]/g, '') || '?'));
  }

  ensure(heightPt: number): void {
    if (this.doc.y + heightPt > BOTTOM) this.doc.addPage();
  }

  heading(text: string, size = 15): void {
    this.ensure(size * 3);
    this.doc.moveDown(0.6).font('bold').fontSize(size).fillColor('#000').text(this.t(text), MARGIN, undefined, { width: CONTENT_W });
    const y = this.doc.y + 2;
    this.doc.moveTo(MARGIN, y).lineTo(MARGIN + CONTENT_W, y).lineWidth(0.6).strokeColor('#555').stroke();
    this.doc.y = y + 6;
    this.doc.font('body').fontSize(10);
  }

  subheading(text: string): void {
    this.ensure(36);
    this.doc.moveDown(0.5).font('bold').fontSize(11.5).fillColor('#000').text(this.t(text), MARGIN, undefined, { width: CONTENT_W });
    this.doc.moveDown(0.2).font('body').fontSize(10);
  }

  para(text: string, options: { size?: number; colour?: string } = {}): void {
    this.doc.font('body').fontSize(options.size ?? 10).fillColor(options.colour ?? '#000');
    this.ensure(this.doc.heightOfString(this.t(text), { width: CONTENT_W }) + 4);
    this.doc.text(this.t(text), MARGIN, undefined, { width: CONTENT_W });
    this.doc.moveDown(0.3).fillColor('#000');
  }

  bullets(items: readonly string[], size = 9.5): void {
    this.doc.font('body').fontSize(size);
    for (const item of items) {
      const text = this.t(item);
      const h = this.doc.heightOfString(text, { width: CONTENT_W - 14 });
      this.ensure(h + 3);
      const y = this.doc.y;
      this.doc.text('•', MARGIN + 2, y, { width: 10, lineBreak: false });
      this.doc.text(text, MARGIN + 14, y, { width: CONTENT_W - 14 });
      this.doc.moveDown(0.15);
    }
  }

  /** A table with a header row repeated after page breaks; cells wrap. */
  table(columns: Column[], rows: ReadonlyArray<ReadonlyArray<string>>, options: { size?: number; totalRows?: number } = {}): void {
    const size = options.size ?? 9;
    const pad = 3;
    const doc = this.doc;
    const rowHeight = (cells: ReadonlyArray<string>, font: string) => {
      doc.font(font).fontSize(size);
      return Math.max(...cells.map((cell, i) => doc.heightOfString(this.t(cell), { width: columns[i].width - 2 * pad }))) + 2 * pad;
    };
    const drawRow = (cells: ReadonlyArray<string>, font: string, fill: string | null) => {
      const h = rowHeight(cells, font);
      const y = doc.y;
      if (fill) doc.rect(MARGIN, y, CONTENT_W, h).fill(fill);
      let x = MARGIN;
      doc.font(font).fontSize(size).fillColor('#000');
      cells.forEach((cell, i) => {
        doc.text(this.t(cell), x + pad, y + pad, { width: columns[i].width - 2 * pad, align: columns[i].align ?? 'left' });
        x += columns[i].width;
      });
      doc.moveTo(MARGIN, y + h).lineTo(MARGIN + CONTENT_W, y + h).lineWidth(0.3).strokeColor('#999').stroke();
      doc.x = MARGIN;
      doc.y = y + h;
    };
    const header = columns.map((c) => c.header);
    this.ensure(rowHeight(header, 'bold') + (rows[0] ? rowHeight(rows[0], 'body') : 0));
    drawRow(header, 'bold', '#e4e4e4');
    rows.forEach((row, index) => {
      const h = rowHeight(row, 'body');
      if (doc.y + h > BOTTOM) {
        doc.addPage();
        drawRow(header, 'bold', '#e4e4e4');
      }
      const isTotal = options.totalRows !== undefined && index >= rows.length - options.totalRows;
      drawRow(row, isTotal ? 'bold' : 'body', isTotal ? '#f0f0f0' : null);
    });
    doc.moveDown(0.6);
  }

  /** Status symbol centred at (x, y), radius r pt, white halo (the map's shapes). */
  statusSymbol(status: LinkStatus, x: number, y: number, r: number): void {
    this.statusSymbols(status, [{ x, y }], r);
  }

  /**
   * Many symbols of one status: every halo in one path and one stroke, then every shape in
   * one path and one fill (two drawing operations per status, not two per node). The path is
   * written as one content string (statusSymbolsPath: the very operators pdfkit's circle() and
   * polygon() write), because pdfkit keeps each operator it is given as its own small byte
   * array until the document ends: 5,000 nodes drawn twice were ~50,000 arrays, ~10 MB of the
   * report's peak (npm run bench -- report).
   */
  statusSymbols(status: LinkStatus, points: ReadonlyArray<{ x: number; y: number }>, r: number): void {
    if (points.length === 0) return;
    const doc = this.doc;
    const path = statusSymbolsPath(status, points, r);
    doc.addContent(path);
    doc.lineWidth(Math.max(0.6, r * 0.45)).strokeColor('#ffffff').stroke();
    doc.addContent(path);
    doc.fillColor(STATUS_STYLE[status].colour).fill();
  }

  gatewaySymbol(x: number, y: number, s: number): void {
    const doc = this.doc;
    const draw = (colour: string, width: number) => {
      doc.lineWidth(width).strokeColor(colour).lineCap('round');
      doc.moveTo(x, y - s * 0.45).lineTo(x - s * 0.4, y + s * 0.7).stroke();
      doc.moveTo(x, y - s * 0.45).lineTo(x + s * 0.4, y + s * 0.7).stroke();
      doc.moveTo(x - s * 0.25, y + s * 0.3).lineTo(x + s * 0.25, y + s * 0.3).stroke();
      doc.moveTo(x - s * 0.45, y - s * 0.85).quadraticCurveTo(x - s * 0.75, y - s * 0.45, x - s * 0.45, y - s * 0.05).stroke();
      doc.moveTo(x + s * 0.45, y - s * 0.85).quadraticCurveTo(x + s * 0.75, y - s * 0.45, x + s * 0.45, y - s * 0.05).stroke();
    };
    draw('#ffffff', s * 0.32);
    draw(GATEWAY_COLOUR, s * 0.13);
    doc.circle(x, y - s * 0.45, s * 0.17).lineWidth(s * 0.08).fillAndStroke(GATEWAY_COLOUR, '#ffffff');
    doc.lineCap('butt');
  }

  siteSymbol(x: number, y: number, r: number): void {
    const doc = this.doc;
    const pts: Array<[number, number]> = [];
    for (let k = 0; k < 6; k++) {
      const a = (Math.PI / 3) * k - Math.PI / 2;
      pts.push([x + r * Math.cos(a), y + r * Math.sin(a)]);
    }
    doc.polygon(...pts).lineWidth(r * 0.55).strokeColor('#ffffff').stroke();
    doc.polygon(...pts).lineWidth(r * 0.25).fillOpacity(0.85).fillAndStroke('#ffffff', SITE_COLOUR);
    doc.fillOpacity(1).circle(x, y, r * 0.25).fill(SITE_COLOUR);
  }
}

function coverPage(w: ReportWriter, m: ReportModel): void {
  const doc = w.doc;
  const total = m.nodes.length;
  doc.rect(0, 0, A4.width, 8).fill('#333');
  doc.fillColor('#000').font('bold').fontSize(11).text(w.t('earshot · coverage report'), MARGIN, 60);
  doc.font('bold').fontSize(24).text(w.t(m.plan.name), MARGIN, 90, { width: CONTENT_W });
  doc.moveDown(0.3).font('body').fontSize(12).fillColor('#222').text(w.t(`Team: ${m.plan.teamName}`));
  doc.text(w.t(`Made: ${reportTime(m.generatedAt, m.timeZone)} · plan id ${m.plan.id}`));
  if (m.plan.description) doc.moveDown(0.5).fontSize(10).fillColor('#333').text(w.t(m.plan.description), { width: CONTENT_W });
  doc.fillColor('#000');

  w.heading('Key figures', 13);
  const rows: Array<[string, string]> = [
    ['Nodes', String(total)],
    ...(['served', 'marginal', 'unserved'] as const).map((s): [string, string] => [STATUS_STYLE[s].label, `${m.counts[s]} (${pct(m.counts[s], total)})`]),
    ['Heard by 2 or more gateways', `${m.redundancy.twoOrMore} (${pct(m.redundancy.twoOrMore, total)})`],
    ['Gateways', String(m.gateways.length)],
    ['Kit cost (nodes and gateways: antennas, feedlines, connectors, masts)', usd(m.bom.kitCostUsd)],
    ['Bill of materials total', usd(m.bom.totalUsd)],
  ];
  w.table([{ header: 'Figure', width: 300 }, { header: 'Value', width: CONTENT_W - 300, align: 'right' }], rows, { size: 10 });

  w.heading('Planning basis', 13);
  w.table([{ header: 'Setting', width: 170 }, { header: 'Value and source', width: CONTENT_W - 170 }], m.basis, { size: 9.5 });
  w.para('Contents: map · service and redundancy · capacity · gateway siting · risks · bill of materials · assumptions and sources · cautions.', { size: 9, colour: '#333' });
}

function mapPage(w: ReportWriter, m: ReportModel): void {
  const doc = w.doc;
  doc.addPage();
  w.heading('Map');
  if (!m.map) {
    w.para('No map: the plan has no nodes, gateways or sites to place.');
    return;
  }
  const { view } = m.map;
  const frameW = CONTENT_W;
  const scale = frameW / view.widthPx;
  const frameH = view.heightPx * scale;
  const top = doc.y;
  doc.save();
  doc.rect(MARGIN, top, frameW, frameH).clip();
  doc.image(Buffer.from(m.map.image), MARGIN, top, { width: frameW, height: frameH });
  const at = (lat: number, lon: number) => {
    const p = viewPx(view, lat, lon);
    return { x: MARGIN + p.x * scale, y: top + p.y * scale };
  };
  for (const site of m.sites) {
    if (site.hasGateway) continue;
    const p = at(site.lat, site.lon);
    w.siteSymbol(p.x, p.y, 5);
  }
  // Unserved drawn last so the nodes at risk stay on top; size falls a little for big fleets.
  const r = m.nodes.length > 2000 ? 1.6 : m.nodes.length > 300 ? 2.3 : 3.2;
  for (const status of ['served', 'marginal', 'unserved'] as const) {
    w.statusSymbols(status, m.nodes.filter((node) => node.status === status).map((node) => at(node.lat, node.lon)), r);
  }
  for (const g of m.gateways) {
    const p = at(g.lat, g.lon);
    w.gatewaySymbol(p.x, p.y, 13);
    doc.font('bold').fontSize(7.5);
    const label = w.t(g.name);
    const lw = doc.widthOfString(label);
    doc.rect(p.x + 8, p.y - 13, lw + 4, 10).fillOpacity(0.85).fill('#ffffff').fillOpacity(1);
    doc.fillColor('#000').text(label, p.x + 10, p.y - 12, { lineBreak: false });
  }
  // Scale bar (a round distance near a fifth of the frame) and north arrow.
  const mPerPt = metresPerPx(view) / scale;
  const targetM = (frameW / 5) * mPerPt;
  const magnitude = 10 ** Math.floor(Math.log10(targetM));
  const barM = [1, 2, 5, 10].map((k) => k * magnitude).filter((v) => v <= targetM).pop() ?? magnitude;
  const barPt = barM / mPerPt;
  const bx = MARGIN + 10;
  const by = top + frameH - 16;
  doc.rect(bx - 4, by - 12, barPt + 50, 22).fillOpacity(0.85).fill('#ffffff').fillOpacity(1);
  doc.rect(bx, by, barPt / 2, 4).fill('#000');
  doc.rect(bx + barPt / 2, by, barPt / 2, 4).lineWidth(0.6).fillAndStroke('#ffffff', '#000');
  doc.fillColor('#000').font('body').fontSize(7.5).text(barM >= 1000 ? `${barM / 1000} km` : `${barM} m`, bx + barPt + 4, by - 2, { lineBreak: false });
  const nx = MARGIN + frameW - 20;
  const ny = top + 14;
  doc.rect(nx - 10, ny - 8, 20, 30).fillOpacity(0.85).fill('#ffffff').fillOpacity(1);
  doc.polygon([nx, ny - 4], [nx + 5, ny + 10], [nx, ny + 7], [nx - 5, ny + 10]).fill('#000');
  doc.font('bold').fontSize(8).text('N', nx - 3, ny + 11, { lineBreak: false });
  doc.restore();
  doc.rect(MARGIN, top, frameW, frameH).lineWidth(0.8).strokeColor('#333').stroke();
  doc.x = MARGIN;
  doc.y = top + frameH + 8;

  // Legend: symbols, then the margin classes of the coverage raster.
  const ly = doc.y;
  const items: Array<[string, (x: number, y: number) => void]> = [
    ...(['served', 'marginal', 'unserved'] as const).map((s) => [`${STATUS_STYLE[s].label}: ${m.counts[s]}`, (x: number, y: number) => w.statusSymbol(s, x, y, 3.6)] as [string, (x: number, y: number) => void]),
    [`Gateway: ${m.gateways.length}`, (x, y) => w.gatewaySymbol(x, y + 1, 12)],
    ['Site without a gateway', (x, y) => w.siteSymbol(x, y, 4.5)],
  ];
  // The three status labels are long (the status words with their meaning): one row each, then
  // gateway and site side by side, so no label runs into another.
  items.forEach(([label, draw], i) => {
    const col = i < 3 ? 0 : i - 3;
    const row = i < 3 ? i : 3;
    const x = MARGIN + col * (CONTENT_W / 2);
    const y = ly + row * 14;
    draw(x + 6, y + 5);
    doc.fillColor('#000').font('body').fontSize(8.5).text(w.t(label), x + 18, y + 1, { lineBreak: false, width: (i < 3 ? CONTENT_W : CONTENT_W / 2) - 20 });
  });
  doc.y = ly + 4 * 14 + 4;
  doc.x = MARGIN;
  if (m.map.coverage) {
    const cy = doc.y;
    doc.font('bold').fontSize(8.5).fillColor('#000').text(w.t('Predicted margin at the coverage run’s SF (received power − sensitivity):'), MARGIN, cy, { lineBreak: false });
    const by = cy + 13;
    let x = MARGIN;
    for (const cls of MARGIN_CLASSES) {
      const label = w.t(cls.label.split(':')[0]);
      doc.rect(x, by, 12, 9).lineWidth(0.4).fillAndStroke(cls.colour, '#333');
      doc.fillColor('#000').font('body').fontSize(7.5).text(`${label} dB`.replace('dB dB', 'dB'), x + 15, by + 1, { lineBreak: false });
      x += 15 + doc.widthOfString(`${label} dB`) + 10;
    }
    doc.x = MARGIN;
    doc.y = by + 14;
    w.para(`${m.map.coverage} Darker = more margin; uncoloured = below −5 dB, outside the run's radius, or no terrain.`, { size: 8.5, colour: '#222' });
  } else {
    w.para('No finished coverage run yet: the map shows the terrain and the nodes’ predicted status only. Start a coverage run from the map to add predicted margin.', { size: 8.5, colour: '#222' });
  }
  w.para(`Shaded relief: ${m.map.terrain} (Horn's method, light from the north-west). Web Mercator, zoom ${view.zoom}. Node symbols show the link status of the fleet table.`, { size: 8.5, colour: '#222' });
}

function servicePages(w: ReportWriter, m: ReportModel): void {
  const total = m.nodes.length;
  w.doc.addPage();
  w.heading('Service');
  w.para('Each node’s status from its predicted links (the fleet table’s figures):');
  w.table(
    [{ header: 'Status', width: 250 }, { header: 'Nodes', width: 80, align: 'right' }, { header: 'Share', width: CONTENT_W - 330, align: 'right' }],
    [
      ...(['served', 'marginal', 'unserved'] as const).map((s) => [STATUS_STYLE[s].label, String(m.counts[s]), pct(m.counts[s], total)]),
      ['All nodes', String(total), total ? '100.0 %' : '–'],
    ],
    { totalRows: 1 },
  );
  w.subheading('Redundancy');
  w.para('Gateways that hear each node with margin ≥ 0 dB at the SF it uses. A node heard by one gateway is lost when that gateway fails.');
  w.table(
    [{ header: 'Gateways hearing the node', width: 250 }, { header: 'Nodes', width: 80, align: 'right' }, { header: 'Share', width: CONTENT_W - 330, align: 'right' }],
    [
      ['0 (not heard)', String(m.redundancy.none), pct(m.redundancy.none, total)],
      ['1', String(m.redundancy.one), pct(m.redundancy.one, total)],
      ['2 or more', String(m.redundancy.twoOrMore), pct(m.redundancy.twoOrMore, total)],
    ],
  );
  w.subheading('Gateways');
  w.table(
    [{ header: 'Gateway', width: 250 }, { header: 'Antenna height', width: 110, align: 'right' }, { header: 'Nodes best served', width: CONTENT_W - 360, align: 'right' }],
    m.gateways.map((g) => [g.name, `${g.antennaHeightAglM.toFixed(1)} m AGL`, String(g.bestServerOf)]),
  );
  w.ensure(m.capacity ? 140 : 60);
  w.subheading('Capacity');
  if (m.capacity) w.table([{ header: 'Figure', width: 300 }, { header: 'Value', width: CONTENT_W - 300, align: 'right' }], m.capacity);
  w.para(m.capacityNote, { size: 9, colour: '#222' });

  // Keep the heading with its table (about six rows), not alone at the foot of a page.
  w.ensure(m.siting ? 170 : 60);
  w.subheading('Gateway siting');
  if (!m.siting) w.para('No finished siting run: the gateways are as placed by hand. A siting run (the map’s siting panel) chooses sites that cover the nodes at least cost.', { size: 9, colour: '#222' });
  else {
    w.table([{ header: 'Figure', width: 200 }, { header: 'Value', width: CONTENT_W - 200 }], m.siting.summary, { size: 9 });
    if (m.siting.selected.length) {
      w.table(
        [{ header: 'Rank', width: 35, align: 'right' }, { header: 'Chosen site', width: 175 }, { header: 'Antenna', width: 60, align: 'right' }, { header: 'Cost', width: 85, align: 'right' }, { header: 'Nodes heard', width: 70, align: 'right' }, { header: 'Only here', width: CONTENT_W - 425, align: 'right' }],
        m.siting.selected,
        { size: 8.5 },
      );
    }
    if (m.siting.uncovered.length) {
      w.para('Nodes no candidate covers:', { size: 9 });
      w.table([{ header: 'Node', width: 190 }, { header: 'Why', width: CONTENT_W - 190 }], m.siting.uncovered, { size: 8.5 });
      if (m.siting.uncoveredMore > 0) w.para(`… and ${m.siting.uncoveredMore} more.`, { size: 9 });
    }
    w.para(m.siting.note, { size: 8.5, colour: '#222' });
  }

  w.heading('Risks');
  w.para('Named nodes that need attention before the budget is committed. The full fleet with every figure is in the CSV export (export.csv).');
  for (const risk of m.risks) {
    w.ensure(80);
    w.subheading(`${risk.title}: ${risk.entries.length}`);
    w.para(risk.explanation, { size: 9, colour: '#222' });
    if (risk.entries.length === 0) {
      w.para('None.', { size: 9 });
      continue;
    }
    const shown = risk.entries.slice(0, MAX_RISK_NAMES);
    w.table([{ header: 'Node', width: 190 }, { header: 'Why', width: CONTENT_W - 190 }], shown.map((e) => [e.nodeName, e.detail]), { size: 8.5 });
    if (risk.entries.length > shown.length) w.para(`… and ${risk.entries.length - shown.length} more (see export.csv).`, { size: 9 });
  }
}

function bomPage(w: ReportWriter, m: ReportModel): void {
  w.doc.addPage();
  w.heading('Bill of materials');
  const b = m.bom;
  const fmtQty = (q: number, unit: string) => (unit === 'm' ? `${q.toFixed(1)} m` : String(q));
  const unitPrice = (v: number | null, unit: string) => (v === null ? 'not priced' : `${usd(v)}${unit === 'm' ? '/m' : ''}`);
  const category: Record<string, string> = { antenna: 'Antenna', feedline: 'Feedline', connector: 'Connector', mast: 'Mast', gateway: 'Gateway', site: 'Site' };
  w.table(
    [{ header: 'Item', width: 70 }, { header: 'Description', width: 185 }, { header: 'Quantity', width: 65, align: 'right' }, { header: 'Unit price', width: 85, align: 'right' }, { header: 'Cost', width: CONTENT_W - 405, align: 'right' }],
    [
      ...b.lines.map((l) => [category[l.category], l.name, fmtQty(l.quantity, l.unit), unitPrice(l.unitCostUsd, l.unit), usd(l.costUsd)]),
      ['Subtotal', 'Node kit (antenna, feedline, connectors, mast or mount)', '', '', usd(b.nodeKitCostUsd)],
      ['Subtotal', 'Gateway kit (antenna, feedline, connectors, mast)', '', '', usd(b.gatewayKitCostUsd)],
      ['Subtotal', 'Kit cost (nodes and gateways)', '', '', usd(b.kitCostUsd)],
      ['Subtotal', 'Gateway radios and site works', '', '', usd(b.totalsUsd.gateway + b.totalsUsd.site)],
      ['Total', '', '', '', usd(b.totalUsd)],
    ],
    { size: 8.5, totalRows: 5 },
  );
  if (b.unpriced.length) w.para(`Not priced (not in the catalog): ${b.unpriced.join(', ')}.`, { size: 9 });
  w.bullets(b.notes, 8.5);
}

function assumptionsPages(w: ReportWriter, m: ReportModel): void {
  w.heading('Assumptions and sources');
  w.table([{ header: 'Assumption', width: 150 }, { header: 'Value and source', width: CONTENT_W - 150 }], m.assumptions, { size: 8.5 });
  if (m.warnings.length) {
    w.subheading('Warnings from the predictions');
    w.bullets(m.warnings, 8.5);
  }
  w.heading('Cautions');
  w.bullets(m.cautions, 9);
}

function pageNumbers(w: ReportWriter, m: ReportModel): void {
  const doc = w.doc;
  const range = doc.bufferedPageRange();
  for (let i = range.start; i < range.start + range.count; i++) {
    doc.switchToPage(i);
    const y = A4.height - MARGIN + 6;
    doc.moveTo(MARGIN, y - 6).lineTo(MARGIN + CONTENT_W, y - 6).lineWidth(0.4).strokeColor('#777').stroke();
    doc.font('body').fontSize(8).fillColor('#333');
    doc.text(w.t(`${m.plan.name} · earshot report · ${reportTime(m.generatedAt, m.timeZone, 'date')}`), MARGIN, y, { width: CONTENT_W - 80, lineBreak: false, height: 10 });
    doc.text(`Page ${i + 1 - range.start} of ${range.count}`, MARGIN + CONTENT_W - 80, y, { width: 80, align: 'right', lineBreak: false, height: 10 });
  }
}

/** Writes the report; resolves with the PDF bytes. */
export function renderReportPdf(model: ReportModel): Promise<Buffer> {
  const w = new ReportWriter(model.title, model.plan.teamName);
  const parts: Buffer[] = [];
  const done = new Promise<Buffer>((resolve, reject) => {
    w.doc.on('data', (chunk: Buffer) => parts.push(chunk));
    w.doc.on('end', () => resolve(Buffer.concat(parts)));
    w.doc.on('error', reject);
  });
  coverPage(w, model);
  mapPage(w, model);
  servicePages(w, model);
  bomPage(w, model);
  assumptionsPages(w, model);
  pageNumbers(w, model);
  w.doc.end();
  return done;
}
