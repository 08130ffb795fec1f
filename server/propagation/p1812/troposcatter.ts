// Tropospheric scatter, ITU-R P.1812-8 §4.4, Eq. (44).

/** Basic transmission loss due to troposcatter Lbs (dB) not exceeded for p % of time, Eq. (44). */
export function troposcatterLossDb(
  frequencyGhz: number,
  distanceKm: number,
  thetaMrad: number,
  n0: number,
  timePercent: number,
): number {
  const logHalf = Math.log10(frequencyGhz / 2);
  const lf = 25 * Math.log10(frequencyGhz) - 2.5 * logHalf * logHalf; // frequency-dependent loss
  return (
    190.1 +
    lf +
    20 * Math.log10(distanceKm) +
    0.573 * thetaMrad -
    0.15 * n0 -
    10.125 * Math.pow(Math.log10(50 / timePercent), 0.7)
  );
}
