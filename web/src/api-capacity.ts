// Client calls of the capacity room: GET /plans/:id/capacity (server/api/routes/capacity.ts).
import { request, type Answer, type QueryOf } from './api.ts';

/** The plan's capacity answer; its shape comes from the OpenAPI document. */
export type PlanCapacity = Answer<'/api/v1/plans/{planId}/capacity', 'get'>;
export type CapacityModel = PlanCapacity['model'];
export type CapacityGateway = PlanCapacity['gateways'][number];
export type CapacitySfLoad = CapacityGateway['perSf'][number];
export type CapacityNode = PlanCapacity['nodes'][number];

export type CapacityQuery = QueryOf<'/api/v1/plans/{planId}/capacity', 'get'>;

export function getCapacity(planId: string, query: CapacityQuery = {}, signal?: AbortSignal): Promise<PlanCapacity> {
  const params = new URLSearchParams();
  for (const [key, value] of Object.entries(query)) if (value !== undefined) params.set(key, String(value));
  const qs = params.toString();
  return request<PlanCapacity>('GET', `/plans/${encodeURIComponent(planId)}/capacity${qs ? `?${qs}` : ''}`, undefined, undefined, signal);
}
