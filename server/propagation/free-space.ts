// Free-space basic transmission loss, ITU-R P.525-4 Eq. (9):
// Lbf = 32.4 + 20·log10(f MHz) + 20·log10(d km)  (32.45 with the exact constant).

/** Exact constant of P.525: 20·log10(4π·10^9/c) for d in km and f in MHz. */
const FREE_SPACE_CONSTANT_DB = 20 * Math.log10((4 * Math.PI * 1e9) / 299_792_458);

/** Free-space basic transmission loss (in dB) over `distanceKm` at `frequencyMhz`. */
export function freeSpaceLossDb(distanceKm: number, frequencyMhz: number): number {
  return FREE_SPACE_CONSTANT_DB + 20 * Math.log10(frequencyMhz) + 20 * Math.log10(distanceKm);
}
