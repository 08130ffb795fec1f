// The map's base: the plan's own hillshade (works offline), the optional online layer, the
// extents of the plan's elevation layers, and the map tools (scale bar, coordinate readout,
// go-to coordinates); and the sidebar's layer panel (toggles, status key, counts, node finder).
import * as L from 'leaflet';
import { getClientSettings, hillshadeTileUrl, listTerrain, type ClientSettings, type TerrainLayer } from '../api.ts';
import { insideBox, layerBox, type LonLatBox } from '../api-terrain.ts';
import { parseLatLon } from '../map-geometry.ts';
import type { PlanStore } from '../plan-store.ts';
import { canEdit } from '../session.ts';
import { announce, append, clear, coords, errorText, h, notice } from '../ui.ts';
import { gatewaySymbolSvg, nodeSymbolSvg, siteSymbolSvg, statusStyle, symbolElement, type NodeClass } from '../symbols.ts';
import { methodLabels, openPlanSettingsDialog } from './plan-settings-dialog.ts';


export type MapSettings = Pick<ClientSettings, 'onlineBaseLayer' | 'bandPlans' | 'propagationMethods'>;
export interface BaseMap {
  map: L.Map;
  mapEl: HTMLElement;
  hillshade: L.TileLayer;
  online: L.TileLayer | null;
  /** What the map uses of GET /client-settings (empty lists on a server without the route). */
  settings: MapSettings;
  /** Extents of the plan's elevation layers: where a node can be predicted at all. */
  terrainBoxes: LonLatBox[];
  terrainNote: string;
  onTerrain(lat: number, lon: number): boolean;
  /** Moves the map onto a set of points (imported nodes, a new layer). */
  fitTo(points: ReadonlyArray<{ lat: number; lon: number }>): void;
  /** A layer was uploaded: move onto it, then shade it. Returns the note to show. */
  addTerrainLayer(layer: TerrainLayer): string | null;
  /** The first view: the fleet's extent, else the terrain, else the world. */
  fitInitial(store: PlanStore): void;
}

export async function createBaseMap(mapEl: HTMLElement, planId: string): Promise<BaseMap> {
  const map = L.map(mapEl, { zoomControl: true, keyboard: true, attributionControl: true, preferCanvas: false });
  map.attributionControl.setPrefix(false);
  const hillshade = L.tileLayer(hillshadeTileUrl(planId), { maxZoom: 18, minZoom: 5, attribution: 'Hillshade from the plan’s terrain layers' });
  let terrainNote = '';
  const terrainBoxes: LonLatBox[] = [];
  try {
    const layers = await listTerrain(planId);
    for (const layer of layers) {
      const box = layer.kind === 'clutter' ? null : layerBox(layer);
      if (box) terrainBoxes.push(box);
    }
    if (layers.length === 0) terrainNote = 'This plan has no terrain layer yet: the base layer is blank until one is uploaded.';
    // A terrain layer has no source or notes field: the name says it (the demo DEM is named "… (SYNTHETIC, 30 m)").
    else if (layers.some((l) => /synthetic/i.test(l.name)))
      terrainNote = 'Terrain: synthetic demo terrain (not a real place).';
  } catch (err) {
    terrainNote = `Terrain layers: ${errorText(err)}.`;
  }
  // Without terrain the server has no hillshade to send (404 per tile): the layer joins on upload.
  if (terrainBoxes.length > 0) hillshade.addTo(map);
  // An online base layer only when the server is configured with one (EARSHOT_BASE_LAYER_URL,
  // handed over by GET /client-settings); offered as a toggle, off by default.
  let settings: MapSettings = { onlineBaseLayer: null, bandPlans: [], propagationMethods: [] };
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

  const fitBox = (b: LonLatBox, animate = true): void => {
    map.fitBounds(L.latLngBounds([b.south, b.west], [b.north, b.east]), { padding: [20, 20], animate });
  };
  return {
    map,
    mapEl,
    hillshade,
    online,
    settings,
    terrainBoxes,
    terrainNote,
    onTerrain: (lat, lon) => terrainBoxes.some((box) => insideBox(box, lat, lon)),
    fitTo: (points) => {
      if (points.length === 0) return;
      map.fitBounds(L.latLngBounds(points.map((p) => [p.lat, p.lon] as L.LatLngTuple)), { padding: [30, 30], maxZoom: 15 });
    },
    addTerrainLayer: (layer) => {
      const box = layer.kind === 'clutter' ? null : layerBox(layer);
      // Move first, then shade: adding the layer (min zoom 5) while the map is zoomed
      // out would start a zoom the fit cannot interrupt.
      if (box) {
        terrainBoxes.push(box);
        fitBox(box, false);
      }
      if (map.hasLayer(hillshade)) hillshade.redraw();
      else hillshade.addTo(map);
      return box ? `Terrain: ${String(layer.name ?? 'new layer')} added.` : null;
    },
    fitInitial: (store) => {
      const all = [...store.nodes, ...store.gateways, ...store.sites].map((e) => [e.lat, e.lon] as L.LatLngTuple);
      if (all.length > 0) map.fitBounds(L.latLngBounds(all), { padding: [30, 30], maxZoom: 15 });
      else if (terrainBoxes.length > 0) {
        fitBox(
          terrainBoxes.reduce((acc, box) => ({ west: Math.min(acc.west, box.west), south: Math.min(acc.south, box.south), east: Math.max(acc.east, box.east), north: Math.max(acc.north, box.north) })),
        );
      } else map.setView([20, 0], 2);
    },
  };
}

/**
 * Go to coordinates: "lat, lon" typed → the map moves there (at street zoom) and marks the
 * spot; a typing mistake is named under the field. Off the plan's terrain is said too.
 */
export function goToCoordinates(base: BaseMap): HTMLElement {
  const input = h('input', { id: 'goto-coords', type: 'text', inputmode: 'decimal', autocomplete: 'off', placeholder: 'lat, lon e.g. 46.52, 6.63', 'aria-describedby': 'goto-message' });
  const message = h('p', { id: 'goto-message', class: 'small', 'aria-live': 'polite' });
  let pin: L.CircleMarker | null = null;
  const form = h(
    'form',
    { class: 'goto-form', id: 'goto-form', 'aria-label': 'Go to coordinates' },
    h('label', { for: 'goto-coords' }, 'Go to coordinates'),
    h('div', { class: 'inline-field' }, input, h('button', { type: 'submit', id: 'goto-button' }, 'Go')),
    message,
  );
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    const parsed = parseLatLon(input.value);
    if (!parsed.ok) {
      input.setAttribute('aria-invalid', 'true');
      message.className = 'small field-error';
      message.textContent = parsed.message;
      return;
    }
    input.removeAttribute('aria-invalid');
    const { map } = base;
    map.setView([parsed.lat, parsed.lon], Math.max(map.getZoom(), 14), { animate: false });
    pin?.remove();
    pin = L.circleMarker([parsed.lat, parsed.lon], { radius: 9, color: '#1b1d1f', weight: 2, fill: false, dashArray: '3 3', interactive: false, className: 'goto-pin' }).addTo(map);
    message.className = 'small muted';
    message.textContent = `Map centred on ${coords(parsed.lat, parsed.lon)}${base.onTerrain(parsed.lat, parsed.lon) ? '.' : ': outside this plan’s terrain (nothing placed here can be predicted).'}`;
    announce(message.textContent);
  });
  return form;
}

export interface MapOverlays {
  nodes: L.LayerGroup;
  gateways: L.LayerGroup;
  sites: L.LayerGroup;
  redundancy: L.LayerGroup;
}

export interface LayersPanel {
  panel: HTMLElement;
  /** Redraws the plan line, the counts and the node finder from the store. */
  refresh(): void;
  setTerrainNote(text: string): void;
}

export function renderLayersPanel(base: BaseMap, store: PlanStore, overlays: MapOverlays, nodeClass: (id: string) => NodeClass, onFindNode: (id: string) => void): LayersPanel {
  const { map, settings } = base;
  const planTitle = h('h2', { id: 'layers-h' }, store.plan.name);
  const panel = h('section', { class: 'panel', 'aria-labelledby': 'layers-h' }, planTitle);
  const planLine = h('p', { class: 'muted', id: 'plan-settings-line' });
  const showPlanLine = (): void => {
    const p = store.plan;
    const band = settings.bandPlans.find((b) => b.id === p.bandPlanId)?.name ?? p.bandPlanId ?? '–';
    const method = methodLabels[String(p.propagationMethod)] ?? String(p.propagationMethod ?? '–');
    planTitle.textContent = p.name;
    planLine.textContent = `Target margin ${p.targetMarginDb ?? '–'} dB · band plan ${band} · σL ${p.locationSigmaDb === null || p.locationSigmaDb === undefined ? 'P.1812 §4.8' : `${p.locationSigmaDb} dB`}, σM ${p.modelSigmaDb === null || p.modelSigmaDb === undefined ? 'default 6 dB' : `${String(p.modelSigmaDb)} dB`} · method ${method}`;
  };
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
  const terrainNoteEl = h('p', { class: 'muted small', id: 'terrain-note' }, base.terrainNote);
  append(
    panel,
    planLine,
    canEdit() ? h('div', { class: 'button-row' }, h('button', { type: 'button', id: 'plan-settings-button', onclick: () => openPlanSettingsDialog(store, settings, showPlanLine) }, 'Plan settings')) : null,
    h(
      'fieldset',
      { class: 'layer-list' },
      h('legend', {}, 'Layers'),
      toggle('Hillshade (plan terrain)', base.hillshade, base.terrainBoxes.length > 0),
      base.online ? toggle('Online base layer', base.online, false) : null,
      toggle('Nodes', overlays.nodes, true),
      toggle('Gateways', overlays.gateways, true, symbolElement(gatewaySymbolSvg(18), '')),
      toggle('Candidate sites', overlays.sites, true, symbolElement(siteSymbolSvg(16), '')),
      toggle('Redundancy: gateways hearing each node', overlays.redundancy, false, h('span', { class: 'redundancy-badge', 'aria-hidden': 'true' }, '2')),
    ),
    h(
      'ul',
      { class: 'status-key', 'aria-label': 'Node status key' },
      ...(Object.keys(statusStyle) as NodeClass[]).map((c) => h('li', {}, symbolElement(nodeSymbolSvg(c, 16), ''), statusStyle[c].label)),
    ),
    counts,
    terrainNoteEl,
  );
  if (store.fleetProblem) panel.append(notice('info', `Node status not shown: ${store.fleetProblem}.`));

  // A keyboard route to every node without hunting markers on the map.
  const finder = h('select', { id: 'node-finder', 'aria-label': 'Find a node' });
  finder.addEventListener('change', () => {
    if (finder.value) onFindNode(finder.value);
  });
  panel.append(h('div', { class: 'field' }, h('label', { for: 'node-finder' }, 'Go to node'), finder), goToCoordinates(base));

  const refresh = (): void => {
    showPlanLine();
    const c = { served: 0, marginal: 0, unserved: 0, unknown: 0 };
    for (const n of store.nodes) c[nodeClass(n.id)] += 1;
    counts.textContent = `${store.nodes.length} nodes: ${c.served} served, ${c.marginal} marginal, ${c.unserved} unserved${c.unknown ? `, ${c.unknown} not predicted` : ''} · ${store.gateways.length} gateways · ${store.sites.length} candidate sites`;
    const keep = finder.value;
    clear(finder);
    finder.append(h('option', { value: '' }, `Find a node (${store.nodes.length})…`));
    for (const n of [...store.nodes].sort((a, b) => a.name.localeCompare(b.name))) {
      finder.append(h('option', { value: n.id }, `${n.name} · ${statusStyle[nodeClass(n.id)].label}`));
    }
    finder.value = store.nodes.some((n) => n.id === keep) ? keep : '';
  };
  refresh();
  return { panel, refresh, setTerrainNote: (text) => (terrainNoteEl.textContent = text) };
}
