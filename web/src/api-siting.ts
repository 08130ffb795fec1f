// Client calls of gateway siting: /plans/:id/siting (server/api/routes/siting.ts).
import { request, type Answer, type BodyOf } from './api.ts';

/** A siting run as the server answers it; shapes from the OpenAPI document. */
export type SitingRun = Answer<'/api/v1/plans/{planId}/siting/{runId}', 'get'>;
export type SitingResult = NonNullable<SitingRun['result']>;
export type SitingSelected = SitingResult['selected'][number];
export type SitingRequest = BodyOf<'/api/v1/plans/{planId}/siting', 'post'>;
type SitingStarted = Answer<'/api/v1/plans/{planId}/siting', 'post', 202>;
type SitingCancelled = Answer<'/api/v1/plans/{planId}/siting/{runId}/cancel', 'post'>;
export type SitingApplied = Answer<'/api/v1/plans/{planId}/siting/{runId}/apply', 'post', 201>;
export type SitingUndone = Answer<'/api/v1/plans/{planId}/siting/{runId}/undo', 'post'>;

export const startSiting = (planId: string, body: SitingRequest): Promise<SitingStarted> => request<SitingStarted>('POST', `/plans/${planId}/siting`, body);
export const getSiting = (planId: string, runId: string): Promise<SitingRun> => request<SitingRun>('GET', `/plans/${planId}/siting/${runId}`);
export const cancelSiting = (planId: string, runId: string): Promise<SitingCancelled> => request<SitingCancelled>('POST', `/plans/${planId}/siting/${runId}/cancel`);
export const applySiting = (planId: string, runId: string): Promise<SitingApplied> => request<SitingApplied>('POST', `/plans/${planId}/siting/${runId}/apply`);
export const undoSiting = (planId: string, runId: string): Promise<SitingUndone> => request<SitingUndone>('POST', `/plans/${planId}/siting/${runId}/undo`);
