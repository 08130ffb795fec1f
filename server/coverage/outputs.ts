// Per-cell products of a loss raster: received power, margin at the chosen
// SF, best SF and delivery probability, from a link budget the radio room
// computed (the engine stays radio-agnostic: it only needs the fixed part of
// the budget and the sensitivity per SF).
import { deliveryProbability } from '../planning/probability.ts';

/** NoData of Float32 loss/margin rasters written to GeoTIFF. */
export const LOSS_NODATA = -9999;

export interface CellBudget {
  /**
   * Everything in the budget except the path: transmitter power + antenna
   * gains − feedline, connector and mismatch losses (dBm), so that
   * received power = fixedDbm − basic loss.
   */
  fixedDbm: number;
  /** Receiver sensitivity (dBm) for SF 7..12 (index 0 = SF7). */
  sensitivityDbmBySf: number[];
  /** The SF the margin raster is computed for. */
  spreadingFactor: number;
  /** Margin a cell needs to count as served (dB). */
  requiredMarginDb: number;
  /** Location variability standard deviation (dB) for the delivery probability. */
  locationSigmaDb: number;
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

export function cellProducts(lossDb: Float32Array, budget: CellBudget): CellProducts {
  const n = lossDb.length;
  const powerDbm = new Float32Array(n);
  const marginDb = new Float32Array(n);
  const bestSf = new Uint8Array(n);
  const probability = new Float32Array(n);
  const sfIndex = budget.spreadingFactor - FIRST_SF;
  const sensitivity = budget.sensitivityDbmBySf[sfIndex];
  if (sensitivity === undefined) throw new RangeError(`spreading factor ${budget.spreadingFactor} has no sensitivity`);
  const sfs = budget.sensitivityDbmBySf.length;
  for (let i = 0; i < n; i++) {
    const loss = lossDb[i];
    if (loss !== loss) {
      powerDbm[i] = Number.NaN;
      marginDb[i] = Number.NaN;
      bestSf[i] = 255;
      probability[i] = Number.NaN;
      continue;
    }
    const power = budget.fixedDbm - loss;
    powerDbm[i] = power;
    const margin = power - sensitivity;
    marginDb[i] = margin;
    let best = 0;
    for (let s = 0; s < sfs; s++) {
      if (power - budget.sensitivityDbmBySf[s] >= budget.requiredMarginDb) {
        best = FIRST_SF + s;
        break;
      }
    }
    bestSf[i] = best;
    probability[i] = deliveryProbability(margin, budget.locationSigmaDb);
  }
  return { powerDbm, marginDb, bestSf, deliveryProbability: probability };
}
