// Distributions and small estimators the calibration fit needs: log-gamma, the
// regularised incomplete beta and gamma functions, Student t and chi-square
// CDFs and quantiles, the median, MAD and a seeded random source.
// Pure functions; no I/O, no globals.

/**
 * ln Γ(x) for x > 0 by the Lanczos approximation (g = 7, nine coefficients, as
 * published by P. Godfrey for C. Lanczos' 1964 series; |relative error| < 1e-13),
 * with the reflection Γ(x)Γ(1−x) = π / sin(πx) below 0.5.
 */
export function lnGamma(x: number): number {
  if (!(x > 0)) throw new RangeError('lnGamma: x must be > 0');
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - lnGamma(1 - x);
  const c = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
  const z = x - 1;
  let sum = c[0];
  for (let i = 1; i < 9; i++) sum += c[i] / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(sum);
}

/** Continued fraction of the incomplete beta function, modified Lentz evaluation. */
function betaContinuedFraction(x: number, a: number, b: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 300; m++) {
    const m2 = 2 * m;
    // even step: d_{2m} = m(b−m)x / ((a+2m−1)(a+2m))
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    // odd step: d_{2m+1} = −(a+m)(a+b+m)x / ((a+2m)(a+2m+1))
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < 1e-15) break;
  }
  return h;
}

/** Regularised incomplete beta I_x(a, b), 0 ≤ x ≤ 1. */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const front = Math.exp(lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x));
  // The fraction converges fast for x < (a+1)/(a+b+2); use the symmetry I_x(a,b) = 1 − I_{1−x}(b,a) otherwise.
  if (x < (a + 1) / (a + b + 2)) return (front * betaContinuedFraction(x, a, b)) / a;
  return 1 - (front * betaContinuedFraction(1 - x, b, a)) / b;
}

/** Regularised lower incomplete gamma P(a, x): series below a + 1, continued fraction above. */
export function incompleteGammaLower(a: number, x: number): number {
  if (x <= 0) return 0;
  const lnFront = -x + a * Math.log(x) - lnGamma(a);
  if (x < a + 1) {
    let term = 1 / a;
    let sum = term;
    for (let n = 1; n < 1000; n++) {
      term *= x / (a + n);
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * 1e-16) break;
    }
    return sum * Math.exp(lnFront);
  }
  // Q(a, x) by its continued fraction (modified Lentz), P = 1 − Q.
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 1000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < 1e-15) break;
  }
  return 1 - Math.exp(lnFront) * h;
}

/** Student t CDF with ν degrees of freedom: F(t) = 1 − ½·I_{ν/(ν+t²)}(ν/2, ½) for t ≥ 0. */
export function studentTCdf(t: number, dof: number): number {
  if (!(dof > 0)) throw new RangeError('studentTCdf: degrees of freedom must be > 0');
  const tail = 0.5 * incompleteBeta(dof / (dof + t * t), dof / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/** Chi-square CDF with k degrees of freedom: P(k/2, x/2). */
export function chiSquareCdf(x: number, dof: number): number {
  if (!(dof > 0)) throw new RangeError('chiSquareCdf: degrees of freedom must be > 0');
  return incompleteGammaLower(dof / 2, x / 2);
}

/** Root of an increasing function on [lo, hi] by bisection (to 1e-12 relative). */
function bisect(f: (x: number) => number, target: number, lo: number, hi: number): number {
  for (let i = 0; i < 200; i++) {
    const mid = 0.5 * (lo + hi);
    if (f(mid) < target) lo = mid;
    else hi = mid;
    if (hi - lo <= 1e-12 * Math.max(1, Math.abs(mid))) break;
  }
  return 0.5 * (lo + hi);
}

/** Quantile t_{p, ν} of Student's t (0 < p < 1). */
export function studentTQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError('studentTQuantile: p must be within (0, 1)');
  if (p === 0.5) return 0;
  if (p < 0.5) return -studentTQuantile(1 - p, dof);
  let hi = 1;
  while (studentTCdf(hi, dof) < p) hi *= 2;
  return bisect((t) => studentTCdf(t, dof), p, 0, hi);
}

/** Quantile χ²_{p, k} (0 < p < 1). */
export function chiSquareQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError('chiSquareQuantile: p must be within (0, 1)');
  let hi = Math.max(1, dof);
  while (chiSquareCdf(hi, dof) < p) hi *= 2;
  return bisect((x) => chiSquareCdf(x, dof), p, 0, hi);
}

export function mean(values: readonly number[]): number {
  let sum = 0;
  for (const v of values) sum += v;
  return sum / values.length;
}

/** Sample standard deviation about `centre` with n − 1 degrees of freedom. */
export function sampleSd(values: readonly number[], centre = mean(values)): number {
  let sum = 0;
  for (const v of values) sum += (v - centre) ** 2;
  return Math.sqrt(sum / (values.length - 1));
}

export function median(values: readonly number[]): number {
  const sorted = Float64Array.from(values).sort();
  const n = sorted.length;
  if (n === 0) return NaN;
  return n % 2 === 1 ? sorted[(n - 1) / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
}

/** Median absolute deviation about the median (not scaled). */
export function medianAbsoluteDeviation(values: readonly number[], centre = median(values)): number {
  return median(values.map((v) => Math.abs(v - centre)));
}

/** MAD → σ for normal data: σ ≈ MAD / Φ⁻¹(3/4) = 1.4826·MAD (Φ⁻¹(0.75) = 0.67449). */
export const MAD_TO_SIGMA = 1 / 0.6744897501960817;

/** Seeded uniform source on [0, 1): mulberry32 (a public-domain 32-bit generator). */
export function seededRandom(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal draws from a uniform source (Box–Muller transform). */
export function gaussianSource(random: () => number): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const value = spare;
      spare = null;
      return value;
    }
    let u = 0;
    while (u <= Number.EPSILON) u = random();
    const v = random();
    const radius = Math.sqrt(-2 * Math.log(u));
    spare = radius * Math.sin(2 * Math.PI * v);
    return radius * Math.cos(2 * Math.PI * v);
  };
}
