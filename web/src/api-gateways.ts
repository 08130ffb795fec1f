// Gateway checks: peak EIRP, the band plan's legal check and fitted cautions (server/app/gateway-checks.ts).
import { request } from './api.ts';

export interface CautionGroup {
  topic: string;
  items: string[];
}
export interface GatewayCheck {
  gatewayId: string | null;
  name: string;
  txPowerDbm: number;
  antennaName: string;
  antennaGainDbi: number;
  antennaHeightAglM: number;
  feedlineName: string | null;
  lossesDb: number;
  peakEirpDbm: number;
  peakErpDbm: number;
  legal: { withinLimit: boolean; maxEirpDbm: number | null; excessDb: number | null; limitName: string | null; source: string | null; warnings: string[] };
  bandPlanName: string;
  cautions: CautionGroup[];
  cautionsFooter: string;
}
export interface GatewayKitDraft {
  name?: string;
  txPowerDbm: number;
  antennaHeightAglM: number;
  antennaDesignId: string;
  feedlineId?: string | null;
  feedlineLengthM?: number;
}

export const getGatewayChecks = (planId: string, signal?: AbortSignal): Promise<{ items: GatewayCheck[]; warnings: string[] }> =>
  request('GET', `/plans/${encodeURIComponent(planId)}/gateway-checks`, undefined, undefined, signal);
export const previewGatewayCheck = (planId: string, draft: GatewayKitDraft, signal?: AbortSignal): Promise<GatewayCheck> =>
  request('POST', `/plans/${encodeURIComponent(planId)}/gateway-checks/preview`, draft, undefined, signal);
