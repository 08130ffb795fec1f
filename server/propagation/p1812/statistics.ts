// Inverse complementary cumulative normal distribution I(x) used by ITU-R P.1812-8
// (Eq. (40) Fi and the location variability of §4.8), with the rational approximation
// the Recommendation prescribes (valid for 0.000001 ≤ x ≤ 0.999999).

const C0 = 2.515516698;
const C1 = 0.802853;
const C2 = 0.010328;
const D1 = 1.432788;
const D2 = 0.189269;
const D3 = 0.001308;

function tMinusXi(x: number): number {
  const t = Math.sqrt(-2 * Math.log(x));
  const xi = ((C2 * t + C1) * t + C0) / (((D3 * t + D2) * t + D1) * t + 1);
  return t - xi;
}

/** I(x): the value exceeded with probability x by a standard normal variable. */
export function inverseComplementaryNormal(x: number): number {
  return x <= 0.5 ? tMinusXi(x) : -tMinusXi(1 - x);
}
