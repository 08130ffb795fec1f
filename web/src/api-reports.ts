// Client calls of reports, exports and scenarios (server/api/routes/exports.ts,
// server/api/routes/scenarios.ts).
import { ApiError, request, storedToken } from './api.ts';
import type { Answer } from './api.ts';

/** Two plans side by side (server/app/scenarios.ts); shapes from the OpenAPI document. */
export type PlanComparison = Answer<'/api/v1/plans/{planId}/compare/{otherPlanId}', 'get'>;
export type ScenarioSide = PlanComparison['a'];
export type NodeComparison = PlanComparison['nodes'][number];
type PlanCopy = Answer<'/api/v1/plans/{planId}/copy', 'post', 201>;

export const comparePlans = (planId: string, otherPlanId: string): Promise<PlanComparison> =>
  request<PlanComparison>('GET', `/plans/${encodeURIComponent(planId)}/compare/${encodeURIComponent(otherPlanId)}`);

export const copyPlan = (planId: string, name: string): Promise<PlanCopy> =>
  request('POST', `/plans/${encodeURIComponent(planId)}/copy`, { name });

/** The plan's bill of materials as the server prices it (the report's and bom.csv's figures); its shape comes from the OpenAPI document. */
export type BillOfMaterials = Answer<'/api/v1/plans/{planId}/bom', 'get'>;
export type BomLine = BillOfMaterials['lines'][number];

export const getBillOfMaterials = (planId: string): Promise<BillOfMaterials> => request<BillOfMaterials>('GET', `/plans/${encodeURIComponent(planId)}/bom`);

export type PlanFile = 'report.pdf' | 'export.geojson' | 'export.kml' | 'export.csv' | 'bom.csv';

/**
 * Fetches a file of the plan (with the tab's bearer token when one is kept, else the
 * sign-in cookie) and hands it to the browser as a download under the server's file name.
 */
export async function downloadPlanFile(planId: string, file: PlanFile): Promise<string> {
  const headers: Record<string, string> = { 'x-earshot-request': '1' };
  const token = storedToken();
  if (token) headers.authorization = `Bearer ${token}`;
  // The report prints its times in the viewer's own time zone (and names it).
  const tz = file === 'report.pdf' ? Intl.DateTimeFormat().resolvedOptions().timeZone : '';
  const query = tz ? `?tz=${encodeURIComponent(tz)}` : '';
  const response = await fetch(`/api/v1/plans/${encodeURIComponent(planId)}/${file}${query}`, { credentials: 'same-origin', headers });
  if (!response.ok) {
    const body = (await response.json().catch(() => ({}))) as { error?: { code?: string; message?: string } };
    throw new ApiError(response.status, body.error?.code ?? `http_${response.status}`, body.error?.message ?? response.statusText);
  }
  const name = /filename="([^"]+)"/.exec(response.headers.get('content-disposition') ?? '')?.[1] ?? file;
  const url = URL.createObjectURL(await response.blob());
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 30_000);
  return name;
}
