// Markers of the plan map: one per node (status by shape and colour), gateway and candidate
// site; redundancy badges placed so none covers another; and a chooser when a click lands on
// more than one of our objects (a site under its gateway, two nodes on one building).
import * as L from 'leaflet';
import type { Entity, EntityKind } from '../api.ts';
import { placeBadges, pointsNear } from '../map-geometry.ts';
import type { PlanStore } from '../plan-store.ts';
import { h } from '../ui.ts';
import { gatewaySymbolSvg, nodeSymbolSvg, siteSymbolSvg, statusStyle, type NodeClass } from '../symbols.ts';
import type { MapOverlays } from './map-layers.ts';

export interface MarkerHooks {
  draggable: boolean;
  isSelected(kind: EntityKind, id: string): boolean;
  nodeClass(id: string): NodeClass;
  select(kind: EntityKind, id: string): void;
  /** A marker was dropped: save the move (false = not saved, the marker goes back). */
  move(kind: EntityKind, id: string, lat: number, lon: number): Promise<boolean>;
}

export interface Markers {
  overlays: MapOverlays;
  /** Makes the map show exactly the store's objects (idempotent; waits for a drag to end). */
  draw(): void;
}

/** Pixels around a click within which another marker counts as "under the click". */
const underClickPx = 14;
const badgePx = 18;

export function createMarkers(map: L.Map, store: PlanStore, hooks: MarkerHooks): Markers {
  const overlays: MapOverlays = {
    nodes: L.layerGroup().addTo(map),
    gateways: L.layerGroup().addTo(map),
    sites: L.layerGroup().addTo(map),
    // Redundancy composite per node: how many gateways hear it (margin ≥ 0 dB), from the fleet table.
    redundancy: L.layerGroup(),
  };
  const layerOf: Record<EntityKind, L.LayerGroup> = { nodes: overlays.nodes, gateways: overlays.gateways, sites: overlays.sites };
  /** One marker per object, keyed `kind:id`; `look` is what it was drawn from (redrawn only when it changes). */
  const markers = new Map<string, { marker: L.Marker; look: string }>();
  // Redrawing replaces marker elements: doing it while the user drags one would drop the
  // drag (no dragend, the move is lost), so a redraw waits for the drag to end.
  let dragInProgress = false;
  let redrawAfterDrag = false;

  const lookOf = (kind: EntityKind, entity: Entity): string =>
    [entity.lat, entity.lon, entity.name, kind === 'nodes' ? hooks.nodeClass(entity.id) : '', hooks.isSelected(kind, entity.id)].join('|');

  /** Our objects within a few pixels of a point, on the layers shown, nearest first. */
  const objectsAt = (at: L.LatLng): Array<{ kind: EntityKind; entity: Entity }> => {
    const candidates: Array<{ kind: EntityKind; entity: Entity }> = [];
    for (const kind of ['gateways', 'nodes', 'sites'] as EntityKind[]) {
      if (!map.hasLayer(layerOf[kind])) continue;
      for (const entity of store.list(kind)) candidates.push({ kind, entity });
    }
    const points = candidates.map(({ entity }) => map.latLngToContainerPoint([entity.lat, entity.lon]));
    return pointsNear(points, map.latLngToContainerPoint(at), underClickPx).map((i) => candidates[i]);
  };

  const titleOf = (kind: EntityKind, entity: Entity): string =>
    kind === 'nodes' ? `Node ${entity.name}: ${statusStyle[hooks.nodeClass(entity.id)].label}` : kind === 'gateways' ? `Gateway ${entity.name}` : `Candidate site ${entity.name}`;

  /** Several objects under the click: a short list to pick from (our own popup, keyboard-usable). */
  const openChooser = (at: L.LatLng, hits: Array<{ kind: EntityKind; entity: Entity }>): void => {
    const list = h('ul', { class: 'marker-chooser-list' });
    const popup = L.popup({ className: 'marker-chooser-popup', closeButton: true, autoPan: true, minWidth: 180 });
    for (const { kind, entity } of hits) {
      list.append(
        h(
          'li',
          {},
          h(
            'button',
            {
              type: 'button',
              class: 'link-button',
              'data-kind': kind,
              onclick: () => {
                map.closePopup(popup);
                hooks.select(kind, entity.id);
              },
            },
            titleOf(kind, entity),
          ),
        ),
      );
    }
    const content = h('div', { class: 'marker-chooser', id: 'marker-chooser', role: 'dialog', 'aria-label': 'Objects at this spot' }, h('p', { class: 'small' }, `${hits.length} objects here. Open:`), list);
    popup.setLatLng(at).setContent(content).openOn(map);
    content.querySelector('button')?.focus();
  };

  function markerFor(kind: EntityKind, entity: Entity): L.Marker {
    let html: string;
    let size: [number, number];
    if (kind === 'nodes') {
      const isSel = hooks.isSelected(kind, entity.id);
      html = nodeSymbolSvg(hooks.nodeClass(entity.id), isSel ? 24 : 18, isSel);
      size = isSel ? [24, 24] : [18, 18];
    } else if (kind === 'gateways') {
      html = gatewaySymbolSvg(28);
      size = [28, 28];
    } else {
      html = siteSymbolSvg(22);
      size = [22, 22];
    }
    const title = titleOf(kind, entity);
    const icon = L.divIcon({ html, className: `marker marker-${kind}`, iconSize: size, iconAnchor: [size[0] / 2, size[1] / 2] });
    // Gateways above nodes above sites (a gateway usually stands on a site).
    const zIndexOffset = kind === 'gateways' ? 2000 : kind === 'nodes' ? 1000 : 0;
    const marker = L.marker([entity.lat, entity.lon], { icon, title, alt: title, keyboard: true, draggable: hooks.draggable, riseOnHover: true, autoPan: true, zIndexOffset });
    marker.on('click', () => {
      // What else is under this spot? A site under its gateway is otherwise out of reach.
      const hits = objectsAt(marker.getLatLng());
      if (hits.length > 1) openChooser(marker.getLatLng(), hits);
      else hooks.select(kind, entity.id);
    });
    // Keyboard: markers are focusable buttons (Tab, hidden ones too); Enter or Space selects.
    marker.on('add', () => {
      const el = marker.getElement();
      el?.setAttribute('aria-label', title);
      el?.addEventListener('keydown', (event: KeyboardEvent) => {
        if (event.key !== 'Enter' && event.key !== ' ') return;
        event.preventDefault();
        hooks.select(kind, entity.id);
        document.getElementById('detail-panel')?.focus();
      });
    });
    marker.on('dragstart', () => {
      dragInProgress = true;
    });
    marker.on('dragend', () => {
      dragInProgress = false;
      // A refresh that arrived during the drag redraws now (after the move is sent).
      if (redrawAfterDrag) queueMicrotask(draw);
      const to = marker.getLatLng();
      const current = store.find(kind, entity.id);
      if (!current) return;
      void hooks.move(kind, entity.id, to.lat, to.lng).then((saved) => {
        if (!saved) marker.setLatLng([current.lat, current.lon]);
      });
    });
    return marker;
  }

  /** Badges beside their nodes, each moved round its node until it covers no other badge or node. */
  function drawBadges(): void {
    overlays.redundancy.clearLayers();
    const withBadge = store.nodes.filter((n) => store.fleet.get(n.id)?.gatewaysHeard !== undefined);
    const offsets = placeBadges(
      withBadge.map((n) => map.latLngToLayerPoint([n.lat, n.lon])),
      badgePx,
    );
    withBadge.forEach((n, i) => {
      const heard = store.fleet.get(n.id)?.gatewaysHeard ?? 0;
      const o = offsets[i];
      L.marker([n.lat, n.lon], {
        icon: L.divIcon({
          html: `<span class="redundancy-badge redundancy-${Math.min(heard, 3)}" data-node="${n.id}">${heard}</span>`,
          className: 'redundancy-marker',
          iconSize: [badgePx, badgePx],
          iconAnchor: [badgePx / 2 - o.x, badgePx / 2 - o.y],
        }),
        interactive: false,
        keyboard: false,
        title: `${n.name}: heard by ${heard} gateway(s)`,
        zIndexOffset: 3000,
      }).addTo(overlays.redundancy);
    });
  }
  // Pixel distances change with the zoom: place the badges again.
  map.on('zoomend', drawBadges);

  function draw(): void {
    if (dragInProgress) {
      redrawAfterDrag = true;
      return;
    }
    redrawAfterDrag = false;
    drawBadges();
    // Idempotent by id: an unchanged object keeps its marker (and its element, focus and
    // hover state), a changed one is replaced, a vanished one removed.
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
      layerOf[key.slice(0, key.indexOf(':')) as EntityKind].removeLayer(marker);
      markers.delete(key);
    }
  }

  return { overlays, draw };
}
