// The selected object and the detail panel: the node panel (links, check, kit) or the gateway
// / site facts with the gateway's EIRP check; the edit and delete dialogs. The panel is kept
// fresh: it is drawn again whenever an input it was drawn from changes (the object itself, any
// gateway for a node's links, the plan settings), and a node's status follows the fleet table.
import type * as L from 'leaflet';
import { ApiError, isAbort, type Entity, type EntityKind, type FleetNode } from '../api.ts';
import { getGatewayChecks } from '../api-gateways.ts';
import { explainWriteError, type PlanStore } from '../plan-store.ts';
import { canEdit } from '../session.ts';
import { announce, append, clear, coords, errorText, h, metres, notice, openDialog } from '../ui.ts';
import type { NodeClass } from '../symbols.ts';
import { kindLabel, openEditDialog } from './edit-dialog.ts';
import { gatewayCheckBlock, liveGatewayCheck } from './gateway-check.ts';
import { renderNodePanel, showNodeStatus } from './node-panel.ts';

export interface Selection {
  isSelected(kind: EntityKind, id: string): boolean;
  select(kind: EntityKind, id: string, pan: boolean): void;
  /** The store changed: drop, redraw or update the panel as its inputs say. */
  refresh(): void;
  stop(): void;
}

export interface SelectionContext {
  planId: string;
  store: PlanStore;
  map: L.Map;
  sidebar: HTMLElement;
  detail: HTMLElement;
  nodeClass(id: string): NodeClass;
  /** The selection changed: the markers show it. */
  redrawMarkers(): void;
}

/**
 * What a panel was drawn from. A node's links depend on every gateway (position, kit, power)
 * and on the plan (band plan, method, margin, σ); a gateway's legal check on the plan's band
 * plan. When this changes the panel is out of date and is drawn again.
 */
export function panelInputs(store: PlanStore, kind: EntityKind, entity: Entity): string {
  const own = `${kind}:${entity.id}:${entity.version}`;
  if (kind === 'sites') return own;
  const plan = `plan:${store.plan.version}`;
  if (kind === 'gateways') return `${own}|${plan}`;
  return `${own}|${plan}|${store.gateways.map((g) => `${g.id}:${g.version}`).join(',')}`;
}

export function createSelection(ctx: SelectionContext): Selection {
  const { planId, store, map, sidebar, detail } = ctx;
  let selected: { kind: EntityKind; id: string } | null = null;
  /** Aborts the open panel's requests (links, check, recommendation, kit preview). */
  let panelRequests: AbortController | null = null;
  const abortPanelRequests = (): void => {
    panelRequests?.abort();
    panelRequests = null;
  };
  /** The inputs the panel shows was drawn from (panelInputs). */
  let shownInputs = '';

  function select(kind: EntityKind, id: string, pan: boolean): void {
    // The panel shown so far goes away: its requests are no longer wanted.
    abortPanelRequests();
    selected = { kind, id };
    const entity = store.find(kind, id);
    shownInputs = entity ? panelInputs(store, kind, entity) : '';
    ctx.redrawMarkers();
    clear(detail);
    if (!entity) return;
    if (pan) map.panTo([entity.lat, entity.lon]);
    sidebar.scrollTop = 0;
    panelRequests = new AbortController();
    if (kind === 'nodes') {
      const url = new URL(location.href);
      history.replaceState(null, '', `${url.pathname}#/plan/${encodeURIComponent(planId)}?node=${encodeURIComponent(id)}`);
      void renderNodePanel(detail, store, entity as FleetNode, { onEdit: () => edit(kind, id), onDelete: () => remove(kind, id) }, panelRequests.signal);
      return;
    }
    const gatewayBox = h('div', { id: 'gateway-check', 'aria-busy': 'true' }, h('p', { class: 'muted' }, 'Checking EIRP against the band plan…'));
    if (kind === 'gateways') {
      const signal = panelRequests.signal;
      void getGatewayChecks(planId, signal)
        .then((checks) => {
          if (signal.aborted) return;
          const check = checks.items.find((c) => c.gatewayId === id);
          gatewayBox.replaceChildren(check ? gatewayCheckBlock(check) : notice('info', 'No check for this gateway (its antenna or feedline is not in the catalog).'));
          gatewayBox.removeAttribute('aria-busy');
        })
        .catch((err: unknown) => {
          if (isAbort(err) || signal.aborted) return;
          gatewayBox.replaceChildren(notice('error', `EIRP check: ${errorText(err)}`));
          gatewayBox.removeAttribute('aria-busy');
        });
    }
    append(
      detail,
      h('h2', { id: 'detail-title' }, `${kind === 'gateways' ? 'Gateway' : 'Candidate site'}: ${entity.name}`),
      h('p', { id: 'detail-position' }, coords(entity.lat, entity.lon)),
      'antennaHeightAglM' in entity ? h('p', {}, `Antenna ${metres(entity.antennaHeightAglM)} above ground`) : h('p', {}, `Kind: ${'kind' in entity && entity.kind === 'used' ? 'used site' : 'candidate'}`),
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
    openEditDialog(
      kind,
      entity,
      store.catalog,
      async (changes) => {
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
      },
      decorate,
    );
  }

  function remove(kind: EntityKind, id: string): void {
    const entity = store.find(kind, id);
    if (!entity) return;
    openDialog(`Delete ${kindLabel[kind]} ${entity.name}?`, (body, close) => {
      const status = h('p', { 'aria-live': 'polite' });
      const wasOpen = (): boolean => selected?.kind === kind && selected.id === id;
      const confirm = h('button', { type: 'button', class: 'danger' }, 'Delete');
      confirm.addEventListener('click', () => {
        confirm.disabled = true;
        const open = wasOpen();
        // Stop the open panel's requests before the object goes: answered after the
        // delete they would be 404s for an id that no longer exists.
        if (open) abortPanelRequests();
        void store
          .remove(kind, id)
          .then(() => {
            close();
            if (wasOpen()) {
              selected = null;
              clear(detail);
            }
            announce(`Deleted ${entity.name}`);
          })
          .catch((err: unknown) => {
            confirm.disabled = false;
            status.textContent = explainWriteError(err, store, `${kindLabel[kind]} ${entity.name}`);
            // Not deleted: show the panel again (its requests were stopped).
            if (open && store.find(kind, id)) select(kind, id, false);
          });
      });
      body.append(
        h('p', {}, `The ${kindLabel[kind]} and its cached predictions are removed from the plan. “Undo last change” puts it back (as a new object with the same values).`),
        h('div', { class: 'dialog-actions' }, confirm, h('button', { type: 'button', onclick: close }, 'Keep it')),
        status,
      );
    });
  }

  function refresh(): void {
    if (!selected) return;
    const current = store.find(selected.kind, selected.id);
    if (!current) {
      abortPanelRequests();
      selected = null;
      clear(detail);
      return;
    }
    if (panelInputs(store, selected.kind, current) !== shownInputs) {
      // Something the panel was drawn from changed (an edit, an undo, a gateway moved, a kit
      // applied, plan settings, a reload): draw it again from the current state.
      select(selected.kind, selected.id, false);
    } else if (selected.kind === 'nodes' && store.fleet.has(current.id)) {
      // The fleet statuses were recomputed after an edit: the heading follows them.
      showNodeStatus(detail, ctx.nodeClass(current.id));
    }
  }

  return {
    isSelected: (kind, id) => selected?.kind === kind && selected.id === id,
    select,
    refresh,
    stop: abortPanelRequests,
  };
}
