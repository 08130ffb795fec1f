// Coverage: start a run for one gateway or all of them, follow its progress,
// cancel it, and show the finished raster as a map overlay (margin, or the
// redundancy composite: how many gateways hear each cell) with opacity and
// the legend the server publishes.
import * as L from 'leaflet';
import {
  ApiError,
  cancelCoverage,
  coverageTileUrl,
  getCoverage,
  getCoverageLegend,
  listCoverage,
  runState,
  startCoverage,
  type CoverageRequest,
  type CoverageRun,
} from '../api.ts';
import type { PlanStore } from '../plan-store.ts';
import { canEdit } from '../session.ts';
import { announce, clear, errorText, field, h, notice, present, select } from '../ui.ts';

const pollMs = 700;

export function renderCoveragePanel(panel: HTMLElement, store: PlanStore, map: L.Map): () => void {
  let overlay: L.TileLayer | null = null;
  let timer: number | undefined;
  let stopped = false;
  let opacity = 0.65;

  panel.append(h('h2', { id: 'coverage-h' }, 'Coverage'));
  const gw = select(
    [{ value: '', label: `All gateways (composite, ${store.gateways.length})` }, ...store.gateways.map((g) => ({ value: g.id, label: g.name }))],
    '',
    { id: 'coverage-gateway' },
  );
  const mode = select(
    [
      { value: 'fast', label: 'fast: diffraction + free space + clutter' },
      { value: 'los', label: 'los: line of sight only' },
      { value: 'full', label: 'full: ITU-R P.1812 every cell (slow)' },
    ],
    'fast',
    { id: 'coverage-mode' },
  );
  const radius = h('input', { id: 'coverage-radius', type: 'number', min: '0.5', max: '100', step: '0.5', value: '5' });
  const rxHeight = h('input', { id: 'coverage-rx-height', type: 'number', min: '0.1', max: '30', step: '0.1', value: '1.5' });
  const startButton = h('button', { type: 'button', id: 'coverage-start', class: 'primary' }, 'Start coverage run');
  const runBox = h('div', { id: 'coverage-run', 'aria-live': 'polite' });
  const overlayBox = h('div', { id: 'coverage-overlay-controls' });
  const form = h(
    'div',
    { class: 'coverage-form' },
    field('Gateways', gw),
    field('Method', mode),
    field('Radius (km)', radius),
    field('Node antenna height (m)', rxHeight, 'Height above ground of the receiving node in each cell'),
    canEdit() ? startButton : h('p', { class: 'muted small' }, 'Only planners start coverage runs; finished runs can be shown.'),
  );
  panel.append(form, runBox, overlayBox);

  const showOverlay = async (run: CoverageRun): Promise<void> => {
    clear(overlayBox);
    if (overlay) map.removeLayer(overlay);
    const composite = !run.gatewayId && (!Array.isArray(run.gatewayIds) || (run.gatewayIds as unknown[]).length !== 1);
    const layers = composite
      ? [
          { value: 'margin', label: 'Best margin (best server)' },
          { value: 'redundancy', label: 'Redundancy: gateways heard with margin' },
        ]
      : [{ value: 'margin', label: 'Margin' }];
    const layerSelect = select(layers, 'margin', { id: 'coverage-layer' });
    const show = h('input', { type: 'checkbox', id: 'coverage-show' });
    show.checked = true;
    const range = h('input', { type: 'range', id: 'coverage-opacity', min: '0', max: '1', step: '0.05', value: String(opacity) });
    const legendBox = h('div', { class: 'legend', id: 'coverage-legend' });
    const useLayer = async (layer: string): Promise<void> => {
      if (overlay) map.removeLayer(overlay);
      overlay = L.tileLayer(coverageTileUrl(store.planId, run.id, layer === 'margin' ? undefined : layer), { opacity, maxZoom: 18, zIndex: 10 });
      if (show.checked) overlay.addTo(map);
      clear(legendBox);
      try {
        const entries = await getCoverageLegend(store.planId, run.id, layer === 'margin' ? undefined : layer);
        legendBox.append(
          h('h3', {}, layer === 'redundancy' ? 'Gateways heard' : 'Margin at the target SF'),
          h(
            'ul',
            {},
            ...entries.map((e) => h('li', {}, h('span', { class: 'swatch', style: `background:${e.color}`, 'aria-hidden': 'true' }), e.label)),
          ),
        );
      } catch (err) {
        legendBox.append(notice('info', `Legend not available: ${errorText(err)}`));
      }
    };
    layerSelect.addEventListener('change', () => void useLayer(layerSelect.value));
    show.addEventListener('change', () => {
      if (!overlay) return;
      if (show.checked) overlay.addTo(map);
      else map.removeLayer(overlay);
    });
    range.addEventListener('input', () => {
      opacity = Number(range.value);
      overlay?.setOpacity(opacity);
    });
    overlayBox.append(
      ...present<HTMLElement>(
      h('label', { class: 'toggle' }, show, 'Show coverage overlay'),
      field('Overlay layer', layerSelect),
      field('Overlay opacity', range),
      legendBox,
      summaryOf(run),
      ),
    );
    await useLayer('margin');
  };

  const follow = (run: CoverageRun): void => {
    window.clearTimeout(timer);
    const state = runState(run);
    const pct = Math.round(Math.max(0, Math.min(1, run.progress ?? 0)) * (run.progress !== undefined && run.progress > 1 ? 1 : 100));
    clear(runBox);
    if (state === 'queued' || state === 'running') {
      const bar = h('progress', { id: 'coverage-progress', max: '100', value: String(pct), 'aria-label': 'Coverage run progress' });
      const cancel = h('button', { type: 'button', id: 'coverage-cancel' }, 'Cancel run');
      cancel.addEventListener('click', () => {
        cancel.disabled = true;
        void cancelCoverage(store.planId, run.id)
          .then((r) => follow(r))
          .catch((err: unknown) => runBox.append(notice('error', `Cancel failed: ${errorText(err)}`)));
      });
      runBox.append(h('p', { id: 'coverage-state' }, state === 'queued' ? 'Queued: waiting for a worker…' : `Running: ${pct} %`), ...present<HTMLElement>(bar, canEdit() ? cancel : null));
      startButton.disabled = true;
      timer = window.setTimeout(() => {
        if (stopped) return;
        void getCoverage(store.planId, run.id)
          .then((r) => follow(r))
          .catch((err: unknown) => {
            clear(runBox);
            runBox.append(notice('error', `Lost track of the run: ${errorText(err)}`));
            startButton.disabled = false;
          });
      }, pollMs);
      return;
    }
    startButton.disabled = false;
    if (state === 'done') {
      runBox.append(notice('ok', h('span', { id: 'coverage-state' }, 'Coverage run finished. The overlay is on the map.')));
      announce('Coverage run finished');
      void showOverlay(run);
    } else if (state === 'cancelled') {
      runBox.append(notice('info', h('span', { id: 'coverage-state' }, 'Coverage run cancelled.')));
    } else {
      runBox.append(notice('error', h('span', { id: 'coverage-state' }, `Coverage run failed: ${run.error ?? 'no reason given'}`)));
    }
  };

  startButton.addEventListener('click', () => {
    const radiusKm = Number(radius.value);
    const targetHeightM = Number(rxHeight.value);
    if (!(radiusKm > 0) || !(targetHeightM > 0)) {
      clear(runBox);
      runBox.append(notice('error', 'Radius (km) and node antenna height (m) must be numbers above 0.'));
      return;
    }
    const body: CoverageRequest = { mode: mode.value as CoverageRequest['mode'], radiusKm, targetHeightM };
    if (gw.value) body.gatewayIds = [gw.value];
    startButton.disabled = true;
    clear(runBox);
    runBox.append(h('p', {}, 'Starting…'));
    void startCoverage(store.planId, body)
      .then((run) => follow(run))
      .catch((err: unknown) => {
        startButton.disabled = false;
        clear(runBox);
        runBox.append(
          err instanceof ApiError && err.notAvailable
            ? notice('info', 'Coverage runs are not available on this server yet.')
            : notice('error', `The run did not start: ${errorText(err)}`),
        );
      });
  });

  // A run still going (or the latest finished one) from an earlier visit.
  void listCoverage(store.planId)
    .then((runs) => {
      if (stopped || runs.length === 0) return;
      const latest = runs[0];
      const state = runState(latest);
      if (state === 'queued' || state === 'running' || state === 'done') follow(latest);
    })
    .catch(() => undefined);

  return () => {
    stopped = true;
    window.clearTimeout(timer);
  };
}

function summaryOf(run: CoverageRun): HTMLElement | null {
  const summary = run.summary as Record<string, unknown> | null | undefined;
  if (!summary) return null;
  const rows: HTMLElement[] = [];
  const add = (label: string, value: unknown, unit = ''): void => {
    if (typeof value === 'number' && Number.isFinite(value)) rows.push(h('dt', {}, label), h('dd', {}, `${value.toFixed(unit === '%' ? 1 : 2)}${unit ? ` ${unit}` : ''}`));
  };
  const share = (v: unknown): number | undefined => (typeof v === 'number' ? v * 100 : undefined);
  add('Area computed', summary.areaKm2, 'km²');
  add('Area served', summary.servedAreaKm2, 'km²');
  add('Nodes served', share(summary.servedShare), '%');
  add('Nodes marginal', share(summary.marginalShare), '%');
  add('Nodes unserved', share(summary.unservedShare), '%');
  add('Cells', summary.cells);
  add('Seconds', summary.seconds, 's');
  return rows.length ? h('dl', { class: 'facts' }, ...rows) : null;
}
