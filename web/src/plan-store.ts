// The plan being viewed: its nodes, gateways, sites, catalog and the fleet
// status per node, plus every edit the planner makes (so it can be undone)
// and the explanation of a 409 version conflict.
import {
  ApiError,
  createEntity,
  deleteEntity,
  getCatalog,
  getFleet,
  getPlan,
  listEntities,
  updateEntity,
  updatePlan,
  type Catalog,
  type Entity,
  type EntityKind,
  type FleetNode,
  type FleetRow,
  type Gateway,
  type Plan,
  type Site,
} from './api.ts';
import { kindLabel } from './views/edit-dialog.ts';
import { h, openDialog } from './ui.ts';

export interface UndoEntry {
  label: string;
  /** Undoes the change through the store open now (the view that made it may be gone). */
  run: (store: PlanStore) => Promise<void>;
}

/**
 * Undo history per plan, kept for the life of the tab: each view makes its own PlanStore,
 * so a history on the store would be lost on a change of view (map → fleet table → map).
 * Entries carry ids and values, not the store that recorded them.
 */
interface PlanHistory {
  undo: UndoEntry[];
  /** Old id → new id of objects an undo re-created (a re-created object gets a new id). */
  recreated: Map<string, string>;
}
const histories = new Map<string, PlanHistory>();
function historyOf(planId: string): PlanHistory {
  let history = histories.get(planId);
  if (!history) {
    history = { undo: [], recreated: new Map() };
    histories.set(planId, history);
  }
  return history;
}

/** Fields a create call accepts back when an undo re-creates a deleted object. */
const serverFields = new Set(['id', 'planId', 'version', 'createdAt', 'updatedAt']);

export class PlanStore {
  readonly planId: string;
  plan!: Plan;
  nodes: FleetNode[] = [];
  gateways: Gateway[] = [];
  sites: Site[] = [];
  catalog: Catalog = { antennas: [], feedlines: [], masts: [] };
  fleet = new Map<string, FleetRow>();
  /** Why the fleet status is missing, if it is (e.g. the links API is not deployed yet). */
  fleetProblem: string | null = null;
  /** This plan's undo history (shared by every view of the plan in this tab). */
  readonly undoStack: UndoEntry[];
  /** Resolves when the latest fleet-status refresh (started after a write) has been applied. */
  fleetRefresh: Promise<void> = Promise.resolve();
  private listeners = new Set<() => void>();
  /**
   * Generation counters. Every local write bumps `writeGen`; a plan load that started before a
   * write would bring back the objects as they were (e.g. a node just deleted), so its lists are
   * thrown away and it reads again. `loadSeq` / `fleetSeq` number the loads: only the newest
   * one's answer is applied (an older answer arriving late is stale).
   */
  private writeGen = 0;
  private loadSeq = 0;
  private fleetSeq = 0;
  private readonly recreated: Map<string, string>;

  constructor(planId: string) {
    this.planId = planId;
    const history = historyOf(planId);
    this.undoStack = history.undo;
    this.recreated = history.recreated;
  }

  onChange(listener: () => void): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }
  changed(): void {
    for (const l of this.listeners) l();
  }

  /** Reads the plan and all its objects, then the fleet status. Returns false when a newer load superseded it. */
  async load(): Promise<boolean> {
    const mine = ++this.loadSeq;
    for (let attempt = 0; ; attempt++) {
      const gen = this.writeGen;
      const [plan, nodes, gateways, sites, catalog] = await Promise.all([
        getPlan(this.planId),
        listEntities<FleetNode>(this.planId, 'nodes'),
        listEntities<Gateway>(this.planId, 'gateways'),
        listEntities<Site>(this.planId, 'sites'),
        getCatalog().catch(() => ({ antennas: [], feedlines: [], masts: [] }) as Catalog),
      ]);
      if (mine !== this.loadSeq) return false;
      // A local write landed while the lists were read: they may predate it. Read again
      // (bounded: after a few tries the store keeps what it has and says nothing changed).
      if (gen !== this.writeGen) {
        if (attempt < 3) continue;
        return false;
      }
      this.plan = plan;
      this.nodes = nodes;
      this.gateways = gateways;
      this.sites = sites;
      this.catalog = catalog;
      break;
    }
    await this.loadFleet();
    return mine === this.loadSeq;
  }

  async loadFleet(): Promise<void> {
    const mine = ++this.fleetSeq;
    try {
      const table = await getFleet(this.planId);
      if (mine !== this.fleetSeq) return; // a newer refresh was started: this answer is stale
      this.fleet = new Map(table.items.map((row) => [row.nodeId, row]));
      this.fleetProblem = null;
    } catch (err) {
      if (mine !== this.fleetSeq) return;
      this.fleet = new Map();
      this.fleetProblem = err instanceof ApiError && err.notAvailable ? 'link predictions are not available on this server yet' : `link predictions failed: ${err instanceof Error ? err.message : String(err)}`;
    }
  }

  /** The current id of an object, following re-creations by undo. */
  currentId(id: string): string {
    let current = id;
    for (let hops = 0; hops < 50 && this.recreated.has(current); hops++) current = this.recreated.get(current) as string;
    return current;
  }

  list(kind: EntityKind): Entity[] {
    return kind === 'nodes' ? this.nodes : kind === 'gateways' ? this.gateways : this.sites;
  }
  find(kind: EntityKind, id: string): Entity | undefined {
    return this.list(kind).find((e) => e.id === id);
  }
  private put(kind: EntityKind, entity: Entity): void {
    const list = this.list(kind);
    const i = list.findIndex((e) => e.id === entity.id);
    if (i >= 0) list[i] = entity;
    else list.push(entity);
  }
  private drop(kind: EntityKind, id: string): void {
    const list = this.list(kind);
    const i = list.findIndex((e) => e.id === id);
    if (i >= 0) list.splice(i, 1);
  }
  private pushUndo(entry: UndoEntry): void {
    this.undoStack.push(entry);
    if (this.undoStack.length > 30) this.undoStack.shift();
  }

  async create(kind: EntityKind, body: Record<string, unknown>, recordUndo = true): Promise<Entity> {
    this.writeGen++;
    const created = await createEntity<Entity>(this.planId, kind, body);
    this.writeGen++;
    this.put(kind, created);
    if (recordUndo) {
      this.pushUndo({ label: `added ${kindLabel[kind]} ${created.name}`, run: (store) => store.remove(kind, store.currentId(created.id), false) });
    }
    this.afterWrite(kind);
    return created;
  }

  async update(kind: EntityKind, id: string, changes: Record<string, unknown>, recordUndo = true, label?: string): Promise<Entity> {
    const before = this.find(kind, id);
    if (!before) throw new Error(`${kindLabel[kind]} ${id} is no longer in this plan`);
    const beforeRecord = before as unknown as Record<string, unknown>;
    const previous: Record<string, unknown> = {};
    for (const key of Object.keys(changes)) previous[key] = beforeRecord[key] ?? null;
    this.writeGen++;
    const updated = await updateEntity<Entity>(this.planId, kind, id, { ...changes, version: before.version });
    this.writeGen++;
    this.put(kind, updated);
    if (recordUndo) {
      this.pushUndo({ label: label ?? `edited ${kindLabel[kind]} ${updated.name}`, run: (store) => store.update(kind, store.currentId(id), previous, false).then(() => undefined) });
    }
    this.afterWrite(kind);
    return updated;
  }

  async remove(kind: EntityKind, id: string, recordUndo = true): Promise<void> {
    const before = this.find(kind, id);
    if (!before) return;
    this.writeGen++;
    await deleteEntity(this.planId, kind, id);
    this.writeGen++;
    this.drop(kind, id);
    if (recordUndo) {
      const copy: Record<string, unknown> = {};
      for (const [key, value] of Object.entries(before)) if (!serverFields.has(key) && value !== null) copy[key] = value;
      this.pushUndo({
        label: `deleted ${kindLabel[kind]} ${before.name}`,
        run: async (store) => {
          // The server gives the re-created object a new id; older undo entries follow it.
          const again = await store.create(kind, copy, false);
          store.recreated.set(id, again.id);
        },
      });
    }
    this.afterWrite(kind);
  }

  /** Saves plan settings (with the version the form was opened on), then refreshes the statuses. */
  async updatePlan(changes: Record<string, unknown>, version: number): Promise<Plan> {
    this.writeGen++;
    const updated = await updatePlan(this.planId, { ...changes, version });
    this.writeGen++;
    this.plan = updated;
    this.afterWrite('nodes');
    return updated;
  }

  async undo(): Promise<string | null> {
    const entry = this.undoStack.pop();
    if (!entry) return null;
    try {
      await entry.run(this);
    } catch (err) {
      // A version conflict: after the reload the same undo can be tried again.
      if (err instanceof ApiError && err.status === 409) this.undoStack.push(entry);
      throw err;
    }
    return entry.label;
  }

  private afterWrite(kind: EntityKind): void {
    // Show the change at once; then refresh the statuses in the background (link predictions
    // depend on nodes, gateways and kit, and recomputing them can take seconds). The write
    // itself is done: the caller need not wait (the next edit or an undo may start now);
    // an older refresh answering after a newer one is ignored (loadFleet's counter).
    this.changed();
    if (kind !== 'sites') {
      this.fleetRefresh = this.loadFleet().then(() => this.changed());
    }
  }

  /** Reloads the whole plan after a conflict or an import so the map shows the stored state. */
  async reloadAll(): Promise<void> {
    if (await this.load()) this.changed();
  }
}

/** A write failed: explain it in words (409 gets its own dialog) and return the one-line text. */
export function explainWriteError(err: unknown, store: PlanStore, what: string): string {
  if (err instanceof ApiError && err.status === 409) {
    openDialog('Someone else changed this first', (body, close) => {
      body.append(
        h(
          'p',
          {},
          `Your change to ${what} was not saved: the copy you were editing is older than the one on the server (another person, tab or import changed it since you loaded the plan). `,
          'Nothing was overwritten.',
        ),
        h('p', {}, 'Reload to see the current values, then make your change again if it is still needed.'),
        h('p', { class: 'muted' }, `Server said: ${err.message}`),
        h(
          'div',
          { class: 'dialog-actions' },
          h(
            'button',
            {
              type: 'button',
              class: 'primary',
              onclick: () => {
                close();
                void store.reloadAll();
              },
            },
            'Reload the plan',
          ),
          h('button', { type: 'button', onclick: close }, 'Close'),
        ),
      );
    });
    return `Not saved: ${what} was changed by someone else (version conflict).`;
  }
  if (err instanceof ApiError && err.status === 403) return `Not saved: your role may not change ${what} (${err.message}).`;
  if (err instanceof ApiError) return `Not saved: ${err.message}`;
  return `Not saved: ${err instanceof Error ? err.message : String(err)}`;
}
