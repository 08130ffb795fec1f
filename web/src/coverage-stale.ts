// Whether a coverage overlay still shows the plan (the coverage panel marks it out of date):
// pure, so test/unit/web/coverage-stale.test.ts runs it without a browser.
import type { CoverageRun } from './api.ts';

type Stamped = { id: string; version: number; updatedAt?: unknown };

/** The parts of the tab's plan store (PlanStore) a coverage run depends on. */
export interface CoverageInputs {
  plan: { version: number; updatedAt?: unknown };
  gateways: ReadonlyArray<Stamped & { name?: string | null }>;
  nodes: ReadonlyArray<Stamped>;
}

/** What a coverage run depends on, as this tab holds it: the plan settings, every gateway and node. */
export function planInputs(store: CoverageInputs): string {
  const list = (items: ReadonlyArray<{ id: string; version: number }>): string => items.map((e) => `${e.id}:${e.version}`).join(',');
  return `plan:${store.plan.version}|g:${list(store.gateways)}|n:${list(store.nodes)}`;
}

const after = (stamp: unknown, runCreatedAt: string): boolean => typeof stamp === 'string' && Date.parse(stamp) > Date.parse(runCreatedAt);

/**
 * Why a finished run no longer shows the plan, or null: a gateway of the run was deleted or
 * changed, the set of gateways of a composite changed, the plan settings or the nodes (whose
 * counts the summary gives) changed after the run was started — by timestamps for edits made
 * before this page was opened, and by versions for any made since (deletions included).
 */
export function staleReason(store: CoverageInputs, run: Pick<CoverageRun, 'gatewayIds' | 'createdAt'>, inputsWhenShown: string): string | null {
  const byId = new Map(store.gateways.map((g) => [g.id, g]));
  const gone = run.gatewayIds.filter((id) => !byId.has(id));
  if (gone.length > 0) return `${gone.length === 1 ? 'a gateway of this run was' : `${gone.length} gateways of this run were`} deleted`;
  const changed = run.gatewayIds.map((id) => byId.get(id)).filter((g) => g && after(g.updatedAt, run.createdAt));
  if (changed.length > 0) return `gateway ${changed.map((g) => g?.name).join(', ')} changed after this run`;
  if (run.gatewayIds.length > 1 && store.gateways.length !== run.gatewayIds.length) return 'gateways were added since this composite run';
  if (after(store.plan.updatedAt, run.createdAt)) return 'the plan settings changed after this run';
  if (store.nodes.some((n) => after(n.updatedAt, run.createdAt))) return 'nodes changed after this run (its node counts are old)';
  if (planInputs(store) !== inputsWhenShown) return 'the plan was edited since this overlay was drawn';
  return null;
}
