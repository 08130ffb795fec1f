// Client calls of gateway siting: /plans/:id/siting (server/api/routes/siting.ts).
import { request } from './api.ts';

export interface SitingRequest {
  requiredGateways: number;
  candidates: { sites: boolean; terrainPoints: number; spacingM?: number };
  keepExistingGateways: boolean;
  minimise?: 'gateways' | 'cost';
  budgetUsd?: number;
  maxGateways?: number;
  /** Capacity cap: nodes one gateway may serve (range: client-settings ranges.maxNodesPerGateway). */
  maxNodesPerGateway?: number;
}

export interface SitingSelected {
  rank: number;
  candidateId: string;
  source: 'site' | 'gateway' | 'terrain';
  siteId: string | null;
  gatewayId: string | null;
  name: string;
  lat: number;
  lon: number;
  antennaHeightAglM: number;
  costUsd: number;
  kept: boolean;
  nodesHeard: number;
  nodesOnlyHere: number;
  nodeIdsOnlyHere: string[];
}

export interface SitingResult {
  selected: SitingSelected[];
  coveredNodeIds: string[];
  uncoveredNodeIds: string[];
  uncovered: Array<{ nodeId: string; name: string; reason: string }>;
  shortOfRequired: Array<{ nodeId: string; name: string; candidatesHearing: number }>;
  nodesCoverable: number;
  nodesTotal: number;
  requiredGateways: number;
  objective: { gateways: number; costUsd: number };
  status: 'optimal' | 'feasible' | 'infeasible';
  message: string | null;
  optimal: boolean;
  gapPercent: number | null;
  solver: string;
  seconds: number;
  greedy: { gateways: number; costUsd: number; nodesCovered: number; feasible: boolean; seconds: number };
  matrix: { nodes: number; candidates: number; pairsPredicted: number; pairsSkipped: number; cached: boolean; seconds: number };
  before: { gateways: number };
  after: { gateways: number };
  /** keepExistingGateways false: existing gateways the answer drops (apply removes them, undo restores them). */
  removed?: Array<{ gatewayId: string; name: string }>;
  warnings: string[];
}

export interface SitingRun {
  id: string;
  planId: string;
  status: 'queued' | 'running' | 'done' | 'failed' | 'cancelled';
  progress: number;
  error: string | null;
  result: SitingResult | null;
  appliedAt: string | null;
  appliedGatewayIds: string[] | null;
  undoneAt: string | null;
}

export const startSiting = (planId: string, body: SitingRequest): Promise<SitingRun> => request<SitingRun>('POST', `/plans/${planId}/siting`, body);
export const getSiting = (planId: string, runId: string): Promise<SitingRun> => request<SitingRun>('GET', `/plans/${planId}/siting/${runId}`);
export const cancelSiting = (planId: string, runId: string): Promise<SitingRun> => request<SitingRun>('POST', `/plans/${planId}/siting/${runId}/cancel`);
export const applySiting = (planId: string, runId: string): Promise<{ gatewayIds: string[]; removedGatewayIds: string[] }> => request<{ gatewayIds: string[]; removedGatewayIds: string[] }>('POST', `/plans/${planId}/siting/${runId}/apply`);
export const undoSiting = (planId: string, runId: string): Promise<{ deletedGatewayIds: string[]; restoredGatewayIds: string[] }> => request<{ deletedGatewayIds: string[]; restoredGatewayIds: string[] }>('POST', `/plans/${planId}/siting/${runId}/undo`);
