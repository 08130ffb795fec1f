// A coverage run's params (what a worker needs, resolved when the run is created), and stored
// params and summaries read back in today's names: a small module of its own so the job, the
// split, the compute step, the app layer and the API route all use it without an import circle
// (it imports types of the pure rooms only).
import type { ClutterPreset } from '../terrain/clutter.ts';
import type { EndKit, GatewayRadio, LinkRadioSettings, NodeRadio } from '../planning/link.ts';
import type { PropagationMethodId } from '../planning/path.ts';
import type { CoverageMode } from '../coverage/area.ts';

/** The one link budget of a run (server/planning/link.ts), as plain data a worker can read from the row. */
export interface CoverageBudgetParams {
  /** The node kit everywhere on the map, as a node with that kit would have it (resolveNode). */
  nodeKit: EndKit;
  node: NodeRadio;
  /** The link settings of that node (allowed SFs for its payload, target, spread); bandPlan by id. */
  radio: Omit<LinkRadioSettings, 'bandPlan'> & { bandPlanId: string };
  /** Node antenna height above ground as given, m (negative in a pit). */
  nodeAntennaHeightAglM: number;
  method: PropagationMethodId;
  deltaN: number;
}

/** Everything a run needs, resolved when the run is created (server/app/coverage.ts), so workers need no plan logic. */
export interface CoverageJobParams {
  /** fast or full (los gives visibility only, which has no margin: CLI only). */
  mode: Exclude<CoverageMode, 'los'>;
  radiusKm: number;
  /** Node antenna height the sweeps use, m (the node kit's, at least 1 m as for link paths). */
  targetHeightM: number;
  /** A fixed SF for every cell, or null: the node SF rule (fastest allowed SF meeting the target). */
  sf: number | null;
  targetMarginDb: number;
  frequencyMhz: number;
  /** Median effective earth-radius factor k50 from the plan's ΔN (P.1812-8 Eq. (5)), as links use. */
  kFactor: number;
  /** P.1812 options of the plan (full mode): ΔN, N0, time percent, polarisation. */
  p1812: { deltaN: number; n0: number; timePercent: number; polarisation: 'horizontal' | 'vertical' };
  budget: CoverageBudgetParams;
  /** Elevation layer file (absolute, or relative to the files folder) and its id. */
  terrainPath: string;
  terrainLayerId: string;
  /**
   * The plan's clutter layer for this run (null or absent: none): file, class
   * table (terrain room's code presets) and representative height per class index (m,
   * the P.1812 defaults with the plan's overrides, `clutterHeightsByIndex`).
   */
  clutter?: { layerId: string; name: string; path: string; codes: ClutterPreset; heightByClassM: number[] } | null;
  gateways: Array<{ id: string; name: string; lat: number; lon: number; heightAglM: number; kit: EndKit; radio: GatewayRadio }>;
  /** Cells of each gateway's window, in gateway order (the weight of its child in a split run's progress; absent on older runs). */
  windowCells?: number[];
  nodes: Array<{ id: string; name?: string; lat: number; lon: number }>;
}

/**
 * A run's stored params in today's names. Runs stored before the rename kept the target margin
 * as `requiredMarginDb` (one concept, one name: targetMarginDb, as plans and links call it).
 */
export function storedCoverageParams<P extends { targetMarginDb: number }>(stored: unknown): Partial<P> {
  const params = { ...((stored ?? {}) as Partial<P> & { targetMarginDb?: number; requiredMarginDb?: number }) };
  if (params.targetMarginDb === undefined && params.requiredMarginDb !== undefined) params.targetMarginDb = params.requiredMarginDb;
  delete params.requiredMarginDb;
  return params;
}

/** A run's stored summary in today's names (older summaries said `requiredMarginDb`, like their params). */
export function storedCoverageSummary(stored: unknown): Record<string, unknown> | null {
  if (stored === null || typeof stored !== 'object') return null;
  const { requiredMarginDb, ...summary } = stored as Record<string, unknown>;
  return summary.targetMarginDb === undefined && requiredMarginDb !== undefined ? { ...summary, targetMarginDb: requiredMarginDb } : summary;
}
