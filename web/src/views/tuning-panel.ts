// Antenna tuning in the installer view: pick the sweep file the analyser exported
// (.s1p or CSV), give the present element length, and read the result: a chart of
// VSWR against frequency (band shaded, the 2:1 line, the resonance marked), the
// figures, and the trim instruction. The result can be kept on the node as an
// antenna reading. All numbers come from the server (server/tuning); none are recomputed here.
import { postTune, type TuneResult } from '../api-tuning.ts';
import { canRecordReadings } from '../session.ts';
import { announce, errorText, field, h, notice, s } from '../ui.ts';

const W = 480;
const H = 240;
const pad = { left: 44, right: 12, top: 14, bottom: 40 };
/** VSWR axis top: values above are drawn at the top edge (far off resonance they are not interesting). */
const VSWR_AXIS_MAX = 6;

function niceStep(span: number, count: number): number {
  const raw = span / count;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const n = raw / mag;
  return (n < 1.5 ? 1 : n < 3.5 ? 2 : n < 7.5 ? 5 : 10) * mag;
}

/** SVG chart of VSWR against frequency. */
export function sweepChart(result: TuneResult): SVGElement {
  const points = result.chart;
  const f0 = points[0].frequencyMhz;
  const f1 = points[points.length - 1].frequencyMhz;
  const top = Math.min(VSWR_AXIS_MAX, Math.max(3, ...points.map((p) => p.vswr)));
  const x = (f: number) => pad.left + ((f - f0) / (f1 - f0 || 1)) * (W - pad.left - pad.right);
  const y = (v: number) => pad.top + (1 - (Math.min(v, top) - 1) / (top - 1)) * (H - pad.top - pad.bottom);
  const svg = s('svg', { viewBox: `0 0 ${W} ${H}`, class: 'sweep-chart', role: 'img', 'aria-labelledby': 'sweep-chart-title', width: '100%' });
  svg.append(s('title', { id: 'sweep-chart-title' }, `VSWR from ${f0.toFixed(0)} to ${f1.toFixed(0)} MHz; resonance ${result.resonanceMhz.toFixed(1)} MHz at VSWR ${result.vswrAtResonance.toFixed(2)}; ${result.bandName} shaded`));
  // The band, shaded (clipped to the sweep).
  const b0 = Math.max(f0, result.bandFromMhz);
  const b1 = Math.min(f1, result.bandToMhz);
  if (b1 > b0) svg.append(s('rect', { class: 'sweep-band', x: x(b0), y: pad.top, width: x(b1) - x(b0), height: H - pad.top - pad.bottom }));
  // Axes and grid.
  const stepF = niceStep(f1 - f0, 5);
  for (let f = Math.ceil(f0 / stepF) * stepF; f <= f1 + 1e-9; f += stepF) {
    svg.append(s('line', { class: 'grid', x1: x(f), x2: x(f), y1: pad.top, y2: H - pad.bottom }));
    svg.append(s('text', { x: x(f), y: H - pad.bottom + 14, 'text-anchor': 'middle', class: 'axis' }, f.toFixed(stepF < 1 ? 1 : 0)));
  }
  for (let v = 1; v <= top + 1e-9; v += top > 4 ? 1 : 0.5) {
    svg.append(s('line', { class: 'grid', x1: pad.left, x2: W - pad.right, y1: y(v), y2: y(v) }));
    svg.append(s('text', { x: pad.left - 4, y: y(v) + 4, 'text-anchor': 'end', class: 'axis' }, v.toFixed(1)));
  }
  svg.append(s('text', { x: (pad.left + W - pad.right) / 2, y: H - 6, 'text-anchor': 'middle', class: 'axis' }, 'frequency (MHz)'));
  svg.append(s('text', { x: 12, y: (pad.top + H - pad.bottom) / 2, transform: `rotate(-90 12 ${(pad.top + H - pad.bottom) / 2})`, 'text-anchor': 'middle', class: 'axis' }, 'VSWR'));
  // The 2:1 line (common-practice target).
  svg.append(s('line', { class: 'sweep-target', x1: pad.left, x2: W - pad.right, y1: y(2), y2: y(2) }));
  svg.append(s('text', { x: W - pad.right - 2, y: y(2) - 4, 'text-anchor': 'end', class: 'axis' }, '2:1'));
  // The sweep.
  const path = points.map((p, i) => `${i ? 'L' : 'M'}${x(p.frequencyMhz).toFixed(1)},${y(p.vswr).toFixed(1)}`).join('');
  svg.append(s('path', { class: 'sweep-line', d: path }));
  // The resonance: a ring and a dashed drop line, labelled.
  const rx = x(result.resonanceMhz);
  const ry = y(result.vswrAtResonance);
  svg.append(s('line', { class: 'sweep-resonance', x1: rx, x2: rx, y1: ry, y2: H - pad.bottom }));
  svg.append(s('circle', { class: 'sweep-resonance-mark', cx: rx, cy: ry, r: 5 }));
  svg.append(s('text', { x: rx + (rx > W / 2 ? -8 : 8), y: Math.max(pad.top + 12, ry - 10), 'text-anchor': rx > W / 2 ? 'end' : 'start', class: 'axis strong' }, `${result.resonanceMhz.toFixed(1)} MHz`));
  return svg;
}

const fixed = (v: number | null, digits: number, unit: string) => (v === null ? '—' : `${v.toFixed(digits)} ${unit}`);

function resultBlock(result: TuneResult): HTMLElement {
  const facts = h(
    'dl',
    { class: 'facts', id: 'tune-figures' },
    h('dt', {}, 'Resonance'),
    h('dd', { id: 'tune-resonance' }, `${result.resonanceMhz.toFixed(2)} MHz (VSWR ${result.vswrAtResonance.toFixed(2)})`),
    h('dt', {}, 'At the band centre'),
    h('dd', {}, `${result.bandCentreMhz.toFixed(1)} MHz: VSWR ${result.vswrAtBandCentre.toFixed(2)}, return loss ${fixed(result.returnLossDbAtBandCentre, 1, 'dB')}`),
    h('dt', {}, 'VSWR below 2'),
    h('dd', {}, result.vswr2BandMhz ? `${result.vswr2BandMhz[0].toFixed(1)} to ${result.vswr2BandMhz[1].toFixed(1)} MHz` : 'nowhere in the sweep'),
  );
  if (result.newLengthMm !== null && result.lengthMm !== null) {
    facts.append(h('dt', {}, `Length (${result.element ?? 'element'})`), h('dd', { id: 'tune-length' }, `${result.lengthMm.toFixed(1)} mm now → ${result.newLengthMm.toFixed(1)} mm`));
  }
  const advice = h(
    'ul',
    { class: 'tune-advice', id: 'tune-advice' },
    ...result.advice.map((a) =>
      h('li', { class: a.code === 'no-trim-fixes' ? 'warn' : '' }, a.message, a.buildSheetNotes?.length ? h('ul', { class: 'muted small' }, ...a.buildSheetNotes.map((n) => h('li', {}, `Build sheet: ${n}`))) : ''),
    ),
  );
  const channels = result.channels.length
    ? h('p', { class: 'muted small' }, `Channels: ${result.channels.map((c) => `${c.frequencyMhz.toFixed(1)} MHz VSWR ${c.vswr.toFixed(2)}`).join(' · ')}`)
    : '';
  return h(
    'div',
    { id: 'tune-result' },
    sweepChart(result),
    h('p', { class: 'muted small' }, `Shaded: ${result.bandName}. Dashed: VSWR 2:1 (common-practice target). Sweep: ${result.sweep.points} points, ${result.sweep.description}.`),
    facts,
    advice,
    channels,
    h('p', { class: 'muted small' }, `Rule used: ${result.lengthRule}. Cut a little at a time; each cut cannot be undone.`),
    result.reading ? notice('ok', `Kept on this node as an antenna reading (${new Date(result.reading.measuredAt).toLocaleString()}).`) : '',
    result.cautions.length ? notice('warn', result.cautions.join(' ')) : '',
  );
}

/** The tuning card for one node. `designId` is the node antenna's build sheet, when it has one; `bandId` the plan's band plan. */
export function tuningPanel(planId: string, nodeId: string, designId: string | null, bandId: string | undefined): HTMLElement {
  const file = h('input', { id: 'tune-file', type: 'file', accept: '.s1p,.csv,text/csv,text/plain' });
  const length = h('input', { id: 'tune-length-mm', type: 'number', step: '0.1', min: '1', max: '2000', inputmode: 'decimal' });
  const keep = h('input', { id: 'tune-keep', type: 'checkbox' });
  keep.checked = canRecordReadings();
  const out = h('div', { id: 'tune-out', 'aria-live': 'polite' });
  const run = h('button', { type: 'submit', class: 'primary' }, 'Analyse the sweep');
  const form = h(
    'form',
    { class: 'card', id: 'tune-form', 'aria-labelledby': 'tune-h' },
    h('h2', { id: 'tune-h' }, 'Antenna tuning from a sweep'),
    h('p', { class: 'muted small' }, 'Export the sweep from the analyser as Touchstone (.s1p) or CSV (frequency and VSWR or return loss), sweep across the whole band, antenna in its final place.'),
    field('Sweep file (.s1p or .csv)', file),
    // A bought antenna is not trimmed: no length to ask for, the figures alone are shown.
    designId
      ? field(`Present length of the ${designId === 'half-wave-dipole' ? 'legs (each)' : designId === 'pcb-inverted-f' ? 'arm' : 'radiator'} (mm)`, length, 'Measure from the connector (or feed point) to the tip.')
      : h('p', { class: 'muted small' }, "This node's antenna is bought ready-made (no build sheet): the sweep's figures are shown, without a trim."),
    canRecordReadings() ? h('label', { class: 'check' }, keep, ' Keep the result on this node (antenna reading)') : '',
    h('div', { class: 'button-row' }, run),
    out,
  );
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    const chosen = file.files?.[0];
    if (!chosen) {
      out.replaceChildren(notice('error', 'Choose the sweep file first.'));
      return;
    }
    const lengthMm = length.value === '' ? undefined : Number(length.value);
    if (lengthMm !== undefined && !(lengthMm > 0)) {
      out.replaceChildren(notice('error', 'Length: enter the length in mm as a positive number.'));
      return;
    }
    run.disabled = true;
    out.replaceChildren(h('p', {}, 'Analysing…'));
    void chosen
      .text()
      .then((text) => {
        const isCsv = chosen.name.toLowerCase().endsWith('.csv');
        return postTune({
          ...(isCsv ? { csv: text } : { s1p: text }),
          fileName: chosen.name,
          // The plan's band (the server also takes it from the plan when the result is kept on the node).
          ...(bandId ? { band: bandId } : {}),
          ...(keep.checked ? { planId, nodeId } : {}),
          ...(designId && lengthMm !== undefined ? { design: designId, lengthMm } : {}),
        });
      })
      .then((result) => {
        out.replaceChildren(resultBlock(result));
        announce(result.advice[0]?.message ?? 'Sweep analysed');
      })
      .catch((err: unknown) => out.replaceChildren(notice('error', `The sweep could not be read: ${errorText(err)}`)))
      .finally(() => {
        run.disabled = false;
      });
  });
  return form;
}
