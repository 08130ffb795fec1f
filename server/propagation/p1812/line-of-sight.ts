// Line-of-sight propagation including short-term effects, ITU-R P.1812-8 §4.2, Eqs (8)–(11).

/** Free-space basic transmission loss Lbfs (dB), Eq. (8), over the slant distance of Eq. (8a). */
export function lbfsDb(frequencyGhz: number, distanceKm: number, htsM: number, hrsM: number): number {
  const dh = (htsM - hrsM) / 1000;
  const dfs = Math.sqrt(distanceKm * distanceKm + dh * dh);
  return 92.4 + 20 * Math.log10(frequencyGhz) + 20 * Math.log10(dfs);
}

/** Correction for multipath and focusing Esp/Esβ (dB), Eq. (9), for the time percentage `percent`. */
export function focusingCorrectionDb(percent: number, dltKm: number, dlrKm: number): number {
  return 2.6 * (1 - Math.exp(-0.1 * (dltKm + dlrKm))) * Math.log10(percent / 50);
}
