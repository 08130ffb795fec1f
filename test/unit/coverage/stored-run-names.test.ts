// Coverage runs stored before the target margin had one name kept it as `requiredMarginDb` in their
// params and summary; they read back under today's name (targetMarginDb), and new rows are untouched.
import { expect, it } from 'vitest';
import { storedCoverageParams, storedCoverageSummary } from '../../../server/jobs/coverage-params.ts';

it('old params and summaries read their requiredMarginDb as targetMarginDb; new ones pass as they are', () => {
  expect(storedCoverageParams({ mode: 'fast', radiusKm: 2, requiredMarginDb: 7.5 })).toEqual({ mode: 'fast', radiusKm: 2, targetMarginDb: 7.5 });
  expect(storedCoverageParams({ mode: 'full', targetMarginDb: 4 })).toEqual({ mode: 'full', targetMarginDb: 4 });
  // Both present (never written so, but the new name wins).
  expect(storedCoverageParams({ targetMarginDb: 4, requiredMarginDb: 9 })).toEqual({ targetMarginDb: 4 });
  expect(storedCoverageParams(null)).toEqual({});
  expect(storedCoverageSummary({ served: { share: 0.5 }, requiredMarginDb: 10 })).toEqual({ served: { share: 0.5 }, targetMarginDb: 10 });
  expect(storedCoverageSummary({ served: { share: 0.5 }, targetMarginDb: 3 })).toEqual({ served: { share: 0.5 }, targetMarginDb: 3 });
  expect(storedCoverageSummary(null)).toBeNull();
  expect(storedCoverageSummary('not an object')).toBeNull();
});
