// The plan map: the plan's own hillshade as base layer (works offline),
// nodes by status (shape + colour), gateways, candidate sites, coverage
// overlays; planner editing (add, drag, edit, delete, import, undo); the
// side panel shows the selected object (the node panel has the link check).
import * as L from 'leaflet';
import { ApiError, getClientSettings, isAbort, hillshadeTileUrl, listTerrain, type ClientSettings, type Entity, type EntityKind, type FleetNode } from '../api.ts';
import { explainWriteError, PlanStore } from '../plan-store.ts';
import type { Route } from '../router.ts';
import { canEdit } from '../session.ts';
import { announce, append, clear, coords, errorText, h, metres, notice, openDialog } from '../ui.ts';
import { gatewaySymbolSvg, nodeSymbolSvg, siteSymbolSvg, statusStyle, symbolElement, type NodeClass } from '../symbols.ts';
import { kindLabel, openEditDialog } from './edit-dialog.ts';
import { openImportDialog } from './import-dialog.ts';
import { openTerrainUploadDialog } from './terrain-upload.ts';
import { gatewayCheckBlock, liveGatewayCheck } from './gateway-check.ts';
import { getGatewayChecks } from '../api-gateways.ts';
import { insideBox, layerBox, type LonLatBox } from '../api-terrain.ts';
import { openPlanSettingsDialog } from './plan-settings-dialog.ts';
import { renderNodePanel } from './node-panel.ts';
import { renderCoveragePanel } from './coverage-panel.ts';
import { renderCalibrationPanel } from './calibration-panel.ts';

export function nodeClass(store: PlanStore, nodeId: string): NodeClass {
  return store.fleet.get(nodeId)?.status ?? 'unknown';
}

export async function renderMap(main: HTMLElement, route: Route): Promise<() => void> {
  const planId = route.planId as string;
  const store = new PlanStore(planId);
  const loading = h('p', { class: 'muted' }, 'Loading the plan…');
  main.append(loading);
  await store.load();
  loading.remove();

  const mapEl = h('div', { class: 'map', id: 'plan-map', role: 'region', 'aria-label': `Map of plan ${store.plan.name}` });
  const sidebar = h('aside', { class: 'sidebar', 'aria-label': 'Plan tools' });
  const detail = h('section', { class: 'panel detail', id: 'detail-panel', tabindex: '-1', 'aria-label': 'Selected object' });
  main.append(h('div', { class: 'map-layout' }, h('div', { class: 'map-wrap' }, mapEl), sidebar));

  const map = L.map(mapEl, { zoomControl: true, keyboard: true, attributionControl: true, preferCanvas: false });
  map.attributionControl.setPrefix(false);
  const hillshade = L.tileLayer(hillshadeTileUrl(planId), {
    maxZoom: 18,
    minZoom: 5,
    attribution: 'Hillshade from the plan’s terrain layers',
  });
  let terrainNote = '';
  /** Extents of the plan's elevation layers: where a node can be predicted at all. */
  const terrainBoxes: LonLatBox[] = [];
  try {
    const layers = await listTerrain(planId);
    for (const layer of layers) {
      const box = layer.kind === 'clutter' ? null : layerBox(layer);
      if (box) terrainBoxes.push(box);
    }
    if (layers.length === 0) terrainNote = 'This plan has no terrain layer yet: the base layer is blank until one is uploaded.';
    else if (layers.some((l) => /synthetic/i.test(String(l.name ?? '') + String(l.source ?? '') + String(l.notes ?? ''))))
      terrainNote = 'Terrain: synthetic demo terrain (not a real place).';
  } catch (err) {
    terrainNote = `Terrain layers: ${errorText(err)}.`;
  }
  // Without terrain the server has no hillshade to send (404 per tile): the layer joins on upload.
  if (terrainBoxes.length > 0) hillshade.addTo(map);
  // An online base layer only when the server is configured with one (EARSHOT_BASE_LAYER_URL,
  // handed over by GET /client-settings); offered as a toggle, off by default.
  let settings: ClientSettings = { onlineBaseLayer: null, bandPlans: [], propagationMethods: [] };
  try {
    settings = await getClientSettings();
  } catch {
    // An older server without the route: offline only, as by default.
  }
  const onlineLayer = settings.onlineBaseLayer;
  const online = onlineLayer ? L.tileLayer(onlineLayer.urlTemplate, { maxZoom: 19, attribution: onlineLayer.attribution ?? 'Online base layer (configured on the server)' }) : null;

  // Map tools: a metric scale bar and the coordinates under the pointer (or of the map centre).
  L.control.scale({ metric: true, imperial: false, position: 'bottomleft' }).addTo(map);
  const readout = h('div', { class: 'coord-readout', id: 'coord-readout', 'aria-live': 'off' });
  const ReadoutControl = L.Control.extend({ onAdd: () => readout });
  new ReadoutControl({ position: 'bottomleft' }).addTo(map);
  const showCentre = (): void => {
    const c = map.getCenter();
    mapEl.dataset.centre = `${c.lat.toFixed(6)},${c.lng.toFixed(6)}`;
    readout.textContent = `centre ${coords(c.lat, c.lng)}`;
  };
  map.on('moveend', showCentre);
  map.on('mousemove', (event: L.LeafletMouseEvent) => {
    readout.textContent = coords(event.latlng.lat, event.latlng.lng);
  });
  map.on('mouseout', showCentre);

  const nodeLayer = L.layerGroup().addTo(map);
  const gatewayLayer = L.layerGroup().addTo(map);
  const siteLayer = L.layerGroup().addTo(map);
  // Redundancy composite per node: how many gateways hear it (margin ≥ 0 dB), from the fleet table.
  const redundancyLayer = L.layerGroup();
  /** One marker per object, keyed `kind:id`; `look` is what it was drawn from (redrawn only when it changes). */
  const markers = new Map<string, { marker: L.Marker; look: string }>();
  let selected: { kind: EntityKind; id: string } | null = null;
  /** Aborts the open node panel's requests (links, check, recommendation, kit preview). */
  let panelRequests: AbortController | null = null;
  const abortPanelRequests = (): void => {
    panelRequests?.abort();
    panelRequests = null;
  };
  /** id:version of the object the detail panel shows, to re-render it when it changes. */
  let shownVersion = '';

  // ---------- sidebar: layers ----------
  const planTitle = h('h2', { id: 'layers-h' }, store.plan.name);
  const layersPanel = h('section', { class: 'panel', 'aria-labelledby': 'layers-h' }, planTitle);
  const methodName = (id: unknown): string => String(id ?? '–');
  const planLine = h('p', { class: 'muted', id: 'plan-settings-line' });
  const showPlanLine = (): void => {
    const p = store.plan;
    const band = settings.bandPlans.find((b) => b.id === p.bandPlanId)?.name ?? p.bandPlanId ?? '–';
    planTitle.textContent = p.name;
    planLine.textContent = `Target margin ${p.targetMarginDb ?? '–'} dB · band plan ${band} · σL ${p.locationSigmaDb === null || p.locationSigmaDb === undefined ? 'P.1812 §4.8' : `${p.locationSigmaDb} dB`}, σM ${p.modelSigmaDb === null || p.modelSigmaDb === undefined ? 'default 6 dB' : `${String(p.modelSigmaDb)} dB`} · method ${methodName(p.propagationMethod)}`;
  };
  showPlanLine();
  const toggle = (label: string, layer: L.Layer, on: boolean, symbol?: HTMLElement): HTMLElement => {
    const box = h('input', { type: 'checkbox' });
    box.checked = on;
    box.addEventListener('change', () => {
      if (box.checked) map.addLayer(layer);
      else map.removeLayer(layer);
    });
    return h('label', { class: 'toggle' }, box, symbol ?? null, label);
  };
  const counts = h('p', { class: 'muted', id: 'fleet-counts' });
  const terrainNoteEl = h('p', { class: 'muted small', id: 'terrain-note' }, terrainNote);
  /** Moves the map onto a set of points (imported nodes, a new layer). */
  const fitTo = (points: Array<{ lat: number; lon: number }>): void => {
    if (points.length === 0) return;
    map.fitBounds(L.latLngBounds(points.map((p) => [p.lat, p.lon] as L.LatLngTuple)), { padding: [30, 30], maxZoom: 15 });
  };
  append(
    layersPanel,
    planLine,
    canEdit() ? h('div', { class: 'button-row' }, h('button', { type: 'button', id: 'plan-settings-button', onclick: () => openPlanSettingsDialog(store, settings, showPlanLine) }, 'Plan settings')) : null,
    h(
      'fieldset',
      { class: 'layer-list' },
      h('legend', {}, 'Layers'),
      toggle('Hillshade (plan terrain)', hillshade, terrainBoxes.length > 0),
      online ? toggle('Online base layer', online, false) : null,
      toggle('Nodes', nodeLayer, true),
      toggle('Gateways', gatewayLayer, true, symbolElement(gatewaySymbolSvg(18), '')),
      toggle('Candidate sites', siteLayer, true, symbolElement(siteSymbolSvg(16), '')),
      toggle('Redundancy: gateways hearing each node', redundancyLayer, false, h('span', { class: 'redundancy-badge', 'aria-hidden': 'true' }, '2')),
    ),
    h(
      'ul',
      { class: 'status-key', 'aria-label': 'Node status key' },
      ...(Object.keys(statusStyle) as NodeClass[]).map((c) => h('li', {}, symbolElement(nodeSymbolSvg(c, 16), ''), statusStyle[c].label)),
    ),
    counts,
    terrainNoteEl,
  );
  if (store.fleetProblem) layersPanel.append(notice('info', `Node status not shown: ${store.fleetProblem}.`));

  // A keyboard route to every node without hunting markers on the map.
  const finder = h('select', { id: 'node-finder', 'aria-label': 'Find a node' });
  const fillFinder = (): void => {
    clear(finder);
    finder.append(h('option', { value: '' }, `Find a node (${store.nodes.length})…`));
    for (const n of [...store.nodes].sort((a, b) => a.name.localeCompare(b.name))) {
      finder.append(h('option', { value: n.id }, `${n.name} · ${nodeClass(store, n.id)}`));
    }
  };
  finder.addEventListener('change', () => {
    if (finder.value) select('nodes', finder.value, true);
  });
  layersPanel.append(h('div', { class: 'field' }, h('label', { for: 'node-finder' }, 'Go to node'), finder));

  // ---------- sidebar: editing tools ----------
  const tools = h('section', { class: 'panel', 'aria-labelledby': 'tools-h' }, h('h2', { id: 'tools-h' }, 'Edit the fleet'));
  const toolStatus = h('p', { class: 'tool-status', 'aria-live': 'polite' });
  const undoButton = h('button', { type: 'button', id: 'undo-button', disabled: true }, 'Undo last change');
  let placing: EntityKind | null = null;
  const placeButtons = new Map<EntityKind, HTMLButtonElement>();
  const setPlacing = (kind: EntityKind | null): void => {
    placing = kind;
    mapEl.classList.toggle('placing', kind !== null);
    for (const [k, b] of placeButtons) b.setAttribute('aria-pressed', String(k === kind));
    toolStatus.textContent = kind ? `Click the map where the new ${kindLabel[kind]} goes (Esc cancels), or use “at map centre”.` : '';
  };
  /** Off the terrain there is no profile to predict with: ask before placing there. */
  const confirmOffTerrain = (kind: EntityKind): Promise<boolean> =>
    new Promise((resolve) => {
      let answered = false;
      const dialog = openDialog(`This ${kindLabel[kind]} would be off the terrain`, (body, close) => {
        const answer = (value: boolean): void => {
          answered = true;
          resolve(value);
          close();
        };
        body.append(
          notice('warn', terrainBoxes.length === 0 ? 'This plan has no terrain layer yet, so nothing placed now can be predicted. Upload a GeoTIFF first (Edit the fleet → Upload terrain).' : 'The point is outside every elevation layer of this plan: links to it cannot be predicted until terrain covering it is uploaded.'),
          h('div', { class: 'dialog-actions' }, h('button', { type: 'button', class: 'primary', onclick: () => answer(false) }, 'Cancel'), h('button', { type: 'button', id: 'place-anyway', onclick: () => answer(true) }, 'Place it anyway')),
        );
      });
      dialog.root.addEventListener('close', () => {
        if (!answered) resolve(false);
      });
    });
  const onTerrain = (lat: number, lon: number): boolean => terrainBoxes.some((box) => insideBox(box, lat, lon));
  const addAt = async (kind: EntityKind, latlng: L.LatLng): Promise<void> => {
    setPlacing(null);
    if (kind !== 'sites' && !onTerrain(latlng.lat, latlng.lng) && !(await confirmOffTerrain(kind))) {
      toolStatus.textContent = `Not placed: the point is off the terrain.`;
      return;
    }
    const n = store.list(kind).length + 1;
    const body: Record<string, unknown> = { name: `New ${kindLabel[kind]} ${n}`, lat: round6(latlng.lat), lon: round6(latlng.lng) };
    const antenna = store.catalog.antennas[0]?.id;
    const feedline = store.catalog.feedlines[0]?.id;
    // Nodes get the server's default antenna; the planner picks the kit in the node panel.
    if (kind === 'nodes') Object.assign(body, { deviceType: 'sensor', antennaHeightAglM: 1.5 });
    if (kind === 'gateways') Object.assign(body, { antennaDesignId: antenna, antennaHeightAglM: 10, feedlineId: feedline, feedlineLengthM: 10 });
    try {
      const created = await store.create(kind, body);
      announce(`Added ${kindLabel[kind]} ${created.name}`);
      select(kind, created.id, true);
    } catch (err) {
      toolStatus.textContent = explainWriteError(err, store, `the new ${kindLabel[kind]}`);
    }
  };
  if (canEdit()) {
    const row = h('div', { class: 'button-row' });
    for (const kind of ['nodes', 'gateways', 'sites'] as EntityKind[]) {
      const b = h('button', { type: 'button', 'aria-pressed': 'false', onclick: () => setPlacing(placing === kind ? null : kind) }, `Add ${kindLabel[kind]}`);
      placeButtons.set(kind, b);
      row.append(b);
    }
    const centre = h('button', { type: 'button', onclick: () => placing && void addAt(placing, map.getCenter()) }, 'Place at map centre');
    tools.append(
      row,
      h('div', { class: 'button-row' }, centre, h('button', { type: 'button', id: 'import-button', onclick: () => openImportDialog(store, fitTo) }, 'Import nodes (CSV / GeoJSON)'), undoButton),
      h(
        'div',
        { class: 'button-row' },
        h(
          'button',
          {
            type: 'button',
            id: 'terrain-upload-button',
            onclick: () =>
              openTerrainUploadDialog(planId, (layer) => {
                const box = layer.kind === 'clutter' ? null : layerBox(layer);
                // Move first, then shade: adding the layer (min zoom 5) while the map is zoomed
                // out would start a zoom the fit cannot interrupt.
                if (box) {
                  terrainBoxes.push(box);
                  terrainNoteEl.textContent = `Terrain: ${String(layer.name ?? 'new layer')} added.`;
                  map.fitBounds(L.latLngBounds([box.south, box.west], [box.north, box.east]), { padding: [20, 20], animate: false });
                }
                if (map.hasLayer(hillshade)) hillshade.redraw();
                else hillshade.addTo(map);
              }),
          },
          'Upload terrain (GeoTIFF)',
        ),
      ),
      toolStatus,
      h('p', { class: 'muted small' }, 'Drag a marker to move it. Select an object to edit or delete it.'),
    );
  } else {
    tools.append(h('p', { class: 'muted' }, 'Your role can read this plan; only planners edit it.'));
  }
  // One undo at a time: a second click while the first runs would undo two changes (or
  // re-create a deleted object twice).
  let undoing = false;
  undoButton.addEventListener('click', () => {
    if (undoing) return;
    undoing = true;
    undoButton.disabled = true;
    void store
      .undo()
      .then((label) => {
        toolStatus.textContent = label ? `Undone: ${label}.` : 'Nothing to undo.';
        announce(toolStatus.textContent);
      })
      .catch((err: unknown) => {
        toolStatus.textContent = explainWriteError(err, store, 'the undo');
      })
      .finally(() => {
        undoing = false;
        undoButton.disabled = store.undoStack.length === 0;
      });
  });

  const coveragePanel = h('section', { class: 'panel', 'aria-labelledby': 'coverage-h' });
  const calibrationPanel = h('section', { class: 'panel', 'aria-labelledby': 'calibration-h' });
  sidebar.append(detail, layersPanel, tools, coveragePanel, calibrationPanel);
  const stopCoverage = renderCoveragePanel(coveragePanel, store, map);
  const stopCalibration = renderCalibrationPanel(calibrationPanel, store);

  // ---------- markers ----------
  const draggable = canEdit();
  /** What a marker shows: it is replaced only when this changes. */
  function lookOf(kind: EntityKind, entity: Entity): string {
    const isSel = selected?.kind === kind && selected.id === entity.id;
    return [entity.lat, entity.lon, entity.name, kind === 'nodes' ? nodeClass(store, entity.id) : '', isSel].join('|');
  }
  function markerFor(kind: EntityKind, entity: Entity): L.Marker {
    let html: string;
    let size: [number, number];
    let title: string;
    if (kind === 'nodes') {
      const cls = nodeClass(store, entity.id);
      const isSel = selected?.kind === 'nodes' && selected.id === entity.id;
      html = nodeSymbolSvg(cls, isSel ? 24 : 18, isSel);
      size = isSel ? [24, 24] : [18, 18];
      title = `Node ${entity.name}: ${cls}`;
    } else if (kind === 'gateways') {
      html = gatewaySymbolSvg(28);
      size = [28, 28];
      title = `Gateway ${entity.name}`;
    } else {
      html = siteSymbolSvg(22);
      size = [22, 22];
      title = `Candidate site ${entity.name}`;
    }
    const icon = L.divIcon({ html, className: `marker marker-${kind}`, iconSize: size, iconAnchor: [size[0] / 2, size[1] / 2] });
    // Gateways above nodes above sites (a gateway usually stands on a site).
    const zIndexOffset = kind === 'gateways' ? 2000 : kind === 'nodes' ? 1000 : 0;
    const marker = L.marker([entity.lat, entity.lon], { icon, title, alt: title, keyboard: true, draggable, riseOnHover: true, autoPan: true, zIndexOffset });
    marker.on('click', () => select(kind, entity.id, false));
    // Keyboard: markers are focusable buttons (Tab); Enter or Space selects, like a click.
    marker.on('add', () => {
      const el = marker.getElement();
      el?.setAttribute('aria-label', title);
      el?.addEventListener('keydown', (event: KeyboardEvent) => {
        if (event.key !== 'Enter' && event.key !== ' ') return;
        event.preventDefault();
        select(kind, entity.id, false);
        document.getElementById('detail-panel')?.focus();
      });
    });
    marker.on('dragstart', () => {
      dragInProgress = true;
    });
    marker.on('dragend', () => {
      dragInProgress = false;
      // A refresh that arrived during the drag redraws now (after the move is sent).
      if (redrawAfterDrag) queueMicrotask(drawMarkers);
      const to = marker.getLatLng();
      const current = store.find(kind, entity.id);
      if (!current) return;
      void store
        .update(kind, entity.id, { lat: round6(to.lat), lon: round6(to.lng) }, true, `moved ${kindLabel[kind]} ${current.name}`)
        .then(() => {
          toolStatus.textContent = `Moved ${current.name} to ${coords(to.lat, to.lng)}.`;
          announce(toolStatus.textContent);
        })
        .catch((err: unknown) => {
          marker.setLatLng([current.lat, current.lon]);
          toolStatus.textContent = explainWriteError(err, store, `${kindLabel[kind]} ${current.name}`);
        });
    });
    return marker;
  }
  // Redrawing replaces every marker element: doing it while the user drags one would drop
  // the drag (no dragend, the move is lost), so a redraw waits for the drag to end.
  let dragInProgress = false;
  let redrawAfterDrag = false;
  function drawMarkers(): void {
    showPlanLine();
    if (dragInProgress) {
      redrawAfterDrag = true;
      return;
    }
    redrawAfterDrag = false;
    redundancyLayer.clearLayers();
    for (const n of store.nodes) {
      const heard = store.fleet.get(n.id)?.gatewaysHeard;
      if (heard === undefined) continue;
      const label = `${n.name}: heard by ${heard} gateway(s)`;
      L.marker([n.lat, n.lon], {
        icon: L.divIcon({ html: `<span class="redundancy-badge redundancy-${Math.min(heard, 3)}">${heard}</span>`, className: 'redundancy-marker', iconSize: [18, 18], iconAnchor: [-4, 20] }),
        interactive: false,
        keyboard: false,
        title: label,
        zIndexOffset: 3000,
      }).addTo(redundancyLayer);
    }
    // Idempotent by id: one marker per object; an unchanged object keeps its marker (and its
    // element, focus and hover state), a changed one is replaced, a vanished one removed.
    // However often and in whatever order redraws run, the map shows exactly the store's objects.
    const layerOf: Record<EntityKind, L.LayerGroup> = { nodes: nodeLayer, gateways: gatewayLayer, sites: siteLayer };
    const wanted = new Set<string>();
    for (const kind of ['sites', 'nodes', 'gateways'] as EntityKind[]) {
      for (const entity of store.list(kind)) {
        const key = `${kind}:${entity.id}`;
        if (wanted.has(key)) continue;
        wanted.add(key);
        const look = lookOf(kind, entity);
        const existing = markers.get(key);
        if (existing && existing.look === look) continue;
        if (existing) layerOf[kind].removeLayer(existing.marker);
        const m = markerFor(kind, entity);
        m.addTo(layerOf[kind]);
        markers.set(key, { marker: m, look });
      }
    }
    for (const [key, { marker }] of markers) {
      if (wanted.has(key)) continue;
      const kind = key.slice(0, key.indexOf(':')) as EntityKind;
      layerOf[kind].removeLayer(marker);
      markers.delete(key);
    }
    const c = { served: 0, marginal: 0, unserved: 0, unknown: 0 };
    for (const n of store.nodes) c[nodeClass(store, n.id)] += 1;
    counts.textContent = `${store.nodes.length} nodes: ${c.served} served, ${c.marginal} marginal, ${c.unserved} unserved${c.unknown ? `, ${c.unknown} not predicted` : ''} · ${store.gateways.length} gateways · ${store.sites.length} candidate sites`;
    undoButton.disabled = undoing || store.undoStack.length === 0;
    undoButton.textContent = store.undoStack.length ? `Undo: ${store.undoStack[store.undoStack.length - 1].label}` : 'Undo last change';
    fillFinder();
  }

  // ---------- selection and detail panel ----------
  function select(kind: EntityKind, id: string, pan: boolean): void {
    // The panel shown so far goes away: its requests are no longer wanted.
    abortPanelRequests();
    selected = { kind, id };
    const entity = store.find(kind, id);
    shownVersion = entity ? `${entity.id}:${entity.version}` : '';
    drawMarkers();
    clear(detail);
    if (!entity) return;
    if (pan) map.panTo([entity.lat, entity.lon]);
    sidebar.scrollTop = 0;
    if (kind === 'nodes') {
      const url = new URL(location.href);
      history.replaceState(null, '', `${url.pathname}#/plan/${encodeURIComponent(planId)}?node=${encodeURIComponent(id)}`);
      panelRequests = new AbortController();
      void renderNodePanel(
        detail,
        store,
        entity as FleetNode,
        {
          onEdit: () => edit(kind, id),
          onDelete: () => remove(kind, id),
        },
        panelRequests.signal,
      );
    } else {
      const gatewayBox = h('div', { id: 'gateway-check', 'aria-busy': 'true' }, h('p', { class: 'muted' }, 'Checking EIRP against the band plan…'));
      if (kind === 'gateways') {
        panelRequests = new AbortController();
        void getGatewayChecks(planId, panelRequests.signal)
          .then((checks) => {
            const check = checks.items.find((c) => c.gatewayId === id);
            gatewayBox.replaceChildren(check ? gatewayCheckBlock(check) : notice('info', 'No check for this gateway (its antenna or feedline is not in the catalog).'));
            gatewayBox.removeAttribute('aria-busy');
          })
          .catch((err: unknown) => {
            if (isAbort(err)) return;
            gatewayBox.replaceChildren(notice('error', `EIRP check: ${errorText(err)}`));
            gatewayBox.removeAttribute('aria-busy');
          });
      }
      append(
        detail,
        h('h2', {}, `${kind === 'gateways' ? 'Gateway' : 'Candidate site'}: ${entity.name}`),
        h('p', {}, coords(entity.lat, entity.lon)),
        kind === 'gateways' ? h('p', {}, `Antenna ${metres(Number(entity.antennaHeightAglM))} above ground`) : h('p', {}, `Kind: ${String(entity.kind ?? 'candidate')}`),
        kind === 'gateways' ? gatewayBox : null,
        entity.notes ? h('p', { class: 'muted' }, String(entity.notes)) : null,
        canEdit()
          ? h(
              'div',
              { class: 'button-row' },
              h('button', { type: 'button', onclick: () => edit(kind, id) }, 'Edit'),
              h('button', { type: 'button', class: 'danger', onclick: () => remove(kind, id) }, 'Delete'),
            )
          : null,
      );
    }
  }

  function edit(kind: EntityKind, id: string): void {
    const entity = store.find(kind, id);
    if (!entity) return;
    // Gateways: EIRP, the legal check and cautions follow the form as it is typed.
    const decorate =
      kind === 'gateways'
        ? (controls: ReadonlyMap<string, HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement>, form: HTMLFormElement): void => {
            const num = (key: string): number => Number(controls.get(key)?.value ?? NaN);
            const live = liveGatewayCheck(planId, () => {
              const antennaDesignId = controls.get('antennaDesignId')?.value ?? '';
              const txPowerDbm = num('txPowerDbm');
              const antennaHeightAglM = num('antennaHeightAglM');
              if (!antennaDesignId || !Number.isFinite(txPowerDbm) || !Number.isFinite(antennaHeightAglM)) return null;
              const feedlineId = controls.get('feedlineId')?.value || null;
              const length = num('feedlineLengthM');
              return { name: entity.name, txPowerDbm, antennaHeightAglM, antennaDesignId, feedlineId, feedlineLengthM: Number.isFinite(length) ? length : 0 };
            });
            for (const key of ['txPowerDbm', 'antennaDesignId', 'antennaHeightAglM', 'feedlineId', 'feedlineLengthM']) controls.get(key)?.addEventListener('input', live.refresh);
            for (const key of ['antennaDesignId', 'feedlineId']) controls.get(key)?.addEventListener('change', live.refresh);
            form.append(h('div', { class: 'edit-form-wide' }, h('h3', {}, 'Radiated power and legal check'), live.element));
            live.refresh();
          }
        : undefined;
    openEditDialog(kind, entity, store.catalog, async (changes) => {
      try {
        await store.update(kind, id, changes);
        announce(`Saved ${entity.name}`);
        select(kind, id, false);
        return null;
      } catch (err) {
        const text = explainWriteError(err, store, `${kindLabel[kind]} ${entity.name}`);
        // A version conflict has its own dialog (with reload): the stale form closes.
        return err instanceof ApiError && err.status === 409 ? null : text;
      }
    }, decorate);
  }

  function remove(kind: EntityKind, id: string): void {
    const entity = store.find(kind, id);
    if (!entity) return;
    openDialog(`Delete ${kindLabel[kind]} ${entity.name}?`, (body, close) => {
      const status = h('p', { 'aria-live': 'polite' });
      body.append(
        h('p', {}, `The ${kindLabel[kind]} and its cached predictions are removed from the plan. “Undo last change” puts it back (as a new object with the same values).`),
        h(
          'div',
          { class: 'dialog-actions' },
          h(
            'button',
            {
              type: 'button',
              class: 'danger',
              onclick: (event: Event) => {
                const button = event.currentTarget as HTMLButtonElement;
                button.disabled = true;
                const wasOpen = selected?.kind === kind && selected.id === id;
                // Stop the open panel's requests before the object goes: answered after the
                // delete they would be 404s for an id that no longer exists.
                if (wasOpen) abortPanelRequests();
                void store
                  .remove(kind, id)
                  .then(() => {
                    close();
                    if (selected?.kind === kind && selected.id === id) {
                      selected = null;
                      clear(detail);
                    }
                    announce(`Deleted ${entity.name}`);
                  })
                  .catch((err: unknown) => {
                    button.disabled = false;
                    status.textContent = explainWriteError(err, store, `${kindLabel[kind]} ${entity.name}`);
                    // Not deleted: show the panel again (its requests were stopped).
                    if (wasOpen && store.find(kind, id)) select(kind, id, false);
                  });
              },
            },
            'Delete',
          ),
          h('button', { type: 'button', onclick: close }, 'Keep it'),
        ),
        status,
      );
    });
  }

  map.on('click', (event: L.LeafletMouseEvent) => {
    if (placing) void addAt(placing, event.latlng);
  });
  const onKey = (event: KeyboardEvent): void => {
    if (event.key === 'Escape' && placing) setPlacing(null);
  };
  document.addEventListener('keydown', onKey);

  const unsubscribe = store.onChange(() => {
    drawMarkers();
    if (!selected) return;
    const current = store.find(selected.kind, selected.id);
    if (!current) {
      abortPanelRequests();
      selected = null;
      clear(detail);
    } else if (`${current.id}:${current.version}` !== shownVersion) {
      // The selected object changed (edit, undo, kit applied, reload): show its new state.
      select(selected.kind, selected.id, false);
    }
  });
  drawMarkers();

  // initial view: the fleet's extent, or the plan's terrain
  const all: L.LatLngExpression[] = [...store.nodes, ...store.gateways, ...store.sites].map((e) => [e.lat, e.lon] as L.LatLngTuple);
  if (all.length > 0) map.fitBounds(L.latLngBounds(all), { padding: [30, 30], maxZoom: 15 });
  else if (terrainBoxes.length > 0) {
    const b = terrainBoxes.reduce((acc, box) => ({ west: Math.min(acc.west, box.west), south: Math.min(acc.south, box.south), east: Math.max(acc.east, box.east), north: Math.max(acc.north, box.north) }));
    map.fitBounds(L.latLngBounds([b.south, b.west], [b.north, b.east]), { padding: [20, 20] });
  } else map.setView([20, 0], 2);
  if (route.nodeId && store.find('nodes', route.nodeId)) select('nodes', route.nodeId, true);

  return () => {
    abortPanelRequests();
    stopCoverage();
    stopCalibration();
    unsubscribe();
    document.removeEventListener('keydown', onKey);
    map.remove();
  };
}

function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6;
}
