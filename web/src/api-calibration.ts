// Client calls of calibration from field readings (server/api/routes/calibration.ts):
// bulk reading import, fits, history, apply, revert; and a node's own readings.
import { request, type Reading } from './api.ts';

export type CalibrationGrouping = 'none' | 'environment' | 'clutter' | 'distance';

export interface CalibrationGroup {
  key: string;
  n: number;
  fitted: boolean;
  note?: string;
  nodes?: number;
  biasDb?: number;
  sigmaDb?: number;
  biasCi95Db?: [number, number];
  sigmaCi95Db?: [number, number];
}

export interface CalibrationResult {
  id: string;
  planId: string;
  grouping: CalibrationGrouping;
  n: number;
  nodes: number;
  biasDb: number;
  sigmaDb: number;
  biasCi95Db: [number, number];
  sigmaCi95Db: [number, number];
  outlierCount: number;
  groups: CalibrationGroup[];
  outliers: Array<{ readingId: string; nodeId: string; gatewayId: string; residualDb: number; modifiedZ: number; group: string }>;
  crossValidation: { folds: number; seed: number; n: number; rmseBeforeDb: number; rmseAfterDb: number; meanErrorBeforeDb: number; meanErrorAfterDb: number; method: string } | null;
  crossValidationNote?: string;
  method: { bias: string; sigma: string; outliers: string; crossValidation: string };
  excluded: Array<{ readingId: string; nodeId: string; gatewayId: string | null; reason: string }>;
  residuals: Array<{ readingId: string; nodeId: string; gatewayId: string; distanceM: number; residualDb: number; group: string }>;
  createdAt: string;
  applied: boolean;
  appliedAt: string | null;
  revertedAt: string | null;
}

export interface ReadingImportAnswer {
  dryRun: boolean;
  valid: boolean;
  rowCount: number;
  created: number;
  duplicates: Array<{ row: number; sameAs: string }>;
  errors: Array<{ row: number; field: string; message: string }>;
  ignoredColumns: string[];
}

export const importReadings = (planId: string, text: string, dryRun: boolean): Promise<ReadingImportAnswer> => {
  const json = /^\s*[[{]/.test(text);
  return request<ReadingImportAnswer>('POST', `/plans/${planId}/readings/import${dryRun ? '?dryRun=true' : ''}`, text, json ? 'application/json' : 'text/csv');
};

export const fitCalibration = (planId: string, grouping: CalibrationGrouping): Promise<CalibrationResult> => request<CalibrationResult>('POST', `/plans/${planId}/calibration`, { grouping });

export const listCalibrations = (planId: string): Promise<{ items: CalibrationResult[]; total: number; appliedId: string | null }> => request('GET', `/plans/${planId}/calibration?limit=20`);

export const getCalibration = (planId: string, id: string): Promise<CalibrationResult> => request<CalibrationResult>('GET', `/plans/${planId}/calibration/${encodeURIComponent(id)}`);

export const applyCalibration = (planId: string, calibrationId: string): Promise<{ applied: CalibrationResult; previousId: string | null; changed: boolean }> =>
  request('POST', `/plans/${planId}/calibration/apply`, { calibrationId });

export const revertCalibration = (planId: string): Promise<{ reverted: CalibrationResult; restored: CalibrationResult | null }> => request('POST', `/plans/${planId}/calibration/revert`);

export const getNodeReadingsFor = (planId: string, nodeId: string, signal?: AbortSignal): Promise<{ items: Reading[]; total: number; meanRssiDifferenceDb: number | null }> =>
  request('GET', `/plans/${planId}/nodes/${encodeURIComponent(nodeId)}/readings`, undefined, undefined, signal);
