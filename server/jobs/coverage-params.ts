// Stored coverage run params and summaries read back in today's names (a small module of its own
// so the job, the split and the API route can all use it without an import circle; it imports
// nothing, the caller names its params type: storedCoverageParams<CoverageJobParams>(row.params)).
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
