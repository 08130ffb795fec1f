// Client calls of the capacity room: GET /plans/:id/capacity (server/api/routes/capacity.ts).
import { request } from './api.ts';

export type CapacityModel = 'aloha' | 'capture' | 'simulate';

export interface CapacitySfLoad {
  sf: number;
  bandwidthKhz: number;
  nodes: number;
  offeredLoadErlangPerChannel: number;
  airtimeShare: number;
  collisionProbability: number;
}

export interface CapacityGateway {
  gatewayId: string;
  gatewayName: string;
  nodes: number;
  offeredLoadErlangPerChannel: number[];
  offeredLoadErlang: number;
  perSf: CapacitySfLoad[];
  downlink: { demandedMessagesPerHour: number; messagesPerHour: number; airtimeShare: number; dutyCyclePercent: number | null; overDutyCycle: boolean; repliesDroppedPerHour: number };
}

export interface CapacityNode {
  nodeId: string;
  nodeName: string;
  sf: number | null;
  timeOnAirMs: number;
  messagesPerHour: number;
  successProbability: number | null;
  linkDeliveryProbability: number;
  deliveryRatio: number;
  maxMessagesPerHourAtDutyCycle: number | null;
  maxMessagesPerHourAtDwell: number | null;
  dwellOk: boolean | null;
  overBudget: boolean;
  gatewaysHeard: number;
  warnings: string[];
}

export interface PlanCapacity {
  planId: string;
  model: CapacityModel;
  durationS: number | null;
  seed: number | null;
  channels: number;
  rateScale: number;
  confirmedShare: number;
  captureThresholdDb: number;
  rules: { dutyCyclePercent: number | null; dwellTimeMs: number | null; dwellWindowS: number | null };
  gateways: CapacityGateway[];
  nodes: CapacityNode[];
  totals: { nodes: number; overBudgetNodes: number; meanLinkDeliveryProbability: number; meanDeliveryRatio: number; transmissions: number | null };
  method: string;
  sources: string[];
  cautions: string[];
  warnings: string[];
}

export interface CapacityQuery {
  model?: CapacityModel;
  rateScale?: number;
  channels?: number;
  confirmedShare?: number;
  seed?: number;
}

export function getCapacity(planId: string, query: CapacityQuery = {}, signal?: AbortSignal): Promise<PlanCapacity> {
  const params = new URLSearchParams();
  for (const [key, value] of Object.entries(query)) if (value !== undefined) params.set(key, String(value));
  const qs = params.toString();
  return request<PlanCapacity>('GET', `/plans/${encodeURIComponent(planId)}/capacity${qs ? `?${qs}` : ''}`, undefined, undefined, signal);
}
