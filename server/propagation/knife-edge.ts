// Single knife-edge diffraction, ITU-R P.526-16 §4.1.

/** Knife-edge loss J(v) in dB, ITU-R P.526 Eq. (31); 0 for v ≤ −0.78 as the Recommendation allows. */
export function knifeEdgeLossDb(v: number): number {
  if (v <= -0.78) return 0;
  const t = v - 0.1;
  return 6.9 + 20 * Math.log10(Math.sqrt(t * t + 1) + t);
}

/**
 * Diffraction parameter v of ITU-R P.526 Eq. (26): v = h·√(2/λ·(1/d1 + 1/d2)),
 * with the obstacle height `clearanceM` above the straight ray (positive = blocking),
 * `d1M`/`d2M` the distances from each end and `wavelengthM` the wavelength.
 */
export function fresnelParameter(clearanceM: number, d1M: number, d2M: number, wavelengthM: number): number {
  return clearanceM * Math.sqrt((2 / wavelengthM) * (1 / d1M + 1 / d2M));
}
