// The plan map, put together from its parts: the base map and layer panel (map-layers.ts),
// the markers with redundancy badges and the chooser for stacked objects (map-markers.ts),
// planner editing and undo (map-edit.ts), and the selected object's panel (map-selection.ts);
// the coverage and calibration panels sit below them in the sidebar.
import type { Route } from '../router.ts';
import { PlanStore } from '../plan-store.ts';
import { canEdit } from '../session.ts';
import { h } from '../ui.ts';
import type { NodeClass } from '../symbols.ts';
import { renderCalibrationPanel } from './calibration-panel.ts';
import { renderCoveragePanel } from './coverage-panel.ts';
import { createEditTools } from './map-edit.ts';
import { createBaseMap, renderLayersPanel } from './map-layers.ts';
import { createMarkers } from './map-markers.ts';
import { createSelection } from './map-selection.ts';

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

  const base = await createBaseMap(mapEl, planId);
  const { map } = base;
  const classOf = (id: string): NodeClass => nodeClass(store, id);

  // The parts call each other through these late-bound hooks (markers select, the selection
  // redraws markers, edits save moves).
  const selection = createSelection({ planId, store, map, sidebar, detail, nodeClass: classOf, redrawMarkers: () => markers.draw() });
  const tools = createEditTools(base, store, {
    select: (kind, id) => selection.select(kind, id, true),
    terrainAdded: (note) => layers.setTerrainNote(note),
  });
  const markers = createMarkers(map, store, {
    draggable: canEdit(),
    isSelected: selection.isSelected,
    nodeClass: classOf,
    select: (kind, id) => selection.select(kind, id, false),
    move: tools.move,
  });
  const layers = renderLayersPanel(base, store, markers.overlays, classOf, (id) => selection.select('nodes', id, true));

  const coveragePanel = h('section', { class: 'panel', 'aria-labelledby': 'coverage-h' });
  const calibrationPanel = h('section', { class: 'panel', 'aria-labelledby': 'calibration-h' });
  sidebar.append(detail, layers.panel, tools.panel, coveragePanel, calibrationPanel);
  const stopCoverage = renderCoveragePanel(coveragePanel, store, map);
  const stopCalibration = renderCalibrationPanel(calibrationPanel, store);

  const showAll = (): void => {
    markers.draw();
    layers.refresh();
    tools.refresh();
  };
  const unsubscribe = store.onChange(() => {
    showAll();
    selection.refresh();
  });
  // The view first: badges are placed in screen pixels, which need a centre and a zoom.
  base.fitInitial(store);
  showAll();
  if (route.nodeId && store.find('nodes', route.nodeId)) selection.select('nodes', route.nodeId, true);

  return () => {
    selection.stop();
    tools.stop();
    stopCoverage();
    stopCalibration();
    unsubscribe();
    map.remove();
  };
}
