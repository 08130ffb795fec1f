// Planner editing on the map: add a node / gateway / site by clicking (or at the map centre),
// with a question first when the point is off the plan's terrain; save a dragged marker;
// import nodes; upload terrain; undo (the plan's history, which outlives a change of view).
import type * as L from 'leaflet';
import type { EntityKind } from '../api.ts';
import { explainWriteError, type PlanStore } from '../plan-store.ts';
import { canEdit } from '../session.ts';
import { announce, coords, h, notice, openDialog } from '../ui.ts';
import { kindLabel } from './edit-dialog.ts';
import { openImportDialog } from './import-dialog.ts';
import type { BaseMap } from './map-layers.ts';
import { openTerrainUploadDialog } from './terrain-upload.ts';

export interface EditTools {
  panel: HTMLElement;
  /** Saves a dragged marker's new place; false when it was not saved. */
  move(kind: EntityKind, id: string, lat: number, lon: number): Promise<boolean>;
  /** Redraws the undo button from the plan's history. */
  refresh(): void;
  stop(): void;
}

export function createEditTools(base: BaseMap, store: PlanStore, hooks: { select(kind: EntityKind, id: string): void; terrainAdded(note: string): void }): EditTools {
  const { map, mapEl } = base;
  const panel = h('section', { class: 'panel', 'aria-labelledby': 'tools-h' }, h('h2', { id: 'tools-h' }, 'Edit the fleet'));
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
          notice(
            'warn',
            base.terrainBoxes.length === 0
              ? 'This plan has no terrain layer yet, so nothing placed now can be predicted. Upload a GeoTIFF first (Edit the fleet → Upload terrain).'
              : 'The point is outside every elevation layer of this plan: links to it cannot be predicted until terrain covering it is uploaded.',
          ),
          h('div', { class: 'dialog-actions' }, h('button', { type: 'button', class: 'primary', onclick: () => answer(false) }, 'Cancel'), h('button', { type: 'button', id: 'place-anyway', onclick: () => answer(true) }, 'Place it anyway')),
        );
      });
      dialog.root.addEventListener('close', () => {
        if (!answered) resolve(false);
      });
    });

  const addAt = async (kind: EntityKind, latlng: L.LatLng): Promise<void> => {
    setPlacing(null);
    if (kind !== 'sites' && !base.onTerrain(latlng.lat, latlng.lng) && !(await confirmOffTerrain(kind))) {
      toolStatus.textContent = 'Not placed: the point is off the terrain.';
      return;
    }
    const n = store.list(kind).length + 1;
    const body: Record<string, unknown> = { name: `New ${kindLabel[kind]} ${n}`, lat: round6(latlng.lat), lon: round6(latlng.lng) };
    // Nodes get the server's default antenna; the planner picks the kit in the node panel.
    if (kind === 'nodes') Object.assign(body, { deviceType: 'sensor', antennaHeightAglM: 1.5 });
    if (kind === 'gateways') Object.assign(body, { antennaDesignId: store.catalog.antennas[0]?.id, antennaHeightAglM: 10, feedlineId: store.catalog.feedlines[0]?.id, feedlineLengthM: 10 });
    try {
      const created = await store.create(kind, body);
      announce(`Added ${kindLabel[kind]} ${created.name}`);
      hooks.select(kind, created.id);
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
    const upload = h(
      'button',
      {
        type: 'button',
        id: 'terrain-upload-button',
        onclick: () =>
          openTerrainUploadDialog(store.planId, (layer) => {
            const note = base.addTerrainLayer(layer);
            if (note) hooks.terrainAdded(note);
          }),
      },
      'Upload terrain (GeoTIFF)',
    );
    panel.append(
      row,
      h('div', { class: 'button-row' }, centre, h('button', { type: 'button', id: 'import-button', onclick: () => openImportDialog(store, base.fitTo) }, 'Import nodes (CSV / GeoJSON)'), undoButton),
      h('div', { class: 'button-row' }, upload),
      toolStatus,
      h('p', { class: 'muted small' }, 'Drag a marker to move it. Select an object to edit or delete it. Undo keeps the plan’s changes while you switch views.'),
    );
  } else {
    panel.append(h('p', { class: 'muted' }, 'Your role can read this plan; only planners edit it.'));
  }

  // One undo at a time: a second click while the first runs would undo two changes (or
  // re-create a deleted object twice).
  let undoing = false;
  const refresh = (): void => {
    const top = store.undoStack[store.undoStack.length - 1];
    undoButton.disabled = undoing || !top;
    undoButton.textContent = top ? `Undo: ${top.label}` : 'Undo last change';
  };
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
        refresh();
      });
  });

  const onClick = (event: L.LeafletMouseEvent): void => {
    if (placing) void addAt(placing, event.latlng);
  };
  map.on('click', onClick);
  const onKey = (event: KeyboardEvent): void => {
    if (event.key === 'Escape' && placing) setPlacing(null);
  };
  document.addEventListener('keydown', onKey);

  const move = async (kind: EntityKind, id: string, lat: number, lon: number): Promise<boolean> => {
    const current = store.find(kind, id);
    if (!current) return false;
    try {
      await store.update(kind, id, { lat: round6(lat), lon: round6(lon) }, true, `moved ${kindLabel[kind]} ${current.name}`);
      toolStatus.textContent = `Moved ${current.name} to ${coords(lat, lon)}.`;
      announce(toolStatus.textContent);
      return true;
    } catch (err) {
      toolStatus.textContent = explainWriteError(err, store, `${kindLabel[kind]} ${current.name}`);
      return false;
    }
  };

  refresh();
  return {
    panel,
    move,
    refresh,
    stop: () => {
      map.off('click', onClick);
      document.removeEventListener('keydown', onKey);
    },
  };
}

function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6;
}
