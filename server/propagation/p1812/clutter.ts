// Clutter, ITU-R P.1812-8 §3: the representative clutter height R of each
// intermediate profile point is added to its terrain height, giving the surface
// the Bullington construction of §4.3.1 diffracts over. The terminals stand on
// bare ground (their heights above ground are measured from the terrain), and the
// profile analysis of Attachment 1 (horizons, smooth earth, roughness) uses the
// terrain alone; in P.1812-8 the clutter loss at the terminals is carried by this
// modified profile, not by a separate terminal loss term.

/** Writes terrain + clutter into `out` (length ≥ count); the end points keep the bare terrain height. */
export function addClutterToProfile(
  heightM: Float64Array,
  clutterHeightM: Float64Array,
  count: number,
  out: Float64Array,
): Float64Array {
  out[0] = heightM[0];
  for (let i = 1; i < count - 1; i++) out[i] = heightM[i] + clutterHeightM[i];
  out[count - 1] = heightM[count - 1];
  return out;
}
