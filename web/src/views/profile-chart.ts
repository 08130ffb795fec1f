// Path profile chart in SVG: terrain, clutter tops, the straight ray between
// the antennas, the first Fresnel zone and the obstructions, with axes in km
// and m. Drawn from the link check's numbers; nothing is recomputed here.
import type { LinkProfile } from '../api.ts';
import { s } from '../ui.ts';

export interface ProfileSeries {
  /** ground: terrain with the earth bulge; clutterTop: + clutter (the surface the ray must clear). */
  points: Array<{ distanceM: number; groundM: number | null; clutterTopM: number | null }>;
  ray: Array<{ distanceM: number; heightM: number }>;
  fresnel: Array<{ distanceM: number; lowerM: number; upperM: number }>;
  obstructions: Array<{ distanceM: number; heightM: number }>;
}

/**
 * Chart series from the link check. The server draws the ray straight on a flat
 * baseline, so the ground is lifted by the earth bulge (obstacleM − clutterTopM)
 * to keep the clearance true to the picture.
 */
export function profileSeries(profile: LinkProfile | null): ProfileSeries | null {
  if (!profile || profile.points.length < 2) return null;
  const points = profile.points.map((p) => {
    const bulge = Number.isFinite(p.obstacleM - p.clutterTopM) ? p.obstacleM - p.clutterTopM : 0;
    return { distanceM: p.distanceM, groundM: Number.isFinite(p.groundM) ? p.groundM + bulge : null, clutterTopM: Number.isFinite(p.obstacleM) ? p.obstacleM : null };
  });
  const ray = profile.points.map((p) => ({ distanceM: p.distanceM, heightM: p.rayM }));
  const fresnel = profile.points.map((p) => ({ distanceM: p.distanceM, lowerM: p.fresnelLowerM, upperM: p.fresnelUpperM }));
  const obstructions = profile.obstructions.map((o) => ({ distanceM: o.distanceM, heightM: o.obstacleM }));
  return { points, ray, fresnel, obstructions };
}

const W = 480;
const H = 250;
const pad = { left: 52, right: 10, top: 12, bottom: 42 };

function niceStep(span: number, count: number): number {
  const raw = span / count;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const n = raw / mag;
  return (n < 1.5 ? 1 : n < 3.5 ? 2 : n < 7.5 ? 5 : 10) * mag;
}

export function profileChart(series: ProfileSeries, title: string): SVGElement {
  const maxD = series.points[series.points.length - 1].distanceM || 1;
  const heights: number[] = [];
  for (const p of series.points) {
    if (p.groundM !== null) heights.push(p.groundM);
    if (p.clutterTopM !== null) heights.push(p.clutterTopM);
  }
  for (const r of series.ray) heights.push(r.heightM);
  for (const f of series.fresnel) heights.push(f.lowerM, f.upperM);
  const minH = Math.min(...heights);
  const maxH = Math.max(...heights);
  const spanH = Math.max(10, maxH - minH);
  const lo = minH - spanH * 0.08;
  const hi = maxH + spanH * 0.08;
  const x = (d: number): number => pad.left + (d / maxD) * (W - pad.left - pad.right);
  const y = (m: number): number => pad.top + (1 - (m - lo) / (hi - lo)) * (H - pad.top - pad.bottom);

  const svg = s('svg', { viewBox: `0 0 ${W} ${H}`, class: 'profile-chart', role: 'img', 'aria-labelledby': 'profile-title profile-desc' });
  svg.append(s('title', { id: 'profile-title' }, title));
  const groundPts = series.points.filter((p) => p.groundM !== null);
  const lowestGround = Math.min(...groundPts.map((p) => p.groundM ?? 0));
  const highestGround = Math.max(...groundPts.map((p) => p.groundM ?? 0));
  svg.append(
    s(
      'desc',
      { id: 'profile-desc' },
      `Path of ${(maxD / 1000).toFixed(2)} km; ground from ${lowestGround.toFixed(0)} m to ${highestGround.toFixed(0)} m; ${series.obstructions.length} obstruction(s) in the first Fresnel zone.`,
    ),
  );

  // grid and axes
  const grid = s('g', { class: 'grid' });
  const stepD = niceStep(maxD, 6);
  for (let d = 0; d <= maxD + 1e-6; d += stepD) {
    grid.append(s('line', { x1: x(d), x2: x(d), y1: pad.top, y2: H - pad.bottom }));
    grid.append(s('text', { x: x(d), y: H - pad.bottom + 16, 'text-anchor': 'middle' }, (d / 1000).toFixed(stepD < 1000 ? 1 : 0)));
  }
  const stepH = niceStep(hi - lo, 5);
  for (let m = Math.ceil(lo / stepH) * stepH; m <= hi; m += stepH) {
    grid.append(s('line', { x1: pad.left, x2: W - pad.right, y1: y(m), y2: y(m) }));
    grid.append(s('text', { x: pad.left - 6, y: y(m) + 4, 'text-anchor': 'end' }, m.toFixed(0)));
  }
  grid.append(s('text', { x: (pad.left + W - pad.right) / 2, y: H - 6, 'text-anchor': 'middle', class: 'axis-label' }, 'distance from node (km)'));
  grid.append(s('text', { x: 14, y: (pad.top + H - pad.bottom) / 2, 'text-anchor': 'middle', class: 'axis-label', transform: `rotate(-90 14 ${(pad.top + H - pad.bottom) / 2})` }, 'height (m, earth bulge included)'));
  svg.append(grid);

  // Fresnel zone band
  if (series.fresnel.length > 1) {
    const upper = series.fresnel.map((f) => `${x(f.distanceM).toFixed(1)},${y(f.upperM).toFixed(1)}`);
    const lower = [...series.fresnel].reverse().map((f) => `${x(f.distanceM).toFixed(1)},${y(f.lowerM).toFixed(1)}`);
    svg.append(s('polygon', { points: [...upper, ...lower].join(' '), class: 'fresnel' }));
  }
  // clutter tops
  const clutter = series.points.filter((p) => p.clutterTopM !== null && p.groundM !== null && (p.clutterTopM ?? 0) > (p.groundM ?? 0) + 0.01);
  if (clutter.length > 0) {
    const pts = series.points
      .filter((p) => p.groundM !== null)
      .map((p) => `${x(p.distanceM).toFixed(1)},${y(p.clutterTopM ?? p.groundM ?? 0).toFixed(1)}`);
    svg.append(s('polyline', { points: pts.join(' '), class: 'clutter' }));
  }
  // terrain (filled)
  const base = y(lo);
  const terrain = [
    `${x(groundPts[0].distanceM).toFixed(1)},${base.toFixed(1)}`,
    ...groundPts.map((p) => `${x(p.distanceM).toFixed(1)},${y(p.groundM ?? lo).toFixed(1)}`),
    `${x(groundPts[groundPts.length - 1].distanceM).toFixed(1)},${base.toFixed(1)}`,
  ];
  svg.append(s('polygon', { points: terrain.join(' '), class: 'terrain' }));
  // NoData gaps marked
  for (const p of series.points) {
    if (p.groundM === null) svg.append(s('line', { x1: x(p.distanceM), x2: x(p.distanceM), y1: pad.top, y2: H - pad.bottom, class: 'nodata' }));
  }
  // straight ray
  if (series.ray.length > 1) {
    svg.append(s('polyline', { points: series.ray.map((r) => `${x(r.distanceM).toFixed(1)},${y(r.heightM).toFixed(1)}`).join(' '), class: 'ray' }));
  }
  // Obstructions: consecutive points form one span, drawn as a thick line on the
  // surface, with a ring-and-cross (reads without colour) at its highest point.
  for (const span of obstructionSpans(series)) {
    if (span.length > 1) svg.append(s('polyline', { points: span.map((o) => `${x(o.distanceM).toFixed(1)},${y(o.heightM).toFixed(1)}`).join(' '), class: 'obstruction-span' }));
    const top = span.reduce((a, b) => (b.heightM > a.heightM ? b : a), span[0]);
    const cx = x(top.distanceM);
    const cy = y(top.heightM);
    const g = s('g', { class: 'obstruction' });
    g.append(s('circle', { cx, cy, r: 6 }), s('path', { d: `M${cx - 4} ${cy - 4} L${cx + 4} ${cy + 4} M${cx + 4} ${cy - 4} L${cx - 4} ${cy + 4}` }));
    g.append(s('title', {}, `Obstruction from ${(span[0].distanceM / 1000).toFixed(2)} to ${(span[span.length - 1].distanceM / 1000).toFixed(2)} km, top ${top.heightM.toFixed(0)} m`));
    svg.append(g);
  }
  return svg;
}

/** Groups obstruction points that follow each other along the profile (gap ≤ 3 profile steps). */
export function obstructionSpans(series: ProfileSeries): Array<Array<{ distanceM: number; heightM: number }>> {
  const pts = series.points;
  const stepM = pts.length > 1 ? (pts[pts.length - 1].distanceM - pts[0].distanceM) / (pts.length - 1) : 1;
  const sorted = [...series.obstructions].sort((a, b) => a.distanceM - b.distanceM);
  const spans: Array<Array<{ distanceM: number; heightM: number }>> = [];
  for (const o of sorted) {
    const last = spans[spans.length - 1];
    if (last && o.distanceM - last[last.length - 1].distanceM <= 3 * stepM) last.push(o);
    else spans.push([o]);
  }
  return spans;
}

/** The chart's key, as HTML beside the SVG. */
export function profileKey(): HTMLElement {
  const key = document.createElement('ul');
  key.className = 'chart-key';
  const items: Array<[string, string]> = [
    ['key-terrain', 'terrain'],
    ['key-clutter', 'clutter tops'],
    ['key-ray', 'straight ray (antenna to antenna)'],
    ['key-fresnel', 'first Fresnel zone'],
    ['key-obstruction', 'obstruction (⊗)'],
  ];
  for (const [cls, label] of items) {
    const li = document.createElement('li');
    const sw = document.createElement('span');
    sw.className = `swatch ${cls}`;
    sw.setAttribute('aria-hidden', 'true');
    li.append(sw, label);
    key.append(li);
  }
  return key;
}
