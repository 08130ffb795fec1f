// The coverage panel's "out of date" rule (web/src/coverage-stale.ts): which edit of the plan makes
// a finished run's overlay stale, and what the panel says, in the order the rule checks them.
import { describe, expect, it } from 'vitest';
import { planInputs, staleReason, type CoverageInputs } from '../../../web/src/coverage-stale.ts';

const RUN_AT = '2026-12-01T10:00:00.000Z';
const BEFORE = '2026-12-01T09:00:00.000Z';
const LATER = '2026-12-01T11:00:00.000Z';

function store(overrides: Partial<CoverageInputs> = {}): CoverageInputs {
  return {
    plan: { version: 3, updatedAt: BEFORE },
    gateways: [
      { id: 'g1', name: 'Mill tower', version: 1, updatedAt: BEFORE },
      { id: 'g2', name: 'Ridge mast', version: 2, updatedAt: BEFORE },
    ],
    nodes: [{ id: 'n1', version: 1, updatedAt: BEFORE }],
    ...overrides,
  };
}

const single = { gatewayIds: ['g1'], createdAt: RUN_AT };
const composite = { gatewayIds: ['g1', 'g2'], createdAt: RUN_AT };

describe('staleReason', () => {
  it('null while nothing the run depends on changed (edits before the run do not count)', () => {
    const s = store();
    expect(staleReason(s, single, planInputs(s))).toBeNull();
    expect(staleReason(s, composite, planInputs(s))).toBeNull();
  });

  it('a gateway of the run deleted: one or several, named by count', () => {
    const s = store({ gateways: [] });
    expect(staleReason(s, single, planInputs(s))).toBe('a gateway of this run was deleted');
    expect(staleReason(s, composite, planInputs(s))).toBe('2 gateways of this run were deleted');
  });

  it('a gateway of the run edited after the run started: named; another gateway edited does not matter to a single run', () => {
    const s = store({ gateways: [{ id: 'g1', name: 'Mill tower', version: 2, updatedAt: LATER }, { id: 'g2', name: 'Ridge mast', version: 3, updatedAt: LATER }] });
    expect(staleReason(s, composite, planInputs(s))).toBe('gateway Mill tower, Ridge mast changed after this run');
    const other = store({ gateways: [{ id: 'g1', name: 'Mill tower', version: 1, updatedAt: BEFORE }, { id: 'g2', name: 'Ridge mast', version: 3, updatedAt: LATER }] });
    expect(staleReason(other, single, planInputs(other))).toBeNull();
  });

  it('a gateway added to a plan whose composite run covered every gateway', () => {
    const s = store();
    const grown = store({ gateways: [...s.gateways, { id: 'g3', name: 'New', version: 1, updatedAt: BEFORE }] });
    expect(staleReason(grown, composite, planInputs(grown))).toBe('gateways were added since this composite run');
    // A single-gateway run is about its own gateway only.
    expect(staleReason(grown, single, planInputs(grown))).toBeNull();
  });

  it('plan settings, then nodes, edited after the run (timestamps: edits made before this page was opened)', () => {
    const plan = store({ plan: { version: 4, updatedAt: LATER } });
    expect(staleReason(plan, single, planInputs(plan))).toBe('the plan settings changed after this run');
    const nodes = store({ nodes: [{ id: 'n1', version: 2, updatedAt: LATER }] });
    expect(staleReason(nodes, single, planInputs(nodes))).toBe('nodes changed after this run (its node counts are old)');
  });

  it('any edit since the overlay was drawn (versions: a node deleted has no timestamp left to compare)', () => {
    const shown = store();
    const inputs = planInputs(shown);
    const deleted = store({ nodes: [] });
    expect(staleReason(deleted, single, inputs)).toBe('the plan was edited since this overlay was drawn');
    const bumped = store({ gateways: [{ id: 'g1', name: 'Mill tower', version: 1, updatedAt: BEFORE }, { id: 'g2', name: 'Ridge mast', version: 9, updatedAt: BEFORE }] });
    expect(staleReason(bumped, single, inputs)).toBe('the plan was edited since this overlay was drawn');
  });

  it('checks in order: a deleted gateway is named before a later plan edit', () => {
    const s = store({ plan: { version: 5, updatedAt: LATER }, gateways: [{ id: 'g2', name: 'Ridge mast', version: 2, updatedAt: BEFORE }] });
    expect(staleReason(s, composite, planInputs(store()))).toBe('a gateway of this run was deleted');
  });

  it('timestamps that are missing or not strings never count as later', () => {
    const s = store({ plan: { version: 3, updatedAt: undefined }, nodes: [{ id: 'n1', version: 1, updatedAt: 12345 }] });
    expect(staleReason(s, single, planInputs(s))).toBeNull();
  });
});
