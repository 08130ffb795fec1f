// Coverage: start a run for one gateway or all of them (a composite: best
// server per cell), follow its progress, cancel it, and show the finished
// margin raster as a map overlay with opacity and the server's legend. Progress
// comes from the run's server-sent events (GET .../coverage/:runId/events); if the
// stream cannot be used (a pasted API token: EventSource sends no Authorization
// header) or fails, the panel polls GET .../coverage/:runId instead. The
// redundancy composite (how many gateways hear each cell) is offered as a
// GeoTIFF; on the map, redundancy per node is its own layer (see map.ts).
import * as L from 'leaflet';
import {
  ApiError,
  cancelCoverage,
  coverageEventsUrl,
  coverageGeoTiffUrl,
  coverageTileUrl,
  getCoverage,
  getCoverageLegend,
  listCoverage,
  startCoverage,
  storedToken,
  type ClientSettings,
  type CoverageRequest,
  type CoverageRun,
  type RunState,
} from '../api.ts';
import type { PlanStore } from '../plan-store.ts';
import { planInputs, staleReason } from '../coverage-stale.ts';
import { planUplinkSfs } from '../uplink-sfs.ts';
import { applyRange, rangeProblem } from '../ranges.ts';
import { canEdit } from '../session.ts';
import { announce, clear, errorText, field, h, notice, percent, present, select } from '../ui.ts';

const pollMs = 700;
const finished: RunState[] = ['done', 'failed', 'cancelled'];

/** One `progress` event of GET .../coverage/:runId/events. */
interface ProgressEvent {
  status: RunState;
  progress: number;
  error: string | null;
}

export function renderCoveragePanel(panel: HTMLElement, store: PlanStore, map: L.Map, settings?: Pick<ClientSettings, 'bandPlans'>): () => void {
  let overlay: L.TileLayer | null = null;
  let timer: number | undefined;
  let stopped = false;
  let opacity = 0.65;
  /** The open progress stream and the run it follows. */
  let source: EventSource | null = null;
  let sourceRunId = '';
  /** Off after a stream failed once: this panel polls from then on. */
  let streamUsable = typeof EventSource !== 'undefined' && storedToken() === null;
  const closeSource = (): void => {
    source?.close();
    source = null;
    sourceRunId = '';
  };

  panel.append(h('h2', { id: 'coverage-h' }, 'Coverage'));
  const gw = select(
    [{ value: '', label: `All gateways: composite (${store.gateways.length})` }, ...store.gateways.map((g) => ({ value: g.id, label: g.name }))],
    '',
    { id: 'coverage-gateway' },
  );
  const mode = select(
    [
      { value: 'fast', label: 'fast: Bullington diffraction + free space + clutter' },
      { value: 'full', label: 'full: ITU-R P.1812 for every cell (slow)' },
    ],
    defaultMode(store.plan.propagationMethod),
    { id: 'coverage-mode' },
  );
  const radiusKey = `earshot.coverage-radius.${store.planId}`;
  const radius = h('input', { id: 'coverage-radius', type: 'number', min: '0.5', max: '100', step: '0.5', value: keptRadius(radiusKey) ?? '5' });
  // The radius is kept per plan across reloads (the rest follows the plan and its nodes).
  radius.addEventListener('change', () => {
    if (rangeProblem('Radius (km)', radius) === null) safeStorage()?.setItem(radiusKey, radius.value);
  });
  // The node kit every cell is drawn for: the same fields as a node (antenna, height, power, feedline, environment).
  const antennas = store.catalog.antennas;
  const nodeAntenna = select(
    antennas.length > 0 ? antennas.map((a) => ({ value: a.id, label: `${a.name} (${a.gainDbi} dBi)` })) : [{ value: 'helical-stub', label: 'helical-stub' }],
    antennas.some((a) => a.id === 'helical-stub') || antennas.length === 0 ? 'helical-stub' : antennas[0].id,
    { id: 'coverage-antenna' },
  );
  const rxHeight = h('input', { id: 'coverage-rx-height', type: 'number', min: '-10', max: '200', step: '0.1', value: '1.5' });
  const txPower = h('input', { id: 'coverage-tx-power', type: 'number', min: '-10', max: '30', step: '0.5', value: '14' });
  const feedline = select(
    [{ value: '', label: 'none (antenna on the radio)' }, ...store.catalog.feedlines.map((f) => ({ value: f.id, label: f.name }))],
    '',
    { id: 'coverage-feedline' },
  );
  const feedlineLength = h('input', { id: 'coverage-feedline-length', type: 'number', min: '0', max: '500', step: '0.5', value: '0' });
  const environment = select(
    [
      { value: 'outdoor', label: 'outdoor' },
      { value: 'indoor', label: 'indoor (building entry loss)' },
      { value: 'pit', label: 'pit / meter box' },
    ],
    'outdoor',
    { id: 'coverage-environment' },
  );
  // The payload every cell must carry: the plan's (its largest node payload), as nodes do.
  const planPayload = store.nodes.reduce((most, n) => Math.max(most, Number(n.payloadBytes ?? 0)), 0) || 12;
  const payload = h('input', { id: 'coverage-payload', type: 'number', min: '1', max: '255', step: '1', value: String(planPayload) });
  applyRange(payload, 'payloadBytes');
  // The band plan's uplink SFs with their payload maxima (GET /client-settings); the node SF
  // rule (server/planning/settings.ts sfsCarrying) allows an SF when the payload fits its maximum.
  const uplinkSfs = planUplinkSfs(settings, store.plan);
  const sf = select([], '', { id: 'coverage-sf' });
  const fillSfs = (): void => {
    const bytes = Number(payload.value);
    const keep = sf.value;
    sf.replaceChildren(h('option', { value: '' }, 'as a node: the fastest SF that carries the payload and meets the margin'));
    for (const { sf: v, maxAppPayloadBytes: max } of uplinkSfs) {
      const carries = max === null || !Number.isFinite(bytes) || bytes <= max;
      const option = h('option', { value: String(v) }, carries ? `fixed SF${v}` : `fixed SF${v} (carries at most ${max} bytes)`);
      option.disabled = !carries;
      sf.append(option);
    }
    sf.value = [...sf.options].some((o) => o.value === keep && !o.disabled) ? keep : '';
  };
  fillSfs();
  payload.addEventListener('input', fillSfs);
  applyRange(rxHeight, 'nodeAntennaHeightAglM');
  applyRange(txPower, 'nodeTxPowerDbm');
  applyRange(feedlineLength, 'nodeFeedlineLengthM');
  applyRange(radius, 'coverageRadiusKm');
  const margin = h('input', { id: 'coverage-margin', type: 'number', min: '-20', max: '60', step: '0.5', value: String(store.plan.targetMarginDb ?? 10) });
  applyRange(margin, 'targetMarginDb');
  const startButton = h('button', { type: 'button', id: 'coverage-start', class: 'primary' }, 'Start coverage run');
  const runBox = h('div', { id: 'coverage-run', 'aria-live': 'polite' });
  const overlayBox = h('div', { id: 'coverage-overlay-controls' });
  const form = h(
    'div',
    { class: 'coverage-form' },
    field('Gateways', gw),
    field('Method', mode),
    field('Radius around each gateway (km)', radius),
    field('Node antenna', nodeAntenna, 'Each cell shows the margin a node with this kit would have there'),
    field('Node antenna height (m)', rxHeight, 'Height above ground of the node antenna in each cell'),
    field('Node transmit power (dBm)', txPower),
    field('Node feedline', feedline),
    field('Feedline length (m)', feedlineLength),
    field('Node environment', environment),
    field('Payload (bytes)', payload, 'Default: the largest payload of the plan’s nodes'),
    field('Spreading factor', sf),
    field('Target margin for this run (dB)', margin, 'Cells at or above it count as served (starts at the plan target margin)'),
    canEdit() ? startButton : h('p', { class: 'muted small' }, 'Only planners start coverage runs; finished runs can be shown.'),
  );
  panel.append(form, runBox, overlayBox);

  // ---------- freshness: is the overlay on the map still what the plan would give? ----------
  const staleBox = h('div', { id: 'coverage-freshness', 'aria-live': 'polite' });
  const staleBadge = h('div', { class: 'map-badge stale-badge', id: 'coverage-stale-badge', hidden: true }, 'Coverage overlay out of date');
  const BadgeControl = L.Control.extend({ onAdd: () => staleBadge });
  const badgeControl = new BadgeControl({ position: 'topright' });
  badgeControl.addTo(map);
  /** The run the overlay shows and the plan's inputs when it was put on the map. */
  let shown: { run: CoverageRun; inputs: string } | null = null;
  const markFreshness = (): void => {
    if (!shown) {
      staleBox.replaceChildren();
      staleBadge.hidden = true;
      return;
    }
    const reason = staleReason(store, shown.run, shown.inputs);
    staleBadge.hidden = reason === null;
    overlay?.getContainer()?.classList.toggle('coverage-stale', reason !== null);
    staleBox.replaceChildren(
      reason === null
        ? h('p', { class: 'muted small', id: 'coverage-fresh' }, 'The overlay matches the plan as it is now.')
        : notice('warn', h('span', { id: 'coverage-stale' }, `Out of date: ${reason}. `), canEdit() ? 'Start a new run to see the coverage the plan gives now.' : 'A planner can start a new run.'),
    );
  };
  /** The gateway list follows the plan (a gateway added or renamed on the map). */
  const refreshGateways = (): void => {
    const keep = gw.value;
    gw.replaceChildren(
      h('option', { value: '' }, `All gateways: composite (${store.gateways.length})`),
      ...store.gateways.map((g) => h('option', { value: g.id }, g.name)),
    );
    gw.value = store.gateways.some((g) => g.id === keep) ? keep : '';
  };
  const unsubscribe = store.onChange(() => {
    refreshGateways();
    markFreshness();
  });

  const showOverlay = async (run: CoverageRun): Promise<void> => {
    clear(overlayBox);
    if (overlay) map.removeLayer(overlay);
    shown = { run, inputs: planInputs(store) };
    overlay = L.tileLayer(coverageTileUrl(store.planId, run.id), { opacity, maxZoom: 18, zIndex: 10, className: 'coverage-tiles' });
    overlay.addTo(map);
    const show = h('input', { type: 'checkbox', id: 'coverage-show' });
    show.checked = true;
    const range = h('input', { type: 'range', id: 'coverage-opacity', min: '0', max: '1', step: '0.05', value: String(opacity) });
    const legendBox = h('div', { class: 'legend', id: 'coverage-legend' });
    show.addEventListener('change', () => {
      if (!overlay) return;
      if (show.checked) overlay.addTo(map);
      else map.removeLayer(overlay);
    });
    range.addEventListener('input', () => {
      opacity = Number(range.value);
      overlay?.setOpacity(opacity);
    });
    const composite = run.gatewayIds.length > 1;
    overlayBox.append(
      ...present<HTMLElement>(
        staleBox,
        h('label', { class: 'toggle' }, show, composite ? 'Show coverage overlay (best server margin)' : 'Show coverage overlay (margin)'),
        field('Overlay opacity', range),
        legendBox,
        summaryOf(run),
        h(
          'p',
          { class: 'small' },
          'GeoTIFF for GIS: ',
          h('a', { href: coverageGeoTiffUrl(store.planId, run.id, 'margin'), download: '' }, 'margin (dB)'),
          ' · ',
          h('a', { href: coverageGeoTiffUrl(store.planId, run.id, 'redundancy'), download: '' }, 'redundancy (gateways heard)'),
          ' · ',
          h('a', { href: coverageGeoTiffUrl(store.planId, run.id, 'best-sf'), download: '' }, 'best SF'),
        ),
      ),
    );
    markFreshness();
    try {
      const legend = await getCoverageLegend();
      legendBox.append(
        h('h3', {}, `Legend: ${legend.quantity}`),
        h('ul', {}, ...legend.classes.map((c) => h('li', {}, h('span', { class: 'swatch', style: `background:${c.colour}`, 'aria-hidden': 'true' }), `${c.label}`))),
        h('p', { class: 'muted small' }, `Transparent: ${legend.transparent}.`),
      );
    } catch (err) {
      legendBox.append(notice('info', `Legend: ${errorText(err)}`));
    }
  };

  const follow = (run: CoverageRun): void => {
    window.clearTimeout(timer);
    const state = run.status;
    const pct = Math.round(Math.max(0, Math.min(1, run.progress)) * 100);
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
      runBox.append(
        h('p', { id: 'coverage-state' }, state === 'queued' ? 'Queued: waiting for a worker…' : `Running: ${pct} %`),
        ...present<HTMLElement>(bar, canEdit() ? cancel : null),
      );
      startButton.disabled = true;
      watch(run);
      return;
    }
    closeSource();
    startButton.disabled = false;
    const what = `${run.mode ?? ''} run, ${run.radiusKm ?? '–'} km, ${run.sf ? `SF${run.sf}` : 'node SF rule'}, margin ≥ ${run.targetMarginDb ?? '–'} dB`;
    if (state === 'done') {
      runBox.append(notice('ok', h('span', { id: 'coverage-state' }, `Coverage run finished (${what}). The overlay is on the map.`)));
      announce('Coverage run finished');
      void showOverlay(run);
    } else if (state === 'cancelled') {
      runBox.append(notice('info', h('span', { id: 'coverage-state' }, `Coverage run cancelled (${what}).`)));
    } else {
      runBox.append(notice('error', h('span', { id: 'coverage-state' }, `Coverage run failed: ${run.error ?? 'no reason given'}`)));
    }
  };

  /** Reads the whole run (summary, settings) and shows it. */
  const refetch = (runId: string): void => {
    if (stopped) return;
    void getCoverage(store.planId, runId)
      .then((r) => {
        if (!stopped) follow(r);
      })
      .catch((err: unknown) => {
        closeSource();
        clear(runBox);
        runBox.append(notice('error', `Lost track of the run: ${errorText(err)}`));
        startButton.disabled = false;
      });
  };

  /** Follows a queued or running run: its event stream when possible, else polling. */
  const watch = (run: CoverageRun): void => {
    if (stopped) return;
    if (!streamUsable) {
      timer = window.setTimeout(() => refetch(run.id), pollMs);
      return;
    }
    if (source && sourceRunId === run.id) return; // already streaming this run
    closeSource();
    const stream = new EventSource(coverageEventsUrl(store.planId, run.id), { withCredentials: true });
    source = stream;
    sourceRunId = run.id;
    stream.addEventListener('progress', (event: MessageEvent<string>) => {
      if (source !== stream) return;
      let update: ProgressEvent;
      try {
        update = JSON.parse(event.data) as ProgressEvent;
      } catch {
        return;
      }
      // A finished run: read it whole (summary, settings) and show the overlay.
      if (finished.includes(update.status)) {
        closeSource();
        refetch(run.id);
      } else {
        follow({ ...run, status: update.status, progress: update.progress, error: update.error });
      }
    });
    stream.addEventListener('end', () => {
      if (source !== stream) return;
      closeSource();
      refetch(run.id);
    });
    // The stream failed (or the server closed it without an end): poll this panel's runs from now on.
    stream.addEventListener('error', () => {
      if (source !== stream) return;
      closeSource();
      streamUsable = false;
      refetch(run.id);
    });
  };

  startButton.addEventListener('click', () => {
    const radiusKm = Number(radius.value);
    const targetMarginDb = Number(margin.value);
    const problems = [
      rangeProblem('Radius (km)', radius),
      rangeProblem('Node antenna height (m)', rxHeight),
      rangeProblem('Node transmit power (dBm)', txPower),
      rangeProblem('Feedline length (m)', feedlineLength),
      rangeProblem('Target margin for this run (dB)', margin),
      rangeProblem('Payload (bytes)', payload),
    ].filter((p): p is string => p !== null);
    if (problems.length > 0) {
      clear(runBox);
      runBox.append(notice('error', problems.join(' ')));
      return;
    }
    const body: CoverageRequest = {
      mode: mode.value as 'fast' | 'full',
      radiusKm,
      targetMarginDb,
      nodeKit: {
        antennaDesignId: nodeAntenna.value,
        antennaHeightAglM: Number(rxHeight.value),
        txPowerDbm: Number(txPower.value),
        feedlineId: feedline.value === '' ? null : feedline.value,
        feedlineLengthM: feedline.value === '' ? 0 : Number(feedlineLength.value),
        environment: environment.value as 'outdoor' | 'indoor' | 'pit',
        payloadBytes: Number(payload.value),
      },
    };
    if (sf.value !== '') body.sf = Number(sf.value);
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
      if (latest.status === 'queued' || latest.status === 'running' || latest.status === 'done') follow(latest);
    })
    .catch(() => undefined);

  return () => {
    stopped = true;
    unsubscribe();
    badgeControl.remove();
    closeSource();
    window.clearTimeout(timer);
  };
}

/** The coverage method that matches the plan's own: full P.1812 when the plan predicts with it. */
function defaultMode(method: unknown): 'fast' | 'full' {
  return method === 'p1812' ? 'full' : 'fast';
}

function safeStorage(): Storage | null {
  try {
    return window.localStorage;
  } catch {
    return null;
  }
}

function keptRadius(key: string): string | null {
  const value = safeStorage()?.getItem(key) ?? null;
  return value !== null && Number.isFinite(Number(value)) && Number(value) > 0 ? value : null;
}

function summaryOf(run: CoverageRun): HTMLElement | null {
  const s = run.summary;
  if (!s) return null;
  const area = (label: string, a: { share: number; areaKm2: number }): HTMLElement[] => [h('dt', {}, label), h('dd', {}, `${a.areaKm2.toFixed(2)} km² (${percent(a.share)})`)];
  return h(
    'div',
    { id: 'coverage-summary' },
    h(
      'dl',
      { class: 'facts' },
      h('dt', {}, 'Area computed'),
      h('dd', {}, `${s.areaKm2.toFixed(2)} km²`),
      ...area('Served', s.served),
      ...area('Marginal', s.marginal),
      ...area('Unserved', s.unserved),
      h('dt', {}, 'Nodes in area'),
      h('dd', {}, `${s.nodes.served} served, ${s.nodes.marginal} marginal, ${s.nodes.unserved} unserved, ${s.nodes.outside} outside (of ${s.nodes.total})`),
    ),
    s.gateways.length > 1
      ? h('p', { class: 'small' }, 'Best server load: ', s.gateways.map((g) => `${g.name} ${g.nodes} node(s)`).join(', '), '.')
      : null,
    s.terrain ? h('p', { class: 'small', id: 'coverage-terrain-note' }, `Terrain: ${s.terrain.note}.`, s.terrain.nodesOutside.length > 0 ? ` Outside: ${s.terrain.nodesOutside.map((n) => n.name ?? n.id).join(', ')}.` : '') : null,
  );
}
