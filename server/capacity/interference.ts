// When one LoRa frame survives another that overlaps it in time on the same
// channel: the signal-to-interference ratio (dB) it needs, for each pair of
// spreading factors.
//
// Inter-SF rejection (different SFs): the SIR thresholds measured by
// D. Croce, M. Gucciardo, S. Mangione, G. Santaromita, I. Tinnirello,
// "Impact of LoRa Imperfect Orthogonality: Analysis of Link-Level
// Performance", IEEE Communications Letters 22(4), 2018, Table I (SF7–12,
// 125 kHz) — the values below are from memory of that table. A frame at SF_d
// survives an interferer at SF_i when RSSI_d − RSSI_i ≥ table[SF_d][SF_i].
// Co-SF capture: the threshold is a setting (default 6 dB, from memory; the
// figure several LoRa network simulators use) rather than the paper's
// diagonal, which was measured for a synchronised interferer.

/** Default co-SF capture threshold, dB (from memory). */
export const DEFAULT_CAPTURE_THRESHOLD_DB = 6;

/** Rows: wanted SF7..SF12; columns: interfering SF7..SF12. Diagonal unused (the capture threshold applies). Croce et al. 2018 Table I, from memory. */
export const INTER_SF_REJECTION_DB: readonly (readonly number[])[] = [
  [1, -8, -9, -9, -9, -9],
  [-11, 1, -11, -12, -13, -13],
  [-15, -13, 1, -13, -14, -15],
  [-19, -18, -17, 1, -17, -18],
  [-22, -22, -21, -20, 1, -20],
  [-25, -25, -25, -24, -23, 1],
];

export const INTER_SF_SOURCE =
  'Croce et al., "Impact of LoRa Imperfect Orthogonality: Analysis of Link-Level Performance", IEEE Commun. Lett. 22(4), 2018, Table I (from memory); co-SF capture threshold from memory';

/** SFs outside 7–12 (SF5/6) take the nearest row/column of the table: the measurement covers SF7–12 only. */
function tableIndex(sf: number): number {
  return Math.min(5, Math.max(0, Math.round(sf) - 7));
}

/**
 * SIR (dB) a frame at `wantedSf` needs to survive an overlapping frame at `interferingSf`
 * on the same channel and bandwidth; co-SF = the capture threshold.
 */
export function sirThresholdDb(wantedSf: number, interferingSf: number, captureThresholdDb = DEFAULT_CAPTURE_THRESHOLD_DB): number {
  if (wantedSf === interferingSf) return captureThresholdDb;
  return INTER_SF_REJECTION_DB[tableIndex(wantedSf)][tableIndex(interferingSf)];
}

/** The 13 × 13 threshold table over SF 0..12 as a flat typed array (index wanted·13 + interfering), for the hot loops. */
export function sirThresholdTable(captureThresholdDb = DEFAULT_CAPTURE_THRESHOLD_DB): Float64Array {
  const table = new Float64Array(13 * 13);
  for (let wanted = 0; wanted <= 12; wanted++) for (let other = 0; other <= 12; other++) table[wanted * 13 + other] = sirThresholdDb(wanted, other, captureThresholdDb);
  return table;
}
