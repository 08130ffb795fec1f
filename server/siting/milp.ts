// The exact siting model as a mixed-integer program in CPLEX LP text, solved by
// HiGHS (the `highs` package: HiGHS compiled to WebAssembly). The HiGHS module
// is passed in (the app loads it once), so this file holds no global state.
//
// Variables: x_j ∈ {0,1} candidate j chosen; y_i ∈ {0,1} node i covered
// (budget variant only); a_p ∈ [0,1] node of hearing pair p homed at its
// candidate (capacity cap only; integral at any integral x, y because the
// assignment part is a transportation polytope with integer bounds).
//
// Cover variant:   min Σ w_j x_j   s.t. Σ_{j∈H(i)} x_j ≥ r_i  for every coverable i
//                  (w_j = 1 for "gateways", the cost in USD for "cost").
// Budget variant:  max Σ y_i − ε·Σ w_j x_j
//                  s.t. Σ_{j∈H(i)} x_j − r_i·y_i ≥ 0, Σ c_j x_j ≤ B, Σ x_j ≤ G;
//                  ε·Σ w_j x_j < 1/2 always, so the tie-break never trades a node.
// Capacity cap M:  Σ_{p∈i} a_p ≥ r_i (or r_i·y_i), a_p ≤ x_j(p), Σ_{p∋j} a_p ≤ M·x_j.
// Fixed gateways:  x_j = 1.
import type { Highs } from 'highs';
import { capacityFlow, capacityHoming, coveredMask, greedyCover, isBudgetVariant, requirements, selectionCostUsd, selectionCount, type CoverInstance, type CoverOptions } from './cover.ts';

export interface SolveOptions {
  /** Wall-clock limit of the MILP, seconds (default 10). */
  timeLimitS?: number;
  /** Relative gap at which HiGHS may stop and call the answer optimal (default 0: prove it). */
  relativeGap?: number;
}

export interface SitingSolution {
  /** optimal: proven; feasible: a solution, gap reported; infeasible: no selection satisfies the rules. */
  status: 'optimal' | 'feasible' | 'infeasible';
  selected: Uint8Array;
  /**
   * The nodes the answer covers, the one covered set every figure of the answer is counted
   * on: heard by r_i selected candidates and, with a capacity cap, homed within the cap by the
   * solver's own assignment (its y_i and a_p, made integral by a maximum flow over them).
   */
  covered: Uint8Array;
  /** Objective value in the model's own units (gateways, USD, or covered nodes). */
  objective: number;
  /** Best bound HiGHS proved (same units), null when it has none. */
  bound: number | null;
  /** 100·|objective − bound| / max(|objective|, 1e-9); 0 when proven. */
  gapPercent: number;
  solver: string;
  seconds: number;
  message: string | null;
  /** The greedy start: its selection and time, for the side-by-side figures. */
  greedy: { selected: Uint8Array; covered: Uint8Array; seconds: number; feasible: boolean };
}

function term(coefficient: number, name: string): string {
  const c = Number(coefficient.toPrecision(15));
  return `${c < 0 ? '-' : '+'} ${Math.abs(c)} ${name}`;
}

/** Writes terms a few per line (LP format lets an expression continue on the next line). */
function pushTerms(lines: string[], head: string, terms: string[], tail: string): void {
  if (terms.length === 0) {
    lines.push(`${head} 0 x_0 ${tail}`.trimEnd());
    return;
  }
  for (let t = 0; t < terms.length; t += 16) {
    const chunk = terms.slice(t, t + 16).join(' ');
    const first = t === 0;
    const last = t + 16 >= terms.length;
    lines.push(`${first ? head + ' ' : '   '}${chunk}${last ? (tail ? ' ' + tail : '') : ''}`);
  }
}

/**
 * The LP text of the model, with the weights used in the objective. `fixedSelection` pins every
 * x_j to it (0 or 1): the model then only decides which nodes the selection covers (y, a).
 */
export function sitingLpText(instance: CoverInstance, options: CoverOptions, fixedSelection?: Uint8Array): { text: string; budget: boolean; weights: Float64Array } {
  const required = requirements(instance, options.requiredGateways);
  const budget = isBudgetVariant(options);
  const m = instance.candidateCount;
  const byCost = options.minimise === 'cost';
  const weights = new Float64Array(m);
  for (let j = 0; j < m; j++) weights[j] = byCost ? instance.costUsd[j] : 1;
  const lines: string[] = [];
  const objective: string[] = [];
  if (budget) {
    let totalWeight = 0;
    for (let j = 0; j < m; j++) totalWeight += weights[j];
    const epsilon = 0.5 / (totalWeight + 1);
    for (let i = 0; i < instance.nodeCount; i++) if (required[i] > 0) objective.push(term(1, `y_${i}`));
    for (let j = 0; j < m; j++) objective.push(term(-epsilon * weights[j], `x_${j}`));
    lines.push('Maximize');
  } else {
    for (let j = 0; j < m; j++) objective.push(term(weights[j], `x_${j}`));
    lines.push('Minimize');
  }
  pushTerms(lines, ' obj:', objective, '');
  lines.push('Subject To');
  const cap = options.maxNodesPerGateway;
  for (let i = 0; i < instance.nodeCount; i++) {
    const r = required[i];
    if (r <= 0) continue;
    const terms: string[] = [];
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) terms.push(term(1, cap !== undefined ? `a_${p}` : `x_${instance.hearIndex[p]}`));
    if (budget) {
      terms.push(term(-r, `y_${i}`));
      pushTerms(lines, ` n_${i}:`, terms, '>= 0');
    } else pushTerms(lines, ` n_${i}:`, terms, `>= ${r}`);
  }
  if (cap !== undefined) {
    const perCandidate: string[][] = Array.from({ length: m }, () => []);
    for (let i = 0; i < instance.nodeCount; i++) {
      if (required[i] <= 0) continue;
      for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) {
        const j = instance.hearIndex[p];
        lines.push(` h_${p}: + 1 a_${p} - 1 x_${j} <= 0`);
        perCandidate[j].push(term(1, `a_${p}`));
      }
    }
    for (let j = 0; j < m; j++) if (perCandidate[j].length > 0) pushTerms(lines, ` c_${j}:`, [...perCandidate[j], term(-cap, `x_${j}`)], '<= 0');
  }
  if (budget && options.budgetUsd !== undefined) {
    const terms: string[] = [];
    for (let j = 0; j < m; j++) if (instance.costUsd[j] > 0) terms.push(term(instance.costUsd[j], `x_${j}`));
    if (terms.length > 0) pushTerms(lines, ' budget:', terms, `<= ${options.budgetUsd}`);
  }
  if (budget && options.maxGateways !== undefined) {
    const terms: string[] = [];
    for (let j = 0; j < m; j++) terms.push(term(1, `x_${j}`));
    pushTerms(lines, ' gateways:', terms, `<= ${options.maxGateways}`);
  }
  lines.push('Bounds');
  for (let j = 0; j < m; j++) lines.push(fixedSelection ? ` x_${j} = ${fixedSelection[j] ? 1 : 0}` : instance.fixed[j] ? ` x_${j} = 1` : ` 0 <= x_${j} <= 1`);
  if (cap !== undefined) for (let p = 0; p < instance.hearIndex.length; p++) lines.push(` 0 <= a_${p} <= 1`);
  if (budget) for (let i = 0; i < instance.nodeCount; i++) if (required[i] > 0) lines.push(` 0 <= y_${i} <= 1`);
  lines.push('General');
  const ints: string[] = [];
  for (let j = 0; j < m; j++) ints.push(`x_${j}`);
  if (budget) for (let i = 0; i < instance.nodeCount; i++) if (required[i] > 0) ints.push(`y_${i}`);
  for (let t = 0; t < ints.length; t += 20) lines.push(' ' + ints.slice(t, t + 20).join(' '));
  lines.push('End', '');
  return { text: lines.join('\n'), budget, weights };
}

/**
 * Objective of a selection in the model's units (see sitingLpText). Budget variant: the nodes
 * of `covered` (the answer's covered set: solutionCovered or selectionCovered).
 */
export function modelObjective(instance: CoverInstance, options: CoverOptions, selected: Uint8Array, covered: Uint8Array): number {
  if (isBudgetVariant(options)) return selectionCount(covered);
  return options.minimise === 'cost' ? selectionCostUsd(instance, selected) : selectionCount(selected);
}

/**
 * Whether a selection obeys every rule of the options (capacity via the exact flow check).
 * Cover variant: every coverable node met and homed within the cap. Budget variant: within
 * the budget and gateway limit, and every node of `covered` (the covered set claimed for it;
 * none when left out) heard by r_i selected candidates and all of them homed within the cap at once.
 */
export function selectionFeasible(instance: CoverInstance, options: CoverOptions, selected: Uint8Array, coveredNodes?: Uint8Array): boolean {
  for (let j = 0; j < instance.candidateCount; j++) if (instance.fixed[j] && !selected[j]) return false;
  const required = requirements(instance, options.requiredGateways);
  const budget = isBudgetVariant(options);
  if (budget) {
    if (options.budgetUsd !== undefined && selectionCostUsd(instance, selected) > options.budgetUsd + 1e-6) return false;
    if (options.maxGateways !== undefined && selectionCount(selected) > options.maxGateways) return false;
  }
  const heard = coveredMask(instance, selected, required);
  const covered = budget ? (coveredNodes ?? new Uint8Array(instance.nodeCount)) : heard;
  for (let i = 0; i < instance.nodeCount; i++) {
    if (!budget && required[i] > 0 && !heard[i]) return false;
    if (covered[i] && !heard[i]) return false;
  }
  if (options.maxNodesPerGateway !== undefined) {
    let need = 0;
    for (let i = 0; i < instance.nodeCount; i++) if (covered[i]) need += required[i];
    if (capacityFlow(instance, selected, required, options.maxNodesPerGateway, covered) < need) return false;
  }
  return true;
}

function validate(instance: CoverInstance, options: CoverOptions): string | null {
  if (!Number.isInteger(options.requiredGateways) || options.requiredGateways < 1) return 'requiredGateways: must be a whole number ≥ 1';
  if (options.budgetUsd !== undefined && !(options.budgetUsd >= 0)) return 'budgetUsd: must be ≥ 0';
  if (options.maxGateways !== undefined && !(Number.isInteger(options.maxGateways) && options.maxGateways >= 0)) return 'maxGateways: must be a whole number ≥ 0';
  if (options.maxNodesPerGateway !== undefined && !(Number.isInteger(options.maxNodesPerGateway) && options.maxNodesPerGateway >= 1)) return 'maxNodesPerGateway: must be a whole number ≥ 1';
  void instance;
  return null;
}

/** One HiGHS run of an LP text: what the callers read back (the model is disposed). */
interface LpRun {
  status: number;
  /** HiGHS holds a primal feasible solution. */
  hasSolution: boolean;
  /** Column value by variable name (NaN when the model has no such column or no solution). */
  value: (name: string) => number;
  /** mip_dual_bound, null when not finite. */
  bound: number | null;
  seconds: number;
}

function runLp(highs: Highs, text: string, solve: SolveOptions, start?: (column: (name: string) => number | undefined, numCols: number) => Float64Array | null): LpRun {
  const model = highs.createModel({ format: 'lp', data: text });
  const t0 = performance.now();
  try {
    model.options.set('output_flag', false);
    model.options.set('time_limit', solve.timeLimitS ?? 10);
    model.options.set('mip_rel_gap', solve.relativeGap ?? 0);
    model.options.set('mip_abs_gap', 1e-7);
    const numCols = model.getDimensions().numCols;
    const columns = new Map<string, number>();
    for (let c = 0; c < numCols; c++) columns.set(model.getColName(c), c);
    const startValues = start?.((name) => columns.get(name), numCols) ?? null;
    if (startValues) {
      try {
        model.setSolution({ colValue: startValues });
      } catch {
        // A start HiGHS refuses only costs time, never correctness.
      }
    }
    model.run();
    const seconds = (performance.now() - t0) / 1000;
    const status = model.getModelStatus();
    const hasSolution = status !== highs.constants.modelStatus.infeasible && Number(model.info.get('primal_solution_status')) === highs.constants.solutionStatus.feasible;
    const values = hasSolution ? Float64Array.from(model.getSolution().colValue as ArrayLike<number>) : new Float64Array(0);
    const bound = Number(model.info.get('mip_dual_bound'));
    return {
      status,
      hasSolution,
      value: (name) => {
        const c = columns.get(name);
        return c === undefined || !hasSolution ? Number.NaN : values[c];
      },
      bound: Number.isFinite(bound) ? bound : null,
      seconds,
    };
  } finally {
    model.dispose();
  }
}

/**
 * Solves the siting model: greedy first (its answer is HiGHS's start when it
 * obeys every rule), then the MILP to proven optimality or the time limit.
 */
export function solveSiting(highs: Highs, instance: CoverInstance, options: CoverOptions, solve: SolveOptions = {}): SitingSolution {
  const invalid = validate(instance, options);
  if (invalid) throw new RangeError(invalid);
  const solver = `HiGHS ${highs.version?.string ?? ''}`.trim();
  const g0 = performance.now();
  const greedySelected = greedyCover(instance, options);
  const greedySeconds = (performance.now() - g0) / 1000;
  const greedyCovered = selectionCovered(highs, instance, options, greedySelected, solve);
  const greedyFeasible = selectionFeasible(instance, options, greedySelected, greedyCovered);
  const greedy = { selected: greedySelected, covered: greedyCovered, seconds: greedySeconds, feasible: greedyFeasible };
  const budget = isBudgetVariant(options);
  let fixedCount = 0;
  for (const f of instance.fixed) fixedCount += f;
  if (budget && options.maxGateways !== undefined && fixedCount > options.maxGateways) {
    const selected = Uint8Array.from(instance.fixed);
    return { status: 'infeasible', selected, covered: selectionCovered(highs, instance, options, selected, solve), objective: Number.NaN, bound: null, gapPercent: Number.NaN, solver, seconds: 0, message: `maxGateways: ${options.maxGateways} is fewer than the ${fixedCount} gateways kept as built`, greedy };
  }
  const required = requirements(instance, options.requiredGateways);
  let decisions = 0;
  for (let j = 0; j < instance.candidateCount; j++) if (!instance.fixed[j]) decisions++;
  if (instance.candidateCount === 0 || decisions === 0 || required.every((r) => r === 0)) {
    // Nothing to decide: the fixed gateways are the answer (no candidate, or no node any candidate hears).
    const selected = Uint8Array.from(instance.fixed);
    const covered = selectionCovered(highs, instance, options, selected, solve);
    const feasible = selectionFeasible(instance, options, selected, covered);
    const objective = modelObjective(instance, options, selected, covered);
    return { status: feasible ? 'optimal' : 'infeasible', selected, covered, objective, bound: feasible ? objective : null, gapPercent: feasible ? 0 : Number.NaN, solver: 'none (nothing to decide)', seconds: 0, message: feasible ? null : 'the gateways kept as built break the capacity cap', greedy };
  }
  const { text } = sitingLpText(instance, options);
  const lp = runLp(highs, text, solve, (column, numCols) => {
    if (!greedyFeasible) return null;
    const start = new Float64Array(numCols);
    for (let j = 0; j < instance.candidateCount; j++) start[column(`x_${j}`) as number] = greedySelected[j];
    if (budget) for (let i = 0; i < instance.nodeCount; i++) if (required[i] > 0) start[column(`y_${i}`) as number] = greedyCovered[i];
    if (options.maxNodesPerGateway !== undefined) {
      // The greedy's homes, from the same maximum flow that made its covered set whole.
      const { pair } = capacityHoming(instance, greedySelected, required, options.maxNodesPerGateway, greedyCovered);
      for (let p = 0; p < pair.length; p++) {
        const c = column(`a_${p}`);
        if (c !== undefined) start[c] = pair[p];
      }
    }
    return start;
  });
  const { seconds, status } = lp;
  const codes = highs.constants.modelStatus;
  if (status === codes.infeasible) {
    const selected = Uint8Array.from(instance.fixed);
    return { status: 'infeasible', selected, covered: selectionCovered(highs, instance, options, selected, solve), objective: Number.NaN, bound: null, gapPercent: Number.NaN, solver, seconds, message: infeasibleMessage(options), greedy };
  }
  if (!lp.hasSolution) {
    // Time ran out before HiGHS found a solution of its own: fall back on greedy when it obeys the rules.
    const message = `HiGHS stopped (${statusName(highs, status)}) without a solution`;
    if (greedyFeasible) {
      const objective = modelObjective(instance, options, greedySelected, greedyCovered);
      return { status: 'feasible', selected: greedySelected, covered: greedyCovered, objective, bound: null, gapPercent: Number.NaN, solver: `greedy (${solver} ${message})`, seconds, message, greedy };
    }
    const selected = Uint8Array.from(instance.fixed);
    return { status: 'infeasible', selected, covered: selectionCovered(highs, instance, options, selected, solve), objective: Number.NaN, bound: null, gapPercent: Number.NaN, solver, seconds, message, greedy };
  }
  const selected = new Uint8Array(instance.candidateCount);
  for (let j = 0; j < instance.candidateCount; j++) selected[j] = lp.value(`x_${j}`) > 0.5 ? 1 : 0;
  const covered = solutionCovered(instance, options, required, selected, lp.value);
  const objective = modelObjective(instance, options, selected, covered);
  let bound = lp.bound;
  // The budget model's objective carries the ε tie-break; its bound on covered nodes is ⌊bound + ½⌋.
  if (bound !== null && budget) bound = Math.floor(bound + 0.5);
  const proven = status === codes.optimal;
  const gapPercent = proven ? 0 : bound === null ? Number.NaN : (100 * Math.abs(objective - bound)) / Math.max(Math.abs(objective), 1e-9);
  return { status: proven ? 'optimal' : 'feasible', selected, covered, objective, bound: proven ? objective : bound, gapPercent, solver, seconds, message: proven ? null : `HiGHS stopped: ${statusName(highs, status)}`, greedy };
}

/**
 * The nodes a given selection covers (the greedy figure, the fixed gateways alone): the most
 * nodes heard by r_i selected candidates that can all be homed within the cap at once. Without a
 * cap, every node heard by r_i of them. With a cap it is the siting model itself with every x_j
 * pinned to the selection (sitingLpText's fixedSelection; only y and a are left to decide), read
 * by the same solutionCovered as SitingSolution.covered: one rule for "covered within the cap".
 * Two shortcuts give the same set without HiGHS: when a maximum flow homes every heard node in
 * full (nothing more can be covered), and when every r_i ≤ 1 (a maximum flow then homes the most
 * nodes there are). For r_i > 1 no flow alone is exact (with one seat each and r_i = 3 this is
 * packing triples), so the MILP decides. Should HiGHS stop without a solution at the time limit,
 * the flow's fully homed nodes are counted (a feasible set, possibly short of the optimum).
 */
export function selectionCovered(highs: Highs, instance: CoverInstance, options: CoverOptions, selected: Uint8Array, solve: SolveOptions = {}): Uint8Array {
  const required = requirements(instance, options.requiredGateways);
  const heard = coveredMask(instance, selected, required);
  const cap = options.maxNodesPerGateway;
  if (cap === undefined) return heard;
  const { units } = capacityHoming(instance, selected, required, cap, heard);
  const homed = new Uint8Array(instance.nodeCount);
  let all = true;
  let multi = false;
  for (let i = 0; i < instance.nodeCount; i++) {
    if (!heard[i]) continue;
    if (units[i] >= required[i]) homed[i] = 1;
    else all = false;
    if (required[i] > 1) multi = true;
  }
  if (all || !multi) return homed;
  // The budget form of the model maximises covered nodes; with x pinned its limits hold trivially.
  const pinned: CoverOptions = { requiredGateways: options.requiredGateways, maxNodesPerGateway: cap, maxGateways: selectionCount(selected) };
  const lp = runLp(highs, sitingLpText(instance, pinned, selected).text, solve);
  if (!lp.hasSolution) return homed;
  const covered = solutionCovered(instance, pinned, required, selected, lp.value);
  return selectionCount(covered) >= selectionCount(homed) ? covered : homed;
}

/**
 * The covered set of the MILP's answer. Without a cap: the nodes heard by r_i selected
 * candidates (the y_i of an optimal budget answer are exactly these; a stopped one may leave a
 * met node's y_i at 0, and it is still heard). With a cap: the nodes the solver covers (y_i = 1 in
 * the budget variant, every coverable node in the cover variant), homed by an integral
 * assignment over the solver's selection. The a_p may come back fractional (any point of the
 * transportation polytope); a maximum flow restricted to those nodes turns them into whole homes,
 * and it homes them all because the a_p are a fractional flow of the same value. A node the flow
 * cannot home in full (only through a solver tolerance) is not counted.
 */
function solutionCovered(instance: CoverInstance, options: CoverOptions, required: Int32Array, selected: Uint8Array, value: (name: string) => number): Uint8Array {
  const heard = coveredMask(instance, selected, required);
  const cap = options.maxNodesPerGateway;
  if (cap === undefined) return heard;
  const budget = isBudgetVariant(options);
  const covered = new Uint8Array(instance.nodeCount);
  for (let i = 0; i < instance.nodeCount; i++) covered[i] = heard[i] && (!budget || value(`y_${i}`) > 0.5) ? 1 : 0;
  const { units } = capacityHoming(instance, selected, required, cap, covered);
  for (let i = 0; i < instance.nodeCount; i++) if (covered[i] && units[i] < required[i]) covered[i] = 0;
  return covered;
}

function statusName(highs: Highs, code: number): string {
  for (const [name, value] of Object.entries(highs.constants.modelStatus)) if (value === code) return name;
  return `status ${code}`;
}

function infeasibleMessage(options: CoverOptions): string {
  if (options.maxNodesPerGateway !== undefined) return `maxNodesPerGateway: no choice of candidates homes every coverable node with at most ${options.maxNodesPerGateway} nodes per gateway`;
  return 'no choice of candidates satisfies the rules';
}
