// The calibration fit: residuals (measured − predicted RSSI) → the model's bias
// and spread for a plan, optionally per group, with 95 % intervals, named
// outliers and node-grouped k-fold cross-validation. Pure; the use case
// (server/app/calibration.ts) pairs readings with predictions and calls this.
import { chiSquareQuantile, mean, median, medianAbsoluteDeviation, MAD_TO_SIGMA, sampleSd, seededRandom, studentTQuantile } from './stats.ts';

export type NodeEnvironment = 'outdoor' | 'indoor' | 'pit';
export const CALIBRATION_GROUPINGS = ['none', 'environment', 'clutter', 'distance'] as const;
export type CalibrationGrouping = (typeof CALIBRATION_GROUPINGS)[number];

/** One reading paired with its prediction. */
export interface Residual {
  readingId: string;
  nodeId: string;
  gatewayId: string;
  measuredRssiDbm: number;
  predictedRssiDbm: number;
  /** Node (or reading position) → gateway, m. */
  distanceM: number;
  environment: NodeEnvironment;
  /** Clutter class name at the node (null = no clutter layer / no class). */
  clutterClass: string | null;
}

/** Distance band edges, km (the last band is open): 0–1, 1–2, 2–5, 5–10, 10–20, ≥ 20 km. */
export const DISTANCE_BAND_EDGES_KM = [0, 1, 2, 5, 10, 20] as const;

export function distanceBand(distanceM: number): string {
  const km = distanceM / 1000;
  for (let i = DISTANCE_BAND_EDGES_KM.length - 1; i >= 0; i--) {
    if (km >= DISTANCE_BAND_EDGES_KM[i]) return i === DISTANCE_BAND_EDGES_KM.length - 1 ? `≥ ${DISTANCE_BAND_EDGES_KM[i]} km` : `${DISTANCE_BAND_EDGES_KM[i]}–${DISTANCE_BAND_EDGES_KM[i + 1]} km`;
  }
  return `${DISTANCE_BAND_EDGES_KM[0]}–${DISTANCE_BAND_EDGES_KM[1]} km`;
}

export function groupKey(residual: Residual, grouping: CalibrationGrouping): string {
  switch (grouping) {
    case 'none':
      return 'all';
    case 'environment':
      return residual.environment;
    case 'clutter':
      return residual.clutterClass ?? 'no clutter class';
    case 'distance':
      return distanceBand(residual.distanceM);
  }
}

/**
 * Huber's tuning constant: 1.345 scale units gives 95 % asymptotic efficiency
 * at the normal distribution (Huber 1964; the value is the usual choice in the
 * robust-statistics literature, from memory).
 */
export const HUBER_K = 1.345;
/**
 * Outlier rule: modified z-score |0.6745·(r − median) / MAD| > 3.5
 * (Iglewicz & Hoaglin 1993, "How to Detect and Handle Outliers", from memory).
 */
export const OUTLIER_MODIFIED_Z = 3.5;
/** Fewest readings for a figure (the σ interval needs n − 1 ≥ 2 degrees of freedom). */
export const MIN_READINGS = 3;
/** Fewest readings for a group to get its own figures (common practice: fewer is noise). */
export const MIN_GROUP_READINGS = 5;
/** Smallest robust scale, dB: identical readings would otherwise give MAD = 0. */
const MIN_SCALE_DB = 0.05;

export class CalibrationInputError extends Error {}

/**
 * Huber M-estimate of location: solves Σ ψ((x − μ)/s) = 0 with ψ(u) = clamp(u, −k, k)
 * and the scale s fixed at MAD/0.6745, by iteratively reweighted means
 * (w = min(1, k/|u|)). Readings far out count with weight k/|u|: less, never zero.
 */
export function huberLocation(values: readonly number[], scale: number, k = HUBER_K): number {
  let mu = median(values);
  if (!(scale > 0)) return mu;
  for (let iteration = 0; iteration < 100; iteration++) {
    let weighted = 0;
    let weights = 0;
    for (const x of values) {
      const u = Math.abs(x - mu) / scale;
      const w = u <= k ? 1 : k / u;
      weighted += w * x;
      weights += w;
    }
    const next = weighted / weights;
    if (Math.abs(next - mu) < 1e-10) return next;
    mu = next;
  }
  return mu;
}

export interface Figures {
  n: number;
  nodes: number;
  /** Huber location of the residuals: add it to every prediction. */
  biasDb: number;
  /** Sample SD of the readings that are not outliers, about biasDb (n_in − 1 degrees of freedom). */
  sigmaDb: number;
  biasCi95Db: [number, number];
  sigmaCi95Db: [number, number];
  medianDb: number;
  /** MAD·1.4826: the spread the outlier rule uses. */
  robustSigmaDb: number;
  outlierCount: number;
}

export interface Outlier {
  readingId: string;
  nodeId: string;
  gatewayId: string;
  residualDb: number;
  /** Modified z-score 0.6745·(r − median)/MAD. */
  modifiedZ: number;
  group: string;
}

/**
 * Bias, spread and their 95 % intervals for one set of residuals:
 * - bias: Huber M-estimate (scale MAD/0.6745); interval bias ± t_{0.975, n_in−1}·s/√n_in
 *   (the t-interval of a mean, with the inliers' SD s);
 * - σ: the inliers' SD s about the bias; interval [s·√((n_in−1)/χ²_{0.975}), s·√((n_in−1)/χ²_{0.025})]
 *   (chi-square interval for a normal SD).
 * Readings of one node are correlated, so both intervals are optimistic when
 * few nodes carry many readings; the node-grouped cross-validation is the honest check.
 */
export function fitFigures(residuals: readonly Residual[], group = 'all'): { figures: Figures; outliers: Outlier[] } {
  if (residuals.length < MIN_READINGS) throw new CalibrationInputError(`readings: ${residuals.length} paired reading(s); a fit needs at least ${MIN_READINGS}`);
  const values = residuals.map((r) => r.measuredRssiDbm - r.predictedRssiDbm);
  const centre = median(values);
  const mad = medianAbsoluteDeviation(values, centre);
  const robustSigmaDb = Math.max(mad * MAD_TO_SIGMA, MIN_SCALE_DB);
  const outliers: Outlier[] = [];
  const inliers: number[] = [];
  residuals.forEach((r, index) => {
    const modifiedZ = (values[index] - centre) / robustSigmaDb;
    if (Math.abs(modifiedZ) > OUTLIER_MODIFIED_Z) outliers.push({ readingId: r.readingId, nodeId: r.nodeId, gatewayId: r.gatewayId, residualDb: values[index], modifiedZ, group });
    else inliers.push(values[index]);
  });
  const biasDb = huberLocation(values, robustSigmaDb);
  const nIn = inliers.length;
  if (nIn < MIN_READINGS) throw new CalibrationInputError(`readings: only ${nIn} reading(s) are not outliers; a fit needs at least ${MIN_READINGS}`);
  const sigmaDb = sampleSd(inliers, biasDb);
  const dof = nIn - 1;
  const t = studentTQuantile(0.975, dof);
  const half = (t * sigmaDb) / Math.sqrt(nIn);
  const chiHigh = chiSquareQuantile(0.975, dof);
  const chiLow = chiSquareQuantile(0.025, dof);
  return {
    figures: {
      n: residuals.length,
      nodes: new Set(residuals.map((r) => r.nodeId)).size,
      biasDb,
      sigmaDb,
      biasCi95Db: [biasDb - half, biasDb + half],
      sigmaCi95Db: [sigmaDb * Math.sqrt(dof / chiHigh), sigmaDb * Math.sqrt(dof / chiLow)],
      medianDb: centre,
      robustSigmaDb,
      outlierCount: outliers.length,
    },
    outliers,
  };
}

export interface GroupFigures extends Partial<Figures> {
  key: string;
  n: number;
  /** False when the group has fewer than MIN_GROUP_READINGS readings (plan-wide figures stand). */
  fitted: boolean;
  note?: string;
}

export interface CrossValidation {
  folds: number;
  seed: number;
  /** Readings scored (each once, in the fold that held its node out). */
  n: number;
  rmseBeforeDb: number;
  rmseAfterDb: number;
  meanErrorBeforeDb: number;
  meanErrorAfterDb: number;
  method: string;
}

export interface CalibrationFit extends Figures {
  grouping: CalibrationGrouping;
  groups: GroupFigures[];
  outliers: Outlier[];
  crossValidation: CrossValidation | null;
  crossValidationNote?: string;
  method: { bias: string; sigma: string; outliers: string; crossValidation: string };
}

export interface FitOptions {
  grouping?: CalibrationGrouping;
  /** Folds of the cross-validation (default 5; at most the number of nodes). */
  folds?: number;
  /** Seed of the node → fold shuffle (default 1). */
  seed?: number;
}

function groupsOf(residuals: readonly Residual[], grouping: CalibrationGrouping): Map<string, Residual[]> {
  const groups = new Map<string, Residual[]>();
  for (const r of residuals) {
    const key = groupKey(r, grouping);
    const list = groups.get(key);
    if (list) list.push(r);
    else groups.set(key, [r]);
  }
  return groups;
}

/** Bias to add for a residual's group: its own where the group was fitted, else the plan-wide one. */
function biasModel(residuals: readonly Residual[], grouping: CalibrationGrouping): (r: Residual) => number {
  const overall = fitFigures(residuals).figures.biasDb;
  if (grouping === 'none') return () => overall;
  const byGroup = new Map<string, number>();
  for (const [key, list] of groupsOf(residuals, grouping)) {
    if (list.length >= MIN_GROUP_READINGS) byGroup.set(key, fitFigures(list, key).figures.biasDb);
  }
  return (r) => byGroup.get(groupKey(r, grouping)) ?? overall;
}

/**
 * k-fold cross-validation grouped by node: nodes (sorted by id, shuffled with
 * the seed) are dealt to k folds round-robin, so a node's readings are never on
 * both sides. Each fold's readings are scored with the bias fitted on the other
 * folds: error before = r, after = r − bias_train.
 */
export function crossValidate(residuals: readonly Residual[], grouping: CalibrationGrouping, folds = 5, seed = 1): CrossValidation | { note: string } {
  const nodes = [...new Set(residuals.map((r) => r.nodeId))].sort();
  const k = Math.min(folds, nodes.length);
  if (k < 2) return { note: `cross-validation needs readings from at least 2 nodes (have ${nodes.length})` };
  const random = seededRandom(seed);
  for (let i = nodes.length - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [nodes[i], nodes[j]] = [nodes[j], nodes[i]];
  }
  const foldOf = new Map(nodes.map((node, index) => [node, index % k]));
  let n = 0;
  let sumBefore = 0;
  let sumAfter = 0;
  let sqBefore = 0;
  let sqAfter = 0;
  for (let fold = 0; fold < k; fold++) {
    const train = residuals.filter((r) => foldOf.get(r.nodeId) !== fold);
    const test = residuals.filter((r) => foldOf.get(r.nodeId) === fold);
    if (test.length === 0) continue;
    if (train.length < MIN_READINGS) return { note: `cross-validation: fold ${fold + 1} leaves only ${train.length} training reading(s)` };
    let bias: (r: Residual) => number;
    try {
      bias = biasModel(train, grouping);
    } catch (error) {
      if (error instanceof CalibrationInputError) return { note: `cross-validation: fold ${fold + 1}: ${error.message}` };
      throw error;
    }
    for (const r of test) {
      const before = r.measuredRssiDbm - r.predictedRssiDbm;
      const after = before - bias(r);
      n++;
      sumBefore += before;
      sumAfter += after;
      sqBefore += before * before;
      sqAfter += after * after;
    }
  }
  return {
    folds: k,
    seed,
    n,
    rmseBeforeDb: Math.sqrt(sqBefore / n),
    rmseAfterDb: Math.sqrt(sqAfter / n),
    meanErrorBeforeDb: sumBefore / n,
    meanErrorAfterDb: sumAfter / n,
    method: `${k}-fold, grouped by node (seed ${seed}); error = measured − predicted RSSI, before and after adding the training folds' bias`,
  };
}

/** The whole fit for a plan: overall figures, groups, named outliers and cross-validation. */
export function fitCalibration(residuals: readonly Residual[], options: FitOptions = {}): CalibrationFit {
  const grouping = options.grouping ?? 'none';
  const { figures, outliers } = fitFigures(residuals);
  const groups: GroupFigures[] = [];
  if (grouping === 'none') {
    groups.push({ key: 'all', fitted: true, ...figures });
  } else {
    for (const [key, list] of [...groupsOf(residuals, grouping)].sort(([a], [b]) => a.localeCompare(b))) {
      if (list.length < MIN_GROUP_READINGS) {
        groups.push({ key, n: list.length, fitted: false, note: `fewer than ${MIN_GROUP_READINGS} readings: the plan-wide figures stand`, biasDb: mean(list.map((r) => r.measuredRssiDbm - r.predictedRssiDbm)) });
        continue;
      }
      groups.push({ key, fitted: true, ...fitFigures(list, key).figures });
    }
  }
  // Outliers carry the group they fall in (the plan-wide rule decides who is one).
  const byId = new Map(residuals.map((r) => [r.readingId, r]));
  for (const o of outliers) {
    const r = byId.get(o.readingId);
    if (r) o.group = groupKey(r, grouping);
  }
  const cv = crossValidate(residuals, grouping, options.folds ?? 5, options.seed ?? 1);
  return {
    grouping,
    ...figures,
    groups,
    outliers,
    crossValidation: 'note' in cv ? null : cv,
    ...('note' in cv ? { crossValidationNote: cv.note } : {}),
    method: {
      bias: `Huber M-estimate (k = ${HUBER_K}, scale MAD/0.6745) over every reading; 95 % interval bias ± t(0.975, n−1)·σ/√n over the non-outliers`,
      sigma: 'sample standard deviation of the non-outliers about the bias; 95 % interval from chi-square(0.025/0.975, n−1)',
      outliers: `modified z-score |0.6745·(r − median)/MAD| > ${OUTLIER_MODIFIED_Z} (Iglewicz & Hoaglin): named, kept in the bias with Huber weight, left out of σ`,
      crossValidation: 'note' in cv ? cv.note : cv.method,
    },
  };
}
