// Composites over several gateways on one common grid, and the summary a
// report needs. Pure: typed arrays in, typed arrays and numbers out.
import type { CellProducts } from './outputs.ts';

/** One gateway's products placed in the composite grid at (x0, y0). */
export interface PlacedProducts {
  gatewayIndex: number;
  x0: number;
  y0: number;
  widthPx: number;
  heightPx: number;
  products: CellProducts;
  lossDb: Float32Array;
}

export interface Composite {
  widthPx: number;
  heightPx: number;
  /** Index of the gateway with the highest received power; −1 where none reaches. */
  bestServer: Int16Array;
  /** Margin (dB) at the chosen SF from the best server; NaN where none. */
  marginDb: Float32Array;
  /** Basic loss (dB) to the best server; NaN where none. */
  lossDb: Float32Array;
  /** Number of gateways heard with at least the required margin. */
  redundancy: Uint8Array;
  /** Lowest SF any gateway closes with the required margin (0 none, 255 outside). */
  bestSf: Uint8Array;
  /** 1 − Π(1 − p_g): probability that at least one gateway hears a packet (independent gateways). */
  deliveryProbability: Float32Array;
}

export function buildComposite(widthPx: number, heightPx: number, parts: PlacedProducts[], targetMarginDb: number): Composite {
  const n = widthPx * heightPx;
  const bestServer = new Int16Array(n).fill(-1);
  const marginDb = new Float32Array(n).fill(Number.NaN);
  const lossDb = new Float32Array(n).fill(Number.NaN);
  const redundancy = new Uint8Array(n);
  const bestSf = new Uint8Array(n).fill(255);
  const miss = new Float32Array(n).fill(1);
  const bestPower = new Float32Array(n).fill(-Infinity);
  const covered = new Uint8Array(n);
  for (const part of parts) {
    const p = part.products;
    for (let row = 0; row < part.heightPx; row++) {
      const y = row + part.y0;
      if (y < 0 || y >= heightPx) continue;
      for (let col = 0; col < part.widthPx; col++) {
        const x = col + part.x0;
        if (x < 0 || x >= widthPx) continue;
        const src = row * part.widthPx + col;
        const power = p.powerDbm[src];
        if (power !== power) continue;
        const dst = y * widthPx + x;
        covered[dst] = 1;
        if (power > bestPower[dst]) {
          bestPower[dst] = power;
          bestServer[dst] = part.gatewayIndex;
          marginDb[dst] = p.marginDb[src];
          lossDb[dst] = part.lossDb[src];
        }
        if (p.marginDb[src] >= targetMarginDb && redundancy[dst] < 255) redundancy[dst]++;
        if (bestSf[dst] === 255) bestSf[dst] = 0;
        const sf = p.bestSf[src];
        if (sf >= 7 && sf <= 12 && (bestSf[dst] === 0 || sf < bestSf[dst])) bestSf[dst] = sf;
        miss[dst] *= 1 - p.deliveryProbability[src];
      }
    }
  }
  const deliveryProbability = new Float32Array(n);
  for (let i = 0; i < n; i++) deliveryProbability[i] = covered[i] ? 1 - miss[i] : Number.NaN;
  return { widthPx, heightPx, bestServer, marginDb, lossDb, redundancy, bestSf, deliveryProbability };
}

export type ServiceClass = 'served' | 'marginal' | 'unserved';

/** served: margin ≥ required; marginal: 0 ≤ margin < required; unserved: below sensitivity or not reached. */
export function classify(marginDb: number, targetMarginDb: number): ServiceClass {
  if (marginDb === marginDb && marginDb >= targetMarginDb) return 'served';
  if (marginDb === marginDb && marginDb >= 0) return 'marginal';
  return 'unserved';
}

export interface NodePosition {
  id: string;
  /** Cell of the composite grid holding the node (fractional pixel), or null when outside. */
  col: number | null;
  row: number | null;
}

export interface CoverageSummary {
  cells: number;
  areaKm2: number;
  served: { cells: number; share: number; areaKm2: number };
  marginal: { cells: number; share: number; areaKm2: number };
  unserved: { cells: number; share: number; areaKm2: number };
  nodes: { total: number; served: number; marginal: number; unserved: number; outside: number };
  /** Per gateway: cells and nodes for which it is the best server. */
  gateways: Array<{ index: number; bestServerCells: number; nodes: number }>;
}

/**
 * Area and shares over every cell inside at least one gateway's radius
 * (`cellAreaKm2(row)` gives the ground area of a cell in that row), the
 * class of each node, and per-gateway load (nodes for which it is best).
 */
export function summarise(
  composite: Composite,
  inside: Uint8Array,
  gatewayCount: number,
  targetMarginDb: number,
  cellAreaKm2: (row: number) => number,
  nodes: NodePosition[],
): CoverageSummary {
  const counts = { served: 0, marginal: 0, unserved: 0 };
  const areas = { served: 0, marginal: 0, unserved: 0 };
  const gateways = Array.from({ length: gatewayCount }, (_, index) => ({ index, bestServerCells: 0, nodes: 0 }));
  let cells = 0;
  let area = 0;
  for (let row = 0; row < composite.heightPx; row++) {
    const a = cellAreaKm2(row);
    for (let col = 0; col < composite.widthPx; col++) {
      const i = row * composite.widthPx + col;
      if (!inside[i]) continue;
      cells++;
      area += a;
      const c = classify(composite.marginDb[i], targetMarginDb);
      counts[c]++;
      areas[c] += a;
      const best = composite.bestServer[i];
      if (best >= 0) gateways[best].bestServerCells++;
    }
  }
  const nodeCounts = { total: nodes.length, served: 0, marginal: 0, unserved: 0, outside: 0 };
  for (const node of nodes) {
    if (node.col === null || node.row === null) {
      nodeCounts.outside++;
      continue;
    }
    const i = Math.floor(node.row) * composite.widthPx + Math.floor(node.col);
    if (!inside[i]) {
      nodeCounts.outside++;
      continue;
    }
    nodeCounts[classify(composite.marginDb[i], targetMarginDb)]++;
    const best = composite.bestServer[i];
    if (best >= 0 && composite.marginDb[i] >= 0) gateways[best].nodes++;
  }
  const share = (x: number) => (cells > 0 ? x / cells : 0);
  return {
    cells,
    areaKm2: area,
    served: { cells: counts.served, share: share(counts.served), areaKm2: areas.served },
    marginal: { cells: counts.marginal, share: share(counts.marginal), areaKm2: areas.marginal },
    unserved: { cells: counts.unserved, share: share(counts.unserved), areaKm2: areas.unserved },
    nodes: nodeCounts,
    gateways,
  };
}
