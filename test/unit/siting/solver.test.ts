import { beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import type { Highs } from 'highs';
import { capacityFlow, capacityHoming, coverInstance, greedyCover, marginalNodes, requirements, type CoverInstance, type CoverOptions } from '../../../server/siting/cover.ts';
import { selectionCovered, selectionFeasible, sitingLpText, solveSiting } from '../../../server/siting/milp.ts';
import { radioHorizonM } from '../../../server/siting/horizon.ts';

let highs: Highs;
beforeAll(async () => {
  highs = await ((await import('highs')) as unknown as { default: () => Promise<Highs> }).default();
});

/** Deterministic PRNG (mulberry32) so every run draws the same instances. */
function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function randomInstance(rand: () => number, withFixed: boolean): CoverInstance {
  const nodes = 1 + Math.floor(rand() * 12);
  const candidates = 1 + Math.floor(rand() * 8);
  const density = 0.15 + rand() * 0.5;
  const meets = Array.from({ length: nodes }, () => Array.from({ length: candidates }, () => rand() < density));
  const costs = Array.from({ length: candidates }, () => 100 * (1 + Math.floor(rand() * 20)));
  const fixed = Array.from({ length: candidates }, () => withFixed && rand() < 0.15);
  return coverInstance(meets, candidates, costs.map((c, j) => (fixed[j] ? 0 : c)), fixed);
}

/** Every subset of the candidates, checked directly against the rules (no solver). */
function bruteForce(instance: CoverInstance, options: CoverOptions): { best: number | null } {
  const m = instance.candidateCount;
  const r = requirements(instance, options.requiredGateways);
  const budget = options.budgetUsd !== undefined || options.maxGateways !== undefined;
  let best: number | null = null;
  for (let mask = 0; mask < 1 << m; mask++) {
    const selected = new Uint8Array(m);
    let cost = 0;
    let count = 0;
    let ok = true;
    for (let j = 0; j < m; j++) {
      selected[j] = (mask >> j) & 1;
      if (instance.fixed[j] && !selected[j]) ok = false;
      if (selected[j]) {
        cost += instance.costUsd[j];
        count++;
      }
    }
    if (!ok) continue;
    let covered = 0;
    let all = true;
    for (let i = 0; i < instance.nodeCount; i++) {
      let heard = 0;
      for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) heard += selected[instance.hearIndex[p]];
      if (r[i] > 0 && heard >= r[i]) covered++;
      else if (r[i] > 0) all = false;
    }
    if (budget) {
      if (options.budgetUsd !== undefined && cost > options.budgetUsd) continue;
      if (options.maxGateways !== undefined && count > options.maxGateways) continue;
      if (best === null || covered > best) best = covered;
    } else {
      if (!all) continue;
      if (options.maxNodesPerGateway !== undefined && !selectionFeasible(instance, options, selected)) continue;
      const value = options.minimise === 'cost' ? cost : count;
      if (best === null || value < best) best = value;
    }
  }
  return { best };
}

describe('siting MILP (HiGHS) against brute force on small random instances', () => {
  const variants: Array<{ name: string; options: (rand: () => number, k: number) => CoverOptions }> = [
    { name: 'fewest gateways', options: (_r, k) => ({ requiredGateways: k }) },
    { name: 'least cost', options: (_r, k) => ({ requiredGateways: k, minimise: 'cost' }) },
    { name: 'budget in USD', options: (r, k) => ({ requiredGateways: k, budgetUsd: Math.floor(r() * 2500) }) },
    { name: 'at most G gateways', options: (r, k) => ({ requiredGateways: k, maxGateways: Math.floor(r() * 4) }) },
    { name: 'budget and G together', options: (r, k) => ({ requiredGateways: k, budgetUsd: 500 + Math.floor(r() * 2000), maxGateways: 1 + Math.floor(r() * 3) }) },
    { name: 'capacity cap', options: (r, k) => ({ requiredGateways: k, maxNodesPerGateway: 1 + Math.floor(r() * 6) }) },
  ];
  for (const variant of variants) {
    for (const k of [1, 2, 3]) {
      it(`${variant.name}, k = ${k}: optimal value equals brute force over 30 seeded instances`, () => {
        const rand = random(1000 * k + variant.name.length);
        let solvedFeasible = 0;
        for (let round = 0; round < 30; round++) {
          const instance = randomInstance(rand, variant.name !== 'at most G gateways' || round % 2 === 0);
          const options = variant.options(rand, k);
          const brute = bruteForce(instance, options);
          const solution = solveSiting(highs, instance, options);
          if (brute.best === null) {
            expect(solution.status, `round ${round}`).toBe('infeasible');
            continue;
          }
          expect(solution.status, `round ${round}`).toBe('optimal');
          expect(solution.gapPercent).toBe(0);
          expect(solution.objective, `round ${round}`).toBeCloseTo(brute.best, 6);
          expect(selectionFeasible(instance, options, solution.selected, solution.covered), `round ${round}`).toBe(true);
          for (let j = 0; j < instance.candidateCount; j++) if (instance.fixed[j]) expect(solution.selected[j]).toBe(1);
          solvedFeasible++;
        }
        expect(solvedFeasible).toBeGreaterThan(10);
      });
    }
  }
});

describe('siting edge cases', () => {
  it('a node no candidate hears is left out; a node heard by one candidate when k = 2 asks for that one', () => {
    // Nodes: 0 heard by A,B,C; 1 heard by C only; 2 heard by nobody.
    const instance = coverInstance([[true, true, true], [false, false, true], [false, false, false]], 3, [1, 1, 1]);
    expect(Array.from(requirements(instance, 2))).toEqual([2, 1, 0]);
    const solution = solveSiting(highs, instance, { requiredGateways: 2 });
    expect(solution.status).toBe('optimal');
    expect(solution.objective).toBe(2);
    expect(solution.selected[2]).toBe(1);
  });

  it('no candidates, or no node heard: nothing to decide, the fixed set is the answer', () => {
    const empty = coverInstance([[], []], 0, []);
    expect(solveSiting(highs, empty, { requiredGateways: 1 })).toMatchObject({ status: 'optimal', objective: 0, solver: 'none (nothing to decide)' });
    const deaf = coverInstance([[false, false]], 2, [5, 5], [true, false]);
    const answer = solveSiting(highs, deaf, { requiredGateways: 1 });
    expect(Array.from(answer.selected)).toEqual([1, 0]);
  });

  it('an impossible capacity cap answers infeasible, naming the rule', () => {
    // Three nodes only candidate 0 hears, at most 2 nodes per gateway.
    const instance = coverInstance([[true], [true], [true]], 1, [1]);
    const solution = solveSiting(highs, instance, { requiredGateways: 1, maxNodesPerGateway: 2 });
    expect(solution.status).toBe('infeasible');
    expect(solution.message).toMatch(/maxNodesPerGateway/);
  });

  it('more gateways kept as built than maxGateways allows is infeasible', () => {
    const instance = coverInstance([[true, true]], 2, [0, 0], [true, true]);
    expect(solveSiting(highs, instance, { requiredGateways: 1, maxGateways: 1 }).status).toBe('infeasible');
  });

  it('bad options are refused by name', () => {
    const instance = coverInstance([[true]], 1, [1]);
    expect(() => solveSiting(highs, instance, { requiredGateways: 0 })).toThrow(/requiredGateways/);
    expect(() => solveSiting(highs, instance, { requiredGateways: 1, budgetUsd: -1 })).toThrow(/budgetUsd/);
    expect(() => coverInstance([[true]], 1, [-5])).toThrow(/costUsd/);
  });

  it('a zero budget covers only what the fixed gateways and free candidates reach', () => {
    const instance = coverInstance([[true, false, false], [false, true, false], [false, false, true]], 3, [0, 10, 0], [true, false, false]);
    const solution = solveSiting(highs, instance, { requiredGateways: 1, budgetUsd: 0 });
    expect(solution.objective).toBe(2);
    expect(Array.from(solution.selected)).toEqual([1, 0, 1]);
  });

  it('greedy is a feasible cover and never beats the proven optimum (set cover where greedy is known to lose)', () => {
    // The classic bad case for greedy: one big set overlapping two halves that cover everything.
    const rows: boolean[][] = [];
    for (let i = 0; i < 6; i++) rows.push([i < 3, i >= 3, i !== 0 && i !== 5]);
    // candidate 2 hears 4 nodes, 0 and 1 hear 3 each; optimum {0, 1}.
    const instance = coverInstance(rows, 3, [1, 1, 1]);
    const greedy = greedyCover(instance, { requiredGateways: 1 });
    expect(selectionFeasible(instance, { requiredGateways: 1 }, greedy)).toBe(true);
    const exact = solveSiting(highs, instance, { requiredGateways: 1 });
    expect(exact.objective).toBe(2);
    expect(greedy.reduce((a, b) => a + b, 0)).toBeGreaterThanOrEqual(2);
  });

  it('marginal value: nodes that fall short if a selected site is dropped', () => {
    // k = 1: node 0 heard by A and B, node 1 only by B.
    const instance = coverInstance([[true, true], [false, true]], 2, [1, 1]);
    const required = requirements(instance, 1);
    const lost = marginalNodes(instance, Uint8Array.from([1, 1]), required);
    expect(lost.get(0)).toEqual([]);
    expect(lost.get(1)).toEqual([1]);
    // k = 2: node 0 needs both (A's loss costs node 0), node 1 needs B (B's loss costs both).
    const lost2 = marginalNodes(instance, Uint8Array.from([1, 1]), requirements(instance, 2));
    expect(lost2.get(0)).toEqual([0]);
    expect(lost2.get(1)).toEqual([0, 1]);
  });

  it('capacity flow homes nodes exactly (3 nodes, 2 gateways of 2 seats: all 3 fit; with 1 seat each: 2)', () => {
    const instance = coverInstance([[true, true], [true, false], [false, true]], 2, [1, 1]);
    const required = requirements(instance, 1);
    expect(capacityFlow(instance, Uint8Array.from([1, 1]), required, 2)).toBe(3);
    expect(capacityFlow(instance, Uint8Array.from([1, 1]), required, 1)).toBe(2);
  });

  it('capacity homing is an integral assignment: each used pair one seat, at most the cap per gateway, r_i per node', () => {
    // 4 nodes all heard by both gateways, k = 2, 3 seats each: 6 seats for 8 units, so 3 nodes homed in full.
    const instance = coverInstance([[true, true], [true, true], [true, true], [true, true]], 2, [1, 1]);
    const required = requirements(instance, 2);
    const { flow, units, pair } = capacityHoming(instance, Uint8Array.from([1, 1]), required, 3);
    expect(flow).toBe(6);
    const load = [0, 0];
    for (let p = 0; p < pair.length; p++) if (pair[p]) load[instance.hearIndex[p]]++;
    expect(load).toEqual([3, 3]);
    expect(Array.from(units).reduce((a, b) => a + b, 0)).toBe(6);
    // The covered set drops the node homed in part: 3 nodes, not the 4 that two chosen gateways hear.
    const covered = selectionCovered(highs, instance, { requiredGateways: 2, maxNodesPerGateway: 3 }, Uint8Array.from([1, 1]));
    expect(Array.from(covered).reduce((a, b) => a + b, 0)).toBe(3);
  });

  it('the LP text names every variable and the fixed bounds', () => {
    const instance = coverInstance([[true, true]], 2, [3, 4], [true, false]);
    const { text } = sitingLpText(instance, { requiredGateways: 1, minimise: 'cost' });
    expect(text).toContain('Minimize');
    expect(text).toContain('x_0 = 1');
    expect(text).toMatch(/n_0: \+ 1 x_0 \+ 1 x_1 >= 1/);
  });
});

describe('radio horizon', () => {
  it('d = √(2kah1) + √(2kah2): 10 m and 0 m over a 4/3 earth is about 13.0 km (d[km] ≈ 4.12·√h, the tangent geometry of a sphere)', () => {
    expect(radioHorizonM(10, 0, 4 / 3) / 1000).toBeCloseTo(4.12 * Math.sqrt(10), 1);
    expect(radioHorizonM(30, 2, 4 / 3)).toBeCloseTo(radioHorizonM(30, 0, 4 / 3) + radioHorizonM(2, 0, 4 / 3), 6);
  });
});

/**
 * Capacity by enumeration of assignments (independent of capacityFlow and of the MILP): can every
 * node of `nodes` get r_i distinct chosen hearers with no chosen candidate homing more than `cap`?
 */
function assignable(instance: CoverInstance, selected: Uint8Array, r: Int32Array, nodes: number[], cap: number): boolean {
  const load = new Int32Array(instance.candidateCount);
  const place = (k: number): boolean => {
    if (k === nodes.length) return true;
    const i = nodes[k];
    const hearers: number[] = [];
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) if (selected[instance.hearIndex[p]]) hearers.push(instance.hearIndex[p]);
    const pick = (from: number, left: number): boolean => {
      if (left === 0) return place(k + 1);
      for (let h = from; h <= hearers.length - left; h++) {
        const j = hearers[h];
        if (load[j] >= cap) continue;
        load[j]++;
        if (pick(h + 1, left - 1)) return true;
        load[j]--;
      }
      return false;
    };
    return pick(0, r[i]);
  };
  return place(0);
}

describe('capacity cap (maxNodesPerGateway) against enumeration of assignments', () => {
  for (const budget of [false, true]) {
    // With a budget/gateway limit AND a cap, the objective and the covered set are the nodes the
    // chosen set can home within the cap (read from the solver's y_i / a_p), not merely those heard
    // by r_i chosen gateways (round 1 of the budget draw: 3 heard, 2 homeable).
    it(`${budget ? 'budget variant (at most G gateways)' : 'cover variant (fewest gateways)'}, k = 1…3: optimal value equals subsets × assignments on 40 seeded tiny instances`, () => {
      const rand = random(budget ? 4242 : 2424);
      let binding = 0;
      for (let round = 0; round < 40; round++) {
        const nodeCount = 1 + Math.floor(rand() * 5);
        const m = 1 + Math.floor(rand() * 4);
        const meets = Array.from({ length: nodeCount }, () => Array.from({ length: m }, () => rand() < 0.6));
        const instance = coverInstance(meets, m, Array.from({ length: m }, () => 100), Array.from({ length: m }, () => false));
        const k = 1 + (round % 3);
        const cap = 1 + Math.floor(rand() * 3);
        const options: CoverOptions = budget ? { requiredGateways: k, maxNodesPerGateway: cap, maxGateways: 1 + Math.floor(rand() * m) } : { requiredGateways: k, maxNodesPerGateway: cap };
        const r = requirements(instance, k);
        const coverable = Array.from({ length: nodeCount }, (_x, i) => i).filter((i) => r[i] > 0);
        let best: number | null = null;
        let bestUncapped: number | null = null;
        for (let mask = 0; mask < 1 << m; mask++) {
          const selected = new Uint8Array(m);
          let count = 0;
          for (let j = 0; j < m; j++) count += selected[j] = (mask >> j) & 1;
          if (budget) {
            if (count > (options.maxGateways as number)) continue;
            // The most coverable nodes that can all be homed at once.
            for (let sub = 0; sub < 1 << coverable.length; sub++) {
              const nodes = coverable.filter((_i, b) => (sub >> b) & 1);
              if ((best === null || nodes.length > best) && assignable(instance, selected, r, nodes, cap)) best = nodes.length;
              if ((bestUncapped === null || nodes.length > bestUncapped) && assignable(instance, selected, r, nodes, Number.MAX_SAFE_INTEGER)) bestUncapped = nodes.length;
            }
          } else {
            if ((best === null || count < best) && assignable(instance, selected, r, coverable, cap)) best = count;
            if ((bestUncapped === null || count < bestUncapped) && assignable(instance, selected, r, coverable, Number.MAX_SAFE_INTEGER)) bestUncapped = count;
          }
        }
        if (best !== bestUncapped) binding++;
        const solution = solveSiting(highs, instance, options);
        if (best === null) {
          expect(solution.status, `round ${round}`).toBe('infeasible');
          continue;
        }
        expect(solution.status, `round ${round}`).toBe('optimal');
        expect(solution.objective, `round ${round}`).toBeCloseTo(best, 6);
        // The returned selection itself obeys the cap by enumeration, for the very nodes it reports covered.
        const reported = Array.from({ length: nodeCount }, (_x, i) => i).filter((i) => solution.covered[i] === 1);
        if (budget) expect(reported.length, `round ${round}`).toBe(best);
        else expect(reported, `round ${round}`).toEqual(coverable);
        expect(assignable(instance, solution.selected, r, reported, cap), `round ${round}`).toBe(true);
        // The ranking counts on the same set: a site's nodesOnlyHere are covered nodes.
        for (const nodes of marginalNodes(instance, solution.selected, r, solution.covered).values()) for (const i of nodes) expect(solution.covered[i]).toBe(1);
      }
      // The cap changed the answer on some instances (the test can tell a model that ignores it).
      expect(binding).toBeGreaterThan(3);
    });
  }
});

describe('selectionCovered (a given selection under a nodes-per-gateway cap) against brute force', () => {
  /** The most coverable nodes all homed at once within the cap, over every subset of nodes (by enumeration of assignments). */
  function mostHomed(instance: CoverInstance, selected: Uint8Array, r: Int32Array, cap: number): number {
    const nodes = Array.from({ length: instance.nodeCount }, (_x, i) => i).filter((i) => r[i] > 0);
    let best = 0;
    for (let sub = 0; sub < 1 << nodes.length; sub++) {
      const chosen = nodes.filter((_i, b) => (sub >> b) & 1);
      if (chosen.length > best && assignable(instance, selected, r, chosen, cap)) best = chosen.length;
    }
    return best;
  }

  it('k = 3, three gateways of two seats: 4 single-hearer nodes fill the seats (the flow-and-drop count found 3, keeping a node that takes a seat at each)', () => {
    // Gateways A, B, C. Nodes 0 and 6 hear only C, nodes 1, 2, 4 only A (r = 1); nodes 3 and 5 hear all three (r = 3).
    // Best: 0 and 6 on C, two of 1, 2, 4 on A = 4 nodes. A node with r = 3 takes one seat at each and blocks two others.
    // Found by the property test below against the earlier rule (max flow over all heard nodes, then drop the part-homed ones).
    const meets = [[false, false, true], [true, false, false], [true, false, false], [true, true, true], [true, false, false], [true, true, true], [false, false, true]];
    const instance = coverInstance(meets, 3, [1, 1, 1]);
    const covered = selectionCovered(highs, instance, { requiredGateways: 3, maxNodesPerGateway: 2 }, Uint8Array.from([1, 1, 1]));
    expect(selectionCount(covered)).toBe(4);
    expect(assignable(instance, Uint8Array.from([1, 1, 1]), requirements(instance, 3), [...covered.keys()].filter((i) => covered[i]), 2)).toBe(true);
  });

  it('never fewer nodes than the brute-force optimum, and the nodes it reports can all be seated (fast-check, k = 1…3)', () => {
    const instances = fc
      .record({ nodes: fc.integer({ min: 1, max: 7 }), candidates: fc.integer({ min: 1, max: 4 }) })
      .chain(({ nodes, candidates }) =>
        fc.record({
          meets: fc.array(fc.array(fc.boolean(), { minLength: candidates, maxLength: candidates }), { minLength: nodes, maxLength: nodes }),
          selected: fc.array(fc.integer({ min: 0, max: 1 }), { minLength: candidates, maxLength: candidates }),
          k: fc.integer({ min: 1, max: 3 }),
          cap: fc.integer({ min: 1, max: 4 }),
        }),
      );
    fc.assert(
      fc.property(instances, ({ meets, selected, k, cap }) => {
        const m = selected.length;
        const instance = coverInstance(meets, m, Array.from({ length: m }, () => 100));
        const chosen = Uint8Array.from(selected);
        const r = requirements(instance, k);
        const covered = selectionCovered(highs, instance, { requiredGateways: k, maxNodesPerGateway: cap }, chosen);
        const reported = Array.from({ length: instance.nodeCount }, (_x, i) => i).filter((i) => covered[i] === 1);
        expect(reported.length).toBeGreaterThanOrEqual(mostHomed(instance, chosen, r, cap));
        expect(assignable(instance, chosen, r, reported, cap)).toBe(true);
      }),
      { numRuns: 400, seed: 20261202 },
    );
  });

  it('the greedy figure under a cap is counted the same way: greedy.covered equals selectionCovered of the greedy selection', () => {
    const rand = random(777);
    for (let round = 0; round < 20; round++) {
      const instance = randomInstance(rand, false);
      const options: CoverOptions = { requiredGateways: 1 + (round % 3), maxNodesPerGateway: 1 + Math.floor(rand() * 3), maxGateways: 1 + Math.floor(rand() * 3) };
      const solution = solveSiting(highs, instance, options);
      expect(Array.from(solution.greedy.covered), `round ${round}`).toEqual(Array.from(selectionCovered(highs, instance, options, solution.greedy.selected)));
      const r = requirements(instance, options.requiredGateways);
      expect(selectionCount(solution.greedy.covered), `round ${round}`).toBe(mostHomed(instance, solution.greedy.selected, r, options.maxNodesPerGateway as number));
    }
  });
});

function selectionCount(mask: Uint8Array): number {
  return mask.reduce((a, b) => a + b, 0);
}
