// Per-cell products of a loss raster: received power, margin, best SF and
// delivery probability, each from the one link budget (the caller passes it in,
// built on server/planning/link.ts), so coverage and links cannot disagree.

/** NoData of Float32 loss/margin rasters written to GeoTIFF. */
export const LOSS_NODATA = -9999;

/** One place's budget, as a node link there would have it (server/planning/link.ts linkBudget). */
export interface CellBudgetResult {
  /** Received level at the gateway, dBm. */
  rssiDbm: number;
  /** A node link's marginDb at this place: at the SF the band plan's SF rule picks. */
  marginDb: number;
  /** Fastest allowed SF meeting the target margin; null when none does. */
  bestSf: number | null;
  /** Φ(margin/σ) with the one planning spread σ. */
  deliveryProbability: number;
}

export const FIRST_SF = 7;

export interface CellProducts {
  powerDbm: Float32Array;
  marginDb: Float32Array;
  /** Lowest SF (7..12) whose margin meets the required margin; 0 when none does, 255 outside. */
  bestSf: Uint8Array;
  /** Probability that a packet's signal is above sensitivity at the chosen SF (0..1; NaN outside). */
  deliveryProbability: Float32Array;
}

/**
 * Per-cell products of a loss raster through `budgetAt(index, lossDb)`, which the caller
 * builds from the link room's budget (so a cell's margin is a node link's margin there).
 */
export function cellProducts(lossDb: Float32Array, budgetAt: (index: number, lossDb: number) => CellBudgetResult): CellProducts {
  const n = lossDb.length;
  const powerDbm = new Float32Array(n);
  const marginDb = new Float32Array(n);
  const bestSf = new Uint8Array(n);
  const probability = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    const loss = lossDb[i];
    if (loss !== loss) {
      powerDbm[i] = Number.NaN;
      marginDb[i] = Number.NaN;
      bestSf[i] = 255;
      probability[i] = Number.NaN;
      continue;
    }
    const cell = budgetAt(i, loss);
    powerDbm[i] = cell.rssiDbm;
    marginDb[i] = cell.marginDb;
    bestSf[i] = cell.bestSf ?? 0;
    probability[i] = cell.deliveryProbability;
  }
  return { powerDbm, marginDb, bestSf, deliveryProbability: probability };
}
