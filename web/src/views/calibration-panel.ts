// Calibration from field readings: import a gateway log or a drive test (previewed first),
// fit the model's bias and spread to the plan's readings (optionally per environment,
// clutter class or distance band), see the residuals against distance and by group (SVG
// charts of our own), the figures with their 95 % intervals and the node-grouped
// cross-validation, and (planners) apply or revert a calibration. The node panel shows a
// node's own readings beside its prediction (renderNodeReadings below).
import { ApiError, isAbort, type Reading } from '../api.ts';
import {
  applyCalibration,
  fitCalibration,
  getCalibration,
  getNodeReadingsFor,
  importReadings,
  listCalibrations,
  revertCalibration,
  type CalibrationGrouping,
  type CalibrationResult,
  type ReadingImportAnswer,
} from '../api-calibration.ts';
import type { PlanStore } from '../plan-store.ts';
import { canEdit, canRecordReadings } from '../session.ts';
import { announce, append, clear, db, dbm, errorText, field, h, notice, s, select } from '../ui.ts';

const groupingLabels: Record<CalibrationGrouping, string> = {
  none: 'whole plan',
  environment: 'per environment (outdoor / indoor / pit)',
  clutter: 'per clutter class at the node',
  distance: 'per distance band',
};

const interval = (ci: [number, number] | undefined): string => (ci ? `${ci[0].toFixed(1)} … ${ci[1].toFixed(1)} dB` : '–');
const signed = (v: number | undefined): string => (v === undefined ? '–' : `${v >= 0 ? '+' : ''}${v.toFixed(1)} dB`);

/** Marker shapes per group (shape and colour both differ, so the chart reads without colour). */
const shapes = ['circle', 'square', 'triangle', 'diamond', 'cross'] as const;
const colours = ['#1f5f8b', '#a2501d', '#3c7a2c', '#6b3f8f', '#7a6a12'];

function markerShape(kind: (typeof shapes)[number], x: number, y: number, colour: string): SVGElement {
  const r = 3;
  switch (kind) {
    case 'circle':
      return s('circle', { cx: x, cy: y, r, fill: colour, 'fill-opacity': 0.7 });
    case 'square':
      return s('rect', { x: x - r, y: y - r, width: 2 * r, height: 2 * r, fill: colour, 'fill-opacity': 0.7 });
    case 'triangle':
      return s('path', { d: `M${x},${y - r - 0.5} L${x + r + 0.5},${y + r} L${x - r - 0.5},${y + r} Z`, fill: colour, 'fill-opacity': 0.7 });
    case 'diamond':
      return s('path', { d: `M${x},${y - r - 1} L${x + r + 1},${y} L${x},${y + r + 1} L${x - r - 1},${y} Z`, fill: colour, 'fill-opacity': 0.7 });
    case 'cross':
      return s('path', { d: `M${x - r},${y - r} L${x + r},${y + r} M${x - r},${y + r} L${x + r},${y - r}`, stroke: colour, 'stroke-width': 1.6 });
  }
}

/** "Nice" tick step for a span (1, 2 or 5 × 10ⁿ). */
function tickStep(span: number, target = 5): number {
  const raw = span / target;
  const power = 10 ** Math.floor(Math.log10(raw));
  const unit = raw / power;
  return (unit < 1.5 ? 1 : unit < 3.5 ? 2 : unit < 7.5 ? 5 : 10) * power;
}

/** Residual (measured − predicted, dB) against distance to the gateway (km), one marker per reading. */
export function residualChart(result: CalibrationResult): SVGElement {
  const width = 360;
  const height = 220;
  const left = 40;
  const right = 10;
  const top = 12;
  const bottom = 34;
  const points = result.residuals;
  const maxKm = Math.max(1, ...points.map((p) => p.distanceM / 1000));
  const values = points.map((p) => p.residualDb);
  const lo = Math.min(-10, ...values, result.biasDb - 2 * result.sigmaDb);
  const hi = Math.max(10, ...values, result.biasDb + 2 * result.sigmaDb);
  const x = (km: number): number => left + (km / maxKm) * (width - left - right);
  const y = (v: number): number => top + ((hi - v) / (hi - lo)) * (height - top - bottom);
  const svg = s('svg', { viewBox: `0 0 ${width} ${height}`, width: '100%', role: 'img', 'aria-labelledby': 'cal-chart-title', class: 'calibration-chart' });
  svg.append(s('title', { id: 'cal-chart-title' }, `Residuals of ${points.length} readings against distance: measured minus predicted RSSI in dB; fitted bias ${result.biasDb.toFixed(1)} dB`));
  svg.append(s('rect', { x: left, y: top, width: width - left - right, height: height - top - bottom, fill: '#fff', stroke: '#9a968c' }));
  const yStep = tickStep(hi - lo);
  for (let v = Math.ceil(lo / yStep) * yStep; v <= hi; v += yStep) {
    svg.append(s('line', { x1: left, x2: width - right, y1: y(v), y2: y(v), stroke: '#e4e1da' }));
    svg.append(s('text', { x: left - 4, y: y(v) + 3, 'text-anchor': 'end', 'font-size': 9, fill: '#4a4740' }, `${v}`));
  }
  const xStep = tickStep(maxKm);
  for (let km = 0; km <= maxKm + 1e-9; km += xStep) {
    svg.append(s('text', { x: x(km), y: height - bottom + 12, 'text-anchor': 'middle', 'font-size': 9, fill: '#4a4740' }, `${Number(km.toFixed(2))}`));
  }
  svg.append(s('text', { x: (left + width - right) / 2, y: height - 6, 'text-anchor': 'middle', 'font-size': 10, fill: '#2b2925' }, 'distance to the gateway, km'));
  svg.append(s('text', { x: 10, y: (top + height - bottom) / 2, 'text-anchor': 'middle', 'font-size': 10, fill: '#2b2925', transform: `rotate(-90 10 ${(top + height - bottom) / 2})` }, 'measured − predicted, dB'));
  // the model's own line (0 dB) and the fitted bias with its ±σ band
  svg.append(s('rect', { x: left, y: y(result.biasDb + result.sigmaDb), width: width - left - right, height: Math.max(0, y(result.biasDb - result.sigmaDb) - y(result.biasDb + result.sigmaDb)), fill: '#1f5f8b', 'fill-opacity': 0.08 }));
  svg.append(s('line', { x1: left, x2: width - right, y1: y(0), y2: y(0), stroke: '#4a4740', 'stroke-dasharray': '4 3' }));
  svg.append(s('line', { x1: left, x2: width - right, y1: y(result.biasDb), y2: y(result.biasDb), stroke: '#1f5f8b', 'stroke-width': 1.5 }));
  svg.append(s('text', { x: width - right - 2, y: y(result.biasDb) - 3, 'text-anchor': 'end', 'font-size': 9, fill: '#1f5f8b' }, `bias ${signed(result.biasDb)}, band ±σ`));
  const groupKeys = [...new Set(points.map((p) => p.group))].sort();
  const outliers = new Set(result.outliers.map((o) => o.readingId));
  for (const p of points) {
    const index = Math.max(0, groupKeys.indexOf(p.group)) % shapes.length;
    const marker = markerShape(shapes[index], x(p.distanceM / 1000), y(p.residualDb), outliers.has(p.readingId) ? '#b3261e' : colours[index]);
    svg.append(marker);
  }
  return svg;
}

/** Bias per group with its 95 % interval (whiskers); groups too small for a fit are listed, not drawn. */
export function groupChart(result: CalibrationResult): SVGElement {
  const groups = result.groups.filter((g) => g.fitted && g.biasDb !== undefined);
  const rowH = 22;
  const width = 360;
  const left = 130;
  const right = 14;
  const height = 30 + rowH * Math.max(1, groups.length);
  const extent = Math.max(5, ...groups.flatMap((g) => (g.biasCi95Db ? g.biasCi95Db.map(Math.abs) : [Math.abs(g.biasDb ?? 0)])));
  const x = (v: number): number => left + ((v + extent) / (2 * extent)) * (width - left - right);
  const svg = s('svg', { viewBox: `0 0 ${width} ${height}`, width: '100%', role: 'img', 'aria-labelledby': 'cal-group-title', class: 'calibration-chart' });
  svg.append(s('title', { id: 'cal-group-title' }, `Bias per group with 95 % intervals, dB`));
  svg.append(s('line', { x1: x(0), x2: x(0), y1: 4, y2: height - 20, stroke: '#4a4740', 'stroke-dasharray': '4 3' }));
  groups.forEach((g, i) => {
    const cy = 14 + i * rowH;
    svg.append(s('text', { x: left - 6, y: cy + 3, 'text-anchor': 'end', 'font-size': 10, fill: '#2b2925' }, `${g.key} (n ${g.n})`));
    if (g.biasCi95Db) svg.append(s('line', { x1: x(g.biasCi95Db[0]), x2: x(g.biasCi95Db[1]), y1: cy, y2: cy, stroke: '#1f5f8b', 'stroke-width': 2 }));
    svg.append(s('rect', { x: x(g.biasDb as number) - 3, y: cy - 5, width: 6, height: 10, fill: '#1f5f8b' }));
    svg.append(s('text', { x: width - right, y: cy + 3, 'text-anchor': 'end', 'font-size': 9, fill: '#4a4740' }, signed(g.biasDb)));
  });
  svg.append(s('text', { x: (left + width - right) / 2, y: height - 6, 'text-anchor': 'middle', 'font-size': 10, fill: '#2b2925' }, `bias, dB (−${extent.toFixed(0)} … +${extent.toFixed(0)})`));
  return svg;
}

function figuresTable(result: CalibrationResult): HTMLElement {
  const cv = result.crossValidation;
  return h(
    'div',
    {},
    h(
      'dl',
      { class: 'facts', id: 'calibration-figures' },
      h('dt', {}, 'Readings / nodes'),
      h('dd', {}, `${result.n} / ${result.nodes}`),
      h('dt', {}, 'Bias (add to predictions)'),
      h('dd', { id: 'calibration-bias' }, `${signed(result.biasDb)} (95 %: ${interval(result.biasCi95Db)})`),
      h('dt', {}, 'Spread σ'),
      h('dd', { id: 'calibration-sigma' }, `${db(result.sigmaDb)} (95 %: ${interval(result.sigmaCi95Db)})`),
      h('dt', {}, 'Outliers (named)'),
      h('dd', {}, String(result.outlierCount)),
    ),
    cv
      ? h(
          'table',
          { class: 'data-table compact', id: 'calibration-cv' },
          h('caption', {}, `Cross-validation: ${cv.folds} folds grouped by node (${cv.n} readings)`),
          h('thead', {}, h('tr', {}, h('th', {}, ''), h('th', { class: 'num' }, 'RMSE'), h('th', { class: 'num' }, 'mean error'))),
          h(
            'tbody',
            {},
            h('tr', {}, h('th', {}, 'model as is'), h('td', { class: 'num' }, db(cv.rmseBeforeDb)), h('td', { class: 'num' }, signed(cv.meanErrorBeforeDb))),
            h('tr', {}, h('th', {}, 'with this calibration'), h('td', { class: 'num' }, db(cv.rmseAfterDb)), h('td', { class: 'num' }, signed(cv.meanErrorAfterDb))),
          ),
        )
      : notice('warn', result.crossValidationNote ?? 'No cross-validation.'),
    cv && cv.rmseAfterDb >= cv.rmseBeforeDb ? notice('warn', 'Out of sample this calibration does not lower the error: applying it is not supported by the readings.') : null,
    result.outliers.length > 0
      ? h(
          'details',
          {},
          h('summary', {}, `Outliers (${result.outliers.length}): kept in the bias with reduced weight, left out of σ`),
          h(
            'ul',
            { class: 'small' },
            ...result.outliers.slice(0, 50).map((o) => h('li', {}, `reading ${o.readingId} · node ${o.nodeId} · ${signed(o.residualDb)} (modified z ${o.modifiedZ.toFixed(1)})`)),
          ),
        )
      : null,
    result.excluded.length > 0
      ? h('details', {}, h('summary', {}, `${result.excluded.length} reading(s) not paired with a prediction`), h('ul', { class: 'small' }, ...result.excluded.slice(0, 50).map((e) => h('li', {}, `reading ${e.readingId}: ${e.reason}`))))
      : null,
    h('details', {}, h('summary', {}, 'Method'), h('ul', { class: 'small' }, h('li', {}, result.method.bias), h('li', {}, result.method.sigma), h('li', {}, result.method.outliers), h('li', {}, result.method.crossValidation))),
  );
}

export function renderCalibrationPanel(panel: HTMLElement, store: PlanStore): () => void {
  let stopped = false;
  const planner = canEdit();
  panel.append(h('h2', { id: 'calibration-h' }, 'Calibration from field readings'));
  const state = h('div', { id: 'calibration-state', 'aria-live': 'polite' });
  const resultBox = h('div', { id: 'calibration-result' });
  const historyBox = h('div', { id: 'calibration-history' });
  const importBox = h('div', { id: 'calibration-import' });
  const grouping = select(
    (Object.keys(groupingLabels) as CalibrationGrouping[]).map((value) => ({ value, label: groupingLabels[value] })),
    'none',
    { id: 'calibration-grouping' },
  );
  const fitButton = h('button', { type: 'button', id: 'calibration-fit', class: 'primary' }, 'Fit the readings');
  append(
    panel,
    h('p', { class: 'muted small' }, 'Compares every field reading with the prediction for the same node, gateway and kit. Applying a calibration adds its bias to every prediction and uses its spread as σ for links, coverage and reports.'),
    state,
    canRecordReadings() ? importBox : null,
    planner ? h('div', { class: 'form-row' }, field('Fit', grouping), fitButton) : null,
    resultBox,
    historyBox,
  );

  // ---------- import (preview first, then store) ----------
  const fileInput = h('input', { type: 'file', id: 'calibration-file', accept: '.csv,.json,.geojson,text/csv,application/json' });
  const importStatus = h('div', { id: 'calibration-import-status', 'aria-live': 'polite' });
  let pendingText: string | null = null;
  const importButton = h('button', { type: 'button', id: 'calibration-import-go', disabled: true }, 'Import');
  importBox.append(field('Readings file (gateway log or drive test, CSV or JSON)', fileInput, 'Columns: devEui or nodeId or nodeName, gatewayId (or name), rssi, snr, sf, time; optional lat, lon'), importButton, importStatus);
  const describeImport = (answer: ReadingImportAnswer): HTMLElement =>
    h(
      'div',
      {},
      answer.valid
        ? notice(answer.dryRun ? 'info' : 'ok', answer.dryRun ? `${answer.rowCount} rows checked: ${answer.created} new reading(s) to store, ${answer.duplicates.length} duplicate(s) to skip.` : `${answer.created} reading(s) stored, ${answer.duplicates.length} duplicate(s) skipped.`)
        : notice('error', `Nothing can be imported: ${answer.errors.length} problem(s).`),
      answer.errors.length > 0 ? h('ul', { class: 'small', id: 'calibration-import-errors' }, ...answer.errors.slice(0, 20).map((e) => h('li', {}, `row ${e.row}, ${e.field}: ${e.message}`))) : null,
      answer.ignoredColumns.length > 0 ? h('p', { class: 'muted small' }, `Columns not used: ${answer.ignoredColumns.join(', ')}`) : null,
    );
  fileInput.addEventListener('change', () => {
    const file = fileInput.files?.[0];
    importButton.disabled = true;
    pendingText = null;
    if (!file) return;
    void file.text().then(async (text) => {
      importStatus.replaceChildren(h('p', { class: 'muted' }, 'Checking the file…'));
      try {
        const preview = await importReadings(store.planId, text, true);
        importStatus.replaceChildren(describeImport(preview));
        if (preview.valid && preview.created > 0) {
          pendingText = text;
          importButton.disabled = false;
          importButton.textContent = `Import ${preview.created} reading(s)`;
        }
      } catch (err) {
        importStatus.replaceChildren(notice('error', errorText(err)));
      }
    });
  });
  importButton.addEventListener('click', () => {
    if (!pendingText) return;
    importButton.disabled = true;
    void importReadings(store.planId, pendingText, false).then(
      (answer) => {
        pendingText = null;
        importStatus.replaceChildren(describeImport(answer));
        announce(`${answer.created} readings imported`);
      },
      (err: unknown) => {
        const rows = err instanceof ApiError && Array.isArray(err.detail) ? (err.detail as Array<{ row: number; field: string; message: string }>) : [];
        importStatus.replaceChildren(notice('error', errorText(err)), rows.length ? h('ul', { class: 'small' }, ...rows.slice(0, 20).map((e) => h('li', {}, `row ${e.row}, ${e.field}: ${e.message}`))) : '');
      },
    );
  });

  // ---------- one calibration ----------
  function showResult(result: CalibrationResult): void {
    clear(resultBox);
    append(
      resultBox,
      h('h3', {}, `Fit of ${new Date(result.createdAt).toLocaleString()} (${groupingLabels[result.grouping] ?? result.grouping})`),
      result.residuals.length > 0 ? residualChart(result) : null,
      result.grouping !== 'none' ? groupChart(result) : null,
      result.grouping !== 'none'
        ? h(
            'table',
            { class: 'data-table compact', id: 'calibration-groups' },
            h('thead', {}, h('tr', {}, h('th', {}, 'group'), h('th', { class: 'num' }, 'n'), h('th', { class: 'num' }, 'bias'), h('th', {}, '95 %'), h('th', { class: 'num' }, 'σ'))),
            h(
              'tbody',
              {},
              ...result.groups.map((g) => h('tr', {}, h('td', {}, g.key), h('td', { class: 'num' }, String(g.n)), h('td', { class: 'num' }, signed(g.biasDb)), h('td', {}, g.fitted ? interval(g.biasCi95Db) : (g.note ?? '')), h('td', { class: 'num' }, g.fitted ? db(g.sigmaDb) : '–'))),
            ),
          )
        : null,
      figuresTable(result),
      planner && !result.applied ? h('button', { type: 'button', class: 'primary', id: 'calibration-apply', onclick: () => void apply(result.id) }, 'Apply to the plan') : null,
    );
  }

  async function apply(id: string): Promise<void> {
    state.replaceChildren(h('p', { class: 'muted' }, 'Applying…'));
    try {
      const answer = await applyCalibration(store.planId, id);
      announce(`Calibration applied: bias ${signed(answer.applied.biasDb)}, σ ${db(answer.applied.sigmaDb)}`);
      await refreshAfterChange();
    } catch (err) {
      state.replaceChildren(notice('error', errorText(err)));
    }
  }

  async function revert(): Promise<void> {
    state.replaceChildren(h('p', { class: 'muted' }, 'Reverting…'));
    try {
      const answer = await revertCalibration(store.planId);
      announce(answer.restored ? 'Reverted to the calibration applied before' : 'Calibration reverted: predictions use the model as is');
      await refreshAfterChange();
    } catch (err) {
      state.replaceChildren(notice('error', errorText(err)));
    }
  }

  /** Statuses and margins change with a calibration: the fleet table is read again. */
  async function refreshAfterChange(): Promise<void> {
    await loadHistory();
    await store.loadFleet().catch(() => undefined);
    store.changed();
  }

  async function loadHistory(): Promise<void> {
    let history: Awaited<ReturnType<typeof listCalibrations>>;
    try {
      history = await listCalibrations(store.planId);
    } catch (err) {
      if (stopped) return;
      state.replaceChildren(notice('warn', `Calibrations are not available: ${errorText(err)}`));
      return;
    }
    if (stopped) return;
    const applied = history.items.find((c) => c.id === history.appliedId);
    state.replaceChildren(
      applied
        ? notice('ok', `Applied: bias ${signed(applied.biasDb)}, σ ${db(applied.sigmaDb)} from ${applied.n} readings (${new Date(applied.appliedAt ?? applied.createdAt).toLocaleString()}).`, planner ? h('button', { type: 'button', id: 'calibration-revert', onclick: () => void revert() }, 'Revert') : '')
        : h('p', { class: 'muted', id: 'calibration-none' }, 'No calibration applied: predictions use the model as is.'),
    );
    clear(historyBox);
    if (history.items.length === 0) return;
    historyBox.append(
      h(
        'table',
        { class: 'data-table compact' },
        h('caption', {}, 'Earlier fits'),
        h('thead', {}, h('tr', {}, h('th', {}, 'when'), h('th', { class: 'num' }, 'n'), h('th', { class: 'num' }, 'bias'), h('th', { class: 'num' }, 'σ'), h('th', {}, ''))),
        h(
          'tbody',
          {},
          ...history.items.map((c) =>
            h(
              'tr',
              {},
              h('td', {}, new Date(c.createdAt).toLocaleString()),
              h('td', { class: 'num' }, String(c.n)),
              h('td', { class: 'num' }, signed(c.biasDb)),
              h('td', { class: 'num' }, db(c.sigmaDb)),
              h('td', {}, c.applied ? h('strong', {}, 'applied') : h('button', { type: 'button', onclick: () => void getCalibration(store.planId, c.id).then(showResult, (err: unknown) => resultBox.replaceChildren(notice('error', errorText(err)))) }, 'Show')),
            ),
          ),
        ),
      ),
    );
  }

  fitButton.addEventListener('click', () => {
    fitButton.disabled = true;
    resultBox.replaceChildren(h('p', { class: 'muted' }, 'Pairing every reading with its prediction and fitting…'));
    void fitCalibration(store.planId, grouping.value as CalibrationGrouping)
      .then(
        (result) => {
          if (stopped) return;
          showResult(result);
          announce(`Fit: bias ${signed(result.biasDb)}, σ ${db(result.sigmaDb)}`);
          void loadHistory();
        },
        (err: unknown) => {
          if (!stopped) resultBox.replaceChildren(notice('error', errorText(err)));
        },
      )
      .finally(() => {
        fitButton.disabled = false;
      });
  });

  void loadHistory();
  return () => {
    stopped = true;
  };
}

/** A node's own readings beside the prediction for the same gateway (node panel). */
export function renderNodeReadings(box: HTMLElement, store: PlanStore, nodeId: string, signal: AbortSignal): void {
  box.append(h('h3', { id: 'node-readings-h' }, 'Field readings'), h('p', { class: 'muted' }, 'Loading…'));
  const gatewayName = (id: string | null): string => (id ? (store.gateways.find((g) => g.id === id)?.name ?? id) : 'gateway not recorded');
  void getNodeReadingsFor(store.planId, nodeId, signal).then(
    (answer) => {
      if (signal.aborted) return;
      clear(box);
      box.append(h('h3', { id: 'node-readings-h' }, `Field readings (${answer.total})`));
      if (answer.items.length === 0) {
        box.append(h('p', { class: 'muted' }, 'No readings recorded for this node yet.'));
        return;
      }
      const rows = answer.items.slice(0, 30).map((r: Reading & { measuredAt: string; sf: number }) =>
        h(
          'tr',
          {},
          h('td', {}, new Date(r.measuredAt).toLocaleString()),
          h('td', {}, gatewayName(r.gatewayId)),
          h('td', { class: 'num' }, `SF${r.sf}`),
          h('td', { class: 'num' }, dbm(r.rssiDbm)),
          h('td', { class: 'num' }, dbm(r.predictedRssiDbm)),
          h('td', { class: 'num' }, signed(r.rssiDifferenceDb ?? undefined)),
        ),
      );
      append(
        box,
        h(
          'div',
          { class: 'table-scroll' },
          h(
            'table',
            { class: 'data-table compact', id: 'node-readings' },
            h('thead', {}, h('tr', {}, h('th', {}, 'when'), h('th', {}, 'gateway'), h('th', { class: 'num' }, 'SF'), h('th', { class: 'num' }, 'measured'), h('th', { class: 'num' }, 'predicted'), h('th', { class: 'num' }, 'difference'))),
            h('tbody', {}, ...rows),
          ),
        ),
        answer.meanRssiDifferenceDb !== null ? h('p', { class: 'small' }, `Mean difference (measured − predicted): ${signed(answer.meanRssiDifferenceDb)}`) : null,
      );
    },
    (err: unknown) => {
      if (signal.aborted || isAbort(err)) return;
      clear(box);
      box.append(h('h3', { id: 'node-readings-h' }, 'Field readings'), notice('warn', errorText(err)));
    },
  );
}
