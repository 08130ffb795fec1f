// Gateway checks: peak EIRP, the band plan's legal check and fitted cautions (server/app/gateway-checks.ts).
import { request, type Answer, type BodyOf } from './api.ts';

/** The gateway checks answer; shapes from the OpenAPI document. */
export type GatewayChecks = Answer<'/api/v1/plans/{planId}/gateway-checks', 'get'>;
export type GatewayCheck = Answer<'/api/v1/plans/{planId}/gateway-checks/preview', 'post'>;
export type CautionGroup = GatewayCheck['cautions'][number];
export type GatewayKitDraft = BodyOf<'/api/v1/plans/{planId}/gateway-checks/preview', 'post'>;

export const getGatewayChecks = (planId: string, signal?: AbortSignal): Promise<GatewayChecks> =>
  request('GET', `/plans/${encodeURIComponent(planId)}/gateway-checks`, undefined, undefined, signal);
export const previewGatewayCheck = (planId: string, draft: GatewayKitDraft, signal?: AbortSignal): Promise<GatewayCheck> =>
  request('POST', `/plans/${encodeURIComponent(planId)}/gateway-checks/preview`, draft, undefined, signal);
