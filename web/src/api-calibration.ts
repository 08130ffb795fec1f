// Client calls of calibration from field readings (server/api/routes/calibration.ts):
// bulk reading import, fits, history, apply, revert; and a node's own readings.
import { request, type Answer } from './api.ts';

/** A stored calibration fit as the server answers it; shapes from the OpenAPI document. */
export type CalibrationResult = Answer<'/api/v1/plans/{planId}/calibration/{calibrationId}', 'get'>;
export type CalibrationGrouping = CalibrationResult['grouping'];
export type CalibrationGroup = CalibrationResult['groups'][number];
export type CalibrationList = Answer<'/api/v1/plans/{planId}/calibration', 'get'>;
type CalibrationApplied = Answer<'/api/v1/plans/{planId}/calibration/apply', 'post'>;
type CalibrationReverted = Answer<'/api/v1/plans/{planId}/calibration/revert', 'post'>;
type NodeReadings = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/readings', 'get'>;

/** The reading import's answer: a preview (?dryRun=true, 200) or what was stored (201). */
export type ReadingImportAnswer = Answer<'/api/v1/plans/{planId}/readings/import', 'post', 200> | Answer<'/api/v1/plans/{planId}/readings/import', 'post', 201>;

export const importReadings = (planId: string, text: string, dryRun: boolean): Promise<ReadingImportAnswer> => {
  const json = /^\s*[[{]/.test(text);
  return request<ReadingImportAnswer>('POST', `/plans/${planId}/readings/import${dryRun ? '?dryRun=true' : ''}`, text, json ? 'application/json' : 'text/csv');
};

export const fitCalibration = (planId: string, grouping: CalibrationGrouping): Promise<CalibrationResult> => request<CalibrationResult>('POST', `/plans/${planId}/calibration`, { grouping });


export const listCalibrations = (planId: string): Promise<CalibrationList> => request('GET', `/plans/${planId}/calibration?limit=20`);

export const getCalibration = (planId: string, id: string): Promise<CalibrationResult> => request<CalibrationResult>('GET', `/plans/${planId}/calibration/${encodeURIComponent(id)}`);

export const applyCalibration = (planId: string, calibrationId: string): Promise<CalibrationApplied> =>
  request('POST', `/plans/${planId}/calibration/apply`, { calibrationId });

export const revertCalibration = (planId: string): Promise<CalibrationReverted> => request('POST', `/plans/${planId}/calibration/revert`);

export const getNodeReadingsFor = (planId: string, nodeId: string, signal?: AbortSignal): Promise<NodeReadings> =>
  request('GET', `/plans/${planId}/nodes/${encodeURIComponent(nodeId)}/readings`, undefined, undefined, signal);
