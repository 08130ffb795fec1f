// Probability of delivery from a median margin and a log-normal spread, and
// the probability that at least one of several gateways hears a message.

// σL of P.1812 §4.8 and the planning spread itself live in ./spread.ts (one σ for every view).
export { DEFAULT_LOCATION_WIDTH_M, p1812LocationSigmaDb } from './spread.ts';

/**
 * Standard normal cumulative distribution Φ(x), through erf with the
 * Abramowitz & Stegun 7.1.26 rational approximation (|error| < 1.5·10⁻⁷).
 */
export function standardNormalCdf(x: number): number {
  if (x === Infinity) return 1;
  if (x === -Infinity) return 0;
  const z = Math.abs(x) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * z);
  const poly = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  const erf = 1 - poly * Math.exp(-z * z);
  return x >= 0 ? 0.5 * (1 + erf) : 0.5 * (1 - erf);
}

/**
 * Probability that a message is received: the received level is log-normal
 * around its median, so P = Φ(margin / σ). With σ = 0 the answer is a step.
 */
export function deliveryProbability(marginDb: number, sigmaDb: number): number {
  if (!Number.isFinite(marginDb)) return marginDb > 0 ? 1 : 0;
  if (sigmaDb <= 0) return marginDb >= 0 ? 1 : 0;
  return standardNormalCdf(marginDb / sigmaDb);
}

/** Combined spread of independent log-normal terms: √Σσ². */
export function combineSigmasDb(...sigmasDb: number[]): number {
  let sum = 0;
  for (const sigma of sigmasDb) sum += sigma * sigma;
  return Math.sqrt(sum);
}

/**
 * Probability that at least one gateway receives a message.
 * Independence across gateways is assumed: P = 1 − Π(1 − p_i).
 * A correlation factor ρ (0…1) blends toward fully correlated shadowing,
 * where only the best gateway counts: P = (1 − ρ)·P_indep + ρ·max p_i.
 * The blend is ours (a documented simplification, not a published model).
 */
export function combinedDeliveryProbability(probabilities: readonly number[], correlation = 0): number {
  if (probabilities.length === 0) return 0;
  if (!(correlation >= 0 && correlation <= 1)) throw new RangeError('correlation must be within 0…1');
  let miss = 1;
  let best = 0;
  for (const p of probabilities) {
    miss *= 1 - p;
    if (p > best) best = p;
  }
  const independent = 1 - miss;
  return (1 - correlation) * independent + correlation * best;
}
