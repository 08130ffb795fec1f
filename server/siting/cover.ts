// The set-multicover instance of gateway siting and the parts of it that need
// no solver: how many gateways each node must hear, greedy selection (a start
// for the MILP and the figure it is compared with), whether a selection is
// feasible, and each selected site's marginal value. Which nodes a selection covers
// within a capacity cap needs the solver for k > 1 (selectionCovered in milp.ts).
//
// A node i is heard by the candidates H(i) (the matrix's "meets" cells). It
// needs r_i = min(k, |H(i)|) of them selected: a node no candidate hears is
// "not coverable" and leaves the model, one heard by fewer than k candidates is
// asked for as many as can hear it (the issue's "capped by how many candidates
// can hear it").

/** One siting problem on a boolean node × candidate matrix, as compressed rows. */
export interface CoverInstance {
  nodeCount: number;
  candidateCount: number;
  /** CSR offsets into `hearIndex`, length nodeCount + 1. */
  hearStart: Int32Array;
  /** Candidate indices hearing each node (ascending within a node). */
  hearIndex: Int32Array;
  /** Cost of choosing each candidate, USD (0 for gateways already built). */
  costUsd: Float64Array;
  /** 1 = already built, kept in every answer. */
  fixed: Uint8Array;
}

export type SitingObjective = 'gateways' | 'cost';

export interface CoverOptions {
  /** Gateways each node should hear (1–3 in the API; any whole number ≥ 1 here). */
  requiredGateways: number;
  /** What the cover variant minimises (default gateways). */
  minimise?: SitingObjective;
  /** Budget variant: at most this much spent on new candidates, USD. */
  budgetUsd?: number;
  /** Budget variant: at most this many gateways in total (fixed ones count). */
  maxGateways?: number;
  /** Each gateway is home to at most this many nodes (a node with r_i = 2 counts at two). */
  maxNodesPerGateway?: number;
}

/** Builds the instance from a dense boolean matrix (rows = nodes). */
export function coverInstance(meets: ReadonlyArray<ReadonlyArray<boolean>>, candidateCount: number, costUsd: ArrayLike<number>, fixed: ArrayLike<boolean | number> = []): CoverInstance {
  const nodeCount = meets.length;
  const hearStart = new Int32Array(nodeCount + 1);
  const list: number[] = [];
  for (let i = 0; i < nodeCount; i++) {
    const row = meets[i];
    if (row.length !== candidateCount) throw new RangeError(`row ${i} has ${row.length} cells, expected ${candidateCount}`);
    for (let j = 0; j < candidateCount; j++) if (row[j]) list.push(j);
    hearStart[i + 1] = list.length;
  }
  if (costUsd.length !== candidateCount) throw new RangeError(`costUsd has ${costUsd.length} entries, expected ${candidateCount}`);
  const costs = Float64Array.from(costUsd);
  for (const c of costs) if (!(c >= 0) || !Number.isFinite(c)) throw new RangeError('costUsd: every cost must be a finite number ≥ 0');
  const fixedFlags = new Uint8Array(candidateCount);
  for (let j = 0; j < Math.min(candidateCount, fixed.length); j++) fixedFlags[j] = fixed[j] ? 1 : 0;
  return { nodeCount, candidateCount, hearStart, hearIndex: Int32Array.from(list), costUsd: costs, fixed: fixedFlags };
}

/** r_i = min(k, |H(i)|) for every node (0 = not coverable). */
export function requirements(instance: CoverInstance, requiredGateways: number): Int32Array {
  if (!Number.isInteger(requiredGateways) || requiredGateways < 1) throw new RangeError('requiredGateways: must be a whole number ≥ 1');
  const out = new Int32Array(instance.nodeCount);
  for (let i = 0; i < instance.nodeCount; i++) out[i] = Math.min(requiredGateways, instance.hearStart[i + 1] - instance.hearStart[i]);
  return out;
}

/** Selected candidates hearing each node. */
export function hearingCounts(instance: CoverInstance, selected: Uint8Array): Int32Array {
  const counts = new Int32Array(instance.nodeCount);
  for (let i = 0; i < instance.nodeCount; i++) {
    let n = 0;
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) n += selected[instance.hearIndex[p]];
    counts[i] = n;
  }
  return counts;
}

/** Nodes whose requirement the selection meets (coverable nodes only). */
export function coveredMask(instance: CoverInstance, selected: Uint8Array, required: Int32Array): Uint8Array {
  const counts = hearingCounts(instance, selected);
  const out = new Uint8Array(instance.nodeCount);
  for (let i = 0; i < instance.nodeCount; i++) out[i] = required[i] > 0 && counts[i] >= required[i] ? 1 : 0;
  return out;
}

export function selectionCostUsd(instance: CoverInstance, selected: Uint8Array): number {
  let total = 0;
  for (let j = 0; j < instance.candidateCount; j++) if (selected[j]) total += instance.costUsd[j];
  return total;
}

export function selectionCount(selected: Uint8Array): number {
  let n = 0;
  for (const s of selected) n += s;
  return n;
}

/** True when the options ask for the budget variant (maximise nodes covered). */
export function isBudgetVariant(options: CoverOptions): boolean {
  return options.budgetUsd !== undefined || options.maxGateways !== undefined;
}

/**
 * Candidate → node index lists (the transpose of the hearing lists), for the
 * greedy and the capacity check.
 */
export function heardBy(instance: CoverInstance): { start: Int32Array; index: Int32Array } {
  const start = new Int32Array(instance.candidateCount + 1);
  for (const j of instance.hearIndex) start[j + 1]++;
  for (let j = 0; j < instance.candidateCount; j++) start[j + 1] += start[j];
  const fill = start.slice(0, instance.candidateCount);
  const index = new Int32Array(instance.hearIndex.length);
  for (let i = 0; i < instance.nodeCount; i++) {
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) index[fill[instance.hearIndex[p]]++] = i;
  }
  return { start, index };
}

/**
 * Capacity check of a selection: the most requirement units that can be homed
 * when node i needs r_i distinct selected gateways hearing it and each gateway
 * takes at most `cap` units. A maximum flow (Edmonds–Karp, BFS augmenting
 * paths) on source → node (r_i) → gateway (1 per hearing pair) → sink (cap).
 * The selection is feasible for the nodes in `only` (default all coverable)
 * when the answer equals the sum of their r_i.
 */
export function capacityFlow(instance: CoverInstance, selected: Uint8Array, required: Int32Array, cap: number, only?: Uint8Array): number {
  return capacityHoming(instance, selected, required, cap, only).flow;
}

/**
 * The maximum flow of capacityFlow with its integral assignment: `units[i]` requirement units
 * of node i homed, `pair[p]` = 1 when hearing pair p (node of p homed at its candidate) carries one.
 */
export function capacityHoming(instance: CoverInstance, selected: Uint8Array, required: Int32Array, cap: number, only?: Uint8Array): { flow: number; units: Int32Array; pair: Uint8Array } {
  const n = instance.nodeCount;
  const m = instance.candidateCount;
  const source = n + m;
  const sink = n + m + 1;
  const head = new Int32Array(n + m + 2).fill(-1);
  const to: number[] = [];
  const capacity: number[] = [];
  const next: number[] = [];
  const addEdge = (a: number, b: number, c: number): number => {
    to.push(b);
    capacity.push(c);
    next.push(head[a]);
    head[a] = to.length - 1;
    to.push(a);
    capacity.push(0);
    next.push(head[b]);
    head[b] = to.length - 1;
    return to.length - 2;
  };
  const pairEdge = new Int32Array(instance.hearIndex.length).fill(-1);
  for (let i = 0; i < n; i++) {
    if (required[i] <= 0 || (only && !only[i])) continue;
    addEdge(source, i, required[i]);
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) if (selected[instance.hearIndex[p]]) pairEdge[p] = addEdge(i, n + instance.hearIndex[p], 1);
  }
  for (let j = 0; j < m; j++) if (selected[j]) addEdge(n + j, sink, cap);
  let flow = 0;
  const via = new Int32Array(n + m + 2);
  for (;;) {
    via.fill(-1);
    const queue = [source];
    via[source] = -2;
    for (let q = 0; q < queue.length && via[sink] === -1; q++) {
      for (let e = head[queue[q]]; e !== -1; e = next[e]) {
        if (capacity[e] > 0 && via[to[e]] === -1) {
          via[to[e]] = e;
          queue.push(to[e]);
        }
      }
    }
    if (via[sink] === -1) break;
    let push = Infinity;
    for (let v = sink; v !== source; v = to[via[v] ^ 1]) push = Math.min(push, capacity[via[v]]);
    for (let v = sink; v !== source; v = to[via[v] ^ 1]) {
      capacity[via[v]] -= push;
      capacity[via[v] ^ 1] += push;
    }
    flow += push;
  }
  const units = new Int32Array(n);
  const pair = new Uint8Array(instance.hearIndex.length);
  for (let i = 0; i < n; i++) {
    for (let p = instance.hearStart[i]; p < instance.hearStart[i + 1]; p++) {
      // A used node → gateway edge has its capacity 1 moved to the reverse edge.
      if (pairEdge[p] >= 0 && capacity[pairEdge[p]] === 0) {
        pair[p] = 1;
        units[i]++;
      }
    }
  }
  return { flow, units, pair };
}

/**
 * Greedy multicover (Chvátal's rule generalised to multicover): start from the
 * fixed gateways, then repeatedly add the candidate with the most unmet
 * requirement units per dollar (cost mode) or in total (gateway mode), until
 * every coverable node is met. In the budget variant it adds, within the budget
 * and the gateway limit, the candidate that completes the most nodes (ties: most
 * requirement units), and stops when nothing more fits or helps.
 * No capacity rule: with a cap the caller finds the nodes the result covers within it
 * (selectionCovered in milp.ts).
 */
export function greedyCover(instance: CoverInstance, options: CoverOptions): Uint8Array {
  const required = requirements(instance, options.requiredGateways);
  const selected = Uint8Array.from(instance.fixed);
  const residual = Int32Array.from(required);
  const counts = hearingCounts(instance, selected);
  for (let i = 0; i < instance.nodeCount; i++) residual[i] = Math.max(0, required[i] - counts[i]);
  const byCandidate = heardBy(instance);
  const budget = isBudgetVariant(options);
  let spent = selectionCostUsd(instance, selected);
  let count = selectionCount(selected);
  const byCost = options.minimise === 'cost';
  for (;;) {
    if (budget && options.maxGateways !== undefined && count >= options.maxGateways) break;
    let best = -1;
    let bestScore = 0;
    let bestTie = 0;
    for (let j = 0; j < instance.candidateCount; j++) {
      if (selected[j]) continue;
      if (budget && options.budgetUsd !== undefined && spent + instance.costUsd[j] > options.budgetUsd + 1e-9) continue;
      let units = 0;
      let completes = 0;
      for (let q = byCandidate.start[j]; q < byCandidate.start[j + 1]; q++) {
        const i = byCandidate.index[q];
        if (residual[i] > 0) {
          units++;
          if (residual[i] === 1) completes++;
        }
      }
      if (units === 0) continue;
      let score: number;
      let tie: number;
      if (budget) {
        score = completes;
        tie = units;
      } else if (byCost) {
        score = units / Math.max(instance.costUsd[j], 1e-6);
        tie = units;
      } else {
        score = units;
        tie = -instance.costUsd[j];
      }
      if (best < 0 || score > bestScore || (score === bestScore && tie > bestTie)) {
        best = j;
        bestScore = score;
        bestTie = tie;
      }
    }
    if (best < 0) break;
    selected[best] = 1;
    spent += instance.costUsd[best];
    count++;
    for (let q = byCandidate.start[best]; q < byCandidate.start[best + 1]; q++) {
      const i = byCandidate.index[q];
      if (residual[i] > 0) residual[i]--;
    }
  }
  if (!budget) pruneRedundant(instance, selected, required);
  return selected;
}

/** Drops selected, non-fixed candidates whose removal leaves every met node met (costliest first). */
function pruneRedundant(instance: CoverInstance, selected: Uint8Array, required: Int32Array): void {
  const counts = hearingCounts(instance, selected);
  const byCandidate = heardBy(instance);
  const order = [...selected.keys()].filter((j) => selected[j] && !instance.fixed[j]).sort((a, b) => instance.costUsd[b] - instance.costUsd[a] || a - b);
  for (const j of order) {
    let needed = false;
    for (let q = byCandidate.start[j]; q < byCandidate.start[j + 1]; q++) {
      const i = byCandidate.index[q];
      if (counts[i] <= required[i]) {
        needed = true;
        break;
      }
    }
    if (needed) continue;
    selected[j] = 0;
    for (let q = byCandidate.start[j]; q < byCandidate.start[j + 1]; q++) counts[byCandidate.index[q]]--;
  }
}

/**
 * Marginal value of each selected candidate: the nodes of the answer's covered set
 * (`covered`, the one set the report lists; default: those heard by r_i selected
 * candidates) that would fall short of their requirement if this candidate were
 * dropped, i.e. fewer than r_i selected candidates would still hear them.
 * For k = 1 these are the covered nodes only it hears.
 */
export function marginalNodes(instance: CoverInstance, selected: Uint8Array, required: Int32Array, covered?: Uint8Array): Map<number, number[]> {
  const counts = hearingCounts(instance, selected);
  const byCandidate = heardBy(instance);
  const out = new Map<number, number[]>();
  for (let j = 0; j < instance.candidateCount; j++) {
    if (!selected[j]) continue;
    const lost: number[] = [];
    for (let q = byCandidate.start[j]; q < byCandidate.start[j + 1]; q++) {
      const i = byCandidate.index[q];
      const met = covered ? covered[i] === 1 : required[i] > 0 && counts[i] >= required[i];
      if (met && counts[i] - 1 < required[i]) lost.push(i);
    }
    out.set(j, lost);
  }
  return out;
}
