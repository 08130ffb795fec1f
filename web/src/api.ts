// The one typed client for earshot's HTTP API (/api/v1). Every view calls the
// server through these functions; nothing else in web/ calls fetch directly.
// Authentication: the sign-in cookie set by GET /signin?token=..., or a pasted
// API token kept for this browser tab (sessionStorage) and sent as a bearer.

import type { paths } from './generated/api-schema.ts';

const base = '/api/v1';

type Method = 'get' | 'post' | 'put' | 'patch' | 'delete';
/** The JSON a route answers with `status`, as the server's OpenAPI document says (web/src/generated/api-schema.ts). */
export type Answer<P extends keyof paths, M extends Method, S extends number = 200> = paths[P][M] extends {
  responses: { [K in S]: { content: { 'application/json': infer T } } };
}
  ? T
  : // Not `never` (which fits everywhere and would hide a wrong path or status): a type no answer has.
    { readonly noJsonAnswer: `${P} ${M} ${S}` };
/** The query parameters a route takes. */
export type QueryOf<P extends keyof paths, M extends Method> = paths[P][M] extends { parameters: { query?: infer Q } } ? NonNullable<Q> : never;
/** The JSON body a route takes. */
export type BodyOf<P extends keyof paths, M extends Method> = paths[P][M] extends { requestBody?: { content: { 'application/json': infer T } } } ? T : never;
const tokenKey = 'earshot.token';

export class ApiError extends Error {
  readonly status: number;
  readonly code: string;
  /** Structured extra detail some routes send (e.g. row errors of an import). */
  readonly detail: unknown;
  constructor(status: number, code: string, message: string, detail?: unknown) {
    super(message);
    this.status = status;
    this.code = code;
    this.detail = detail;
  }
  /** True when the route is not deployed on this server (the router's own 404, "no route ..."). */
  get notAvailable(): boolean {
    return this.status === 404 && this.message.startsWith('no route');
  }
}

export function storedToken(): string | null {
  try {
    return sessionStorage.getItem(tokenKey);
  } catch {
    return null;
  }
}

export function storeToken(token: string | null): void {
  if (token === null) sessionStorage.removeItem(tokenKey);
  else sessionStorage.setItem(tokenKey, token);
}

function headers(json: boolean): Record<string, string> {
  // The custom header proves to the server's CSRF check that the request comes from our page.
  const out: Record<string, string> = { accept: 'application/json', 'x-earshot-request': '1' };
  if (json) out['content-type'] = 'application/json';
  const token = storedToken();
  if (token) out.authorization = `Bearer ${token}`;
  return out;
}

async function parseError(response: Response): Promise<ApiError> {
  let code = `http_${response.status}`;
  let message = response.statusText || `HTTP ${response.status}`;
  let detail: unknown;
  try {
    const body = (await response.json()) as {
      error?: { code?: string; message?: string; details?: unknown; errors?: unknown; rows?: unknown };
      errors?: unknown;
      message?: string;
    };
    if (body.error?.code) code = body.error.code;
    if (body.error?.message) message = body.error.message;
    else if (body.message) message = body.message;
    detail = body.error?.errors ?? body.error?.rows ?? body.error?.details ?? body.errors;
  } catch {
    // not JSON: keep the status text
  }
  return new ApiError(response.status, code, message, detail);
}

/** True for the rejection of a request that was aborted on purpose (its view went away). */
export function isAbort(err: unknown): boolean {
  return err instanceof DOMException && err.name === 'AbortError';
}

/** One call to the API. `signal` aborts it (e.g. the node it asks about was deleted or closed). */
export async function request<T>(method: string, path: string, body?: unknown, rawContentType?: string, signal?: AbortSignal): Promise<T> {
  const hdrs = headers(body !== undefined && !rawContentType);
  if (rawContentType) hdrs['content-type'] = rawContentType;
  const response = await fetch(`${base}${path}`, {
    method,
    credentials: 'same-origin',
    headers: hdrs,
    body: body === undefined ? undefined : rawContentType ? String(body) : JSON.stringify(body),
    signal,
  });
  if (!response.ok) throw await parseError(response);
  if (response.status === 204) return undefined as T;
  const text = await response.text();
  return (text ? JSON.parse(text) : undefined) as T;
}

export interface ListPage<T> {
  items: T[];
  total: number;
  next: string | null;
}

/** Reads every page of a list endpoint ({items,total,next}; `next` is the cursor). */
async function listAll<T>(path: string, pageSize = 500): Promise<T[]> {
  const out: T[] = [];
  let cursor: string | null = null;
  for (let guard = 0; guard < 200; guard++) {
    const sep = path.includes('?') ? '&' : '?';
    const query = `${sep}limit=${pageSize}${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ''}`;
    const page: ListPage<T> = await request<ListPage<T>>('GET', `${path}${query}`);
    out.push(...page.items);
    if (!page.next || page.items.length === 0) break;
    cursor = page.next;
  }
  return out;
}

// ---------- plans and fleet objects ----------

export type Plan = Answer<'/api/v1/plans/{planId}', 'get'>;
export type Site = Answer<'/api/v1/plans/{planId}/sites/{id}', 'get'>;
export type Gateway = Answer<'/api/v1/plans/{planId}/gateways/{id}', 'get'>;
export type FleetNode = Answer<'/api/v1/plans/{planId}/nodes/{id}', 'get'>;

export type EntityKind = 'nodes' | 'gateways' | 'sites';
export type Entity = FleetNode | Gateway | Site;

export const listPlans = (): Promise<Plan[]> => listAll<Plan>('/plans');
export const getPlan = (planId: string): Promise<Plan> => request<Plan>('GET', `/plans/${planId}`);
export const createPlan = (name: string): Promise<Plan> => request<Plan>('POST', '/plans', { name });
/** Changes plan settings; `version` is the one read (a stale one comes back as 409). */
export const updatePlan = (planId: string, body: BodyOf<'/api/v1/plans/{planId}', 'patch'>): Promise<Plan> =>
  request<Plan>('PATCH', `/plans/${planId}`, body);

export function listEntities<T extends Entity>(planId: string, kind: EntityKind): Promise<T[]> {
  return listAll<T>(`/plans/${planId}/${kind}`);
}
export function createEntity<T extends Entity>(planId: string, kind: EntityKind, body: Record<string, unknown>): Promise<T> {
  return request<T>('POST', `/plans/${planId}/${kind}`, body);
}
export function updateEntity<T extends Entity>(planId: string, kind: EntityKind, id: string, body: Record<string, unknown>): Promise<T> {
  return request<T>('PATCH', `/plans/${planId}/${kind}/${id}`, body);
}
export function deleteEntity(planId: string, kind: EntityKind, id: string): Promise<void> {
  return request<void>('DELETE', `/plans/${planId}/${kind}/${id}`);
}

// ---------- kit catalog ----------

export type AntennaDesign = Answer<'/api/v1/kit/antenna-designs/{id}', 'get'>;
export type FeedlineType = Answer<'/api/v1/kit/feedlines/{id}', 'get'>;
export type MastOption = Answer<'/api/v1/kit/masts/{id}', 'get'>;
export interface Catalog {
  antennas: AntennaDesign[];
  feedlines: FeedlineType[];
  masts: MastOption[];
}

export async function getCatalog(): Promise<Catalog> {
  const [antennas, feedlines, masts] = await Promise.all([
    listAll<AntennaDesign>('/kit/antenna-designs'),
    listAll<FeedlineType>('/kit/feedlines'),
    listAll<MastOption>('/kit/masts'),
  ]);
  return { antennas, feedlines, masts };
}

// ---------- bulk node import ----------

/** ?dryRun=true: the row errors and a preview; nothing stored. */
export type ImportPreview = Answer<'/api/v1/plans/{planId}/nodes/import', 'post', 200>;
/** The rows were stored (with any row error the answer is a 400 invalid_rows carrying error.rows). */
export type ImportDone = Answer<'/api/v1/plans/{planId}/nodes/import', 'post', 201>;
export type ImportResult = ImportPreview | ImportDone;
export type ImportRowError = ImportPreview['errors'][number];

/** CSV goes as text/csv, GeoJSON as application/geo+json; ?dryRun=true validates and previews only. */
export function importNodes(planId: string, format: 'csv' | 'geojson', content: string, dryRun: boolean): Promise<ImportResult> {
  const type = format === 'csv' ? 'text/csv' : 'application/geo+json';
  return request<ImportResult>('POST', `/plans/${planId}/nodes/import${dryRun ? '?dryRun=true' : ''}`, content, type);
}

// ---------- terrain ----------

export type TerrainLayer = Answer<'/api/v1/plans/{planId}/terrain', 'get'>['items'][number];
export async function listTerrain(planId: string): Promise<TerrainLayer[]> {
  return (await request<Answer<'/api/v1/plans/{planId}/terrain', 'get'>>('GET', `/plans/${planId}/terrain`)).items;
}
export const hillshadeTileUrl = (planId: string): string => `${base}/plans/${planId}/terrain/tiles/{z}/{x}/{y}.png`;

// ---------- links, link check, recommendation, readings ----------

export type LinkStatus = NodeLinks['status'];

/** One predicted link (best first in NodeLinks.links); its shape comes from the OpenAPI document. */
export type NodeLinks = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/links', 'get'>;
export type Link = NodeLinks['links'][number];
/** Kit fields GET .../links accepts to preview another kit without saving it ('' or 'none' feedlineId = no feedline). */
export type KitPreview = QueryOf<'/api/v1/plans/{planId}/nodes/{nodeId}/links', 'get'>;
export function getNodeLinks(planId: string, nodeId: string, preview?: KitPreview, signal?: AbortSignal): Promise<NodeLinks> {
  const q = new URLSearchParams();
  for (const [key, value] of Object.entries(preview ?? {})) if (value !== undefined) q.set(key, String(value));
  const query = q.toString();
  return request<NodeLinks>('GET', `/plans/${planId}/nodes/${nodeId}/links${query ? `?${query}` : ''}`, undefined, undefined, signal);
}

export type LinkCheck = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/check', 'get'>;
/** null when no gateway is in range. */
export type LinkProfile = NonNullable<LinkCheck['profile']>;
export type ProfilePoint = LinkProfile['points'][number];
export type Range = LinkProfile['expected']['rssiDbm'];
export const getLinkCheck = (planId: string, nodeId: string, signal?: AbortSignal): Promise<LinkCheck> =>
  request<LinkCheck>('GET', `/plans/${planId}/nodes/${nodeId}/check`, undefined, undefined, signal);

export type RecommendRequest = NonNullable<BodyOf<'/api/v1/plans/{planId}/nodes/{nodeId}/recommend', 'post'>>;
export type Recommendation = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/recommend', 'post'>;
export type RecommendOption = Recommendation['options'][number];
export const recommend = (planId: string, nodeId: string, body: RecommendRequest, signal?: AbortSignal): Promise<Recommendation> =>
  request<Recommendation>('POST', `/plans/${planId}/nodes/${nodeId}/recommend`, body, undefined, signal);

/** The printable sheet, with times in this browser's time zone. */
export const visitSheetUrl = (planId: string, nodeId: string): string => {
  let tz = '';
  try {
    tz = Intl.DateTimeFormat().resolvedOptions().timeZone ?? '';
  } catch {
    tz = '';
  }
  return `${base}/plans/${planId}/nodes/${nodeId}/visit-sheet${/^[A-Za-z0-9_+\-/]+$/.test(tz) ? `?tz=${encodeURIComponent(tz)}` : ''}`;
};
export type VisitSheet = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/visit-sheet', 'get'>;
export const getVisitSheet = (planId: string, nodeId: string): Promise<VisitSheet> =>
  request<VisitSheet>('GET', `/plans/${planId}/nodes/${nodeId}/visit-sheet?format=json`);

/** One field reading as POST …/readings takes it (the single-reading form of its body). */
export type ReadingInput = Extract<BodyOf<'/api/v1/plans/{planId}/readings', 'post'>, { rssiDbm: number }>;
/** A reading beside the prediction at its gateway (measured − predicted differences, dB). */
export type Reading = Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/readings', 'get'>['items'][number];
export const postReading = (planId: string, body: ReadingInput): Promise<Answer<'/api/v1/plans/{planId}/readings', 'post', 201>> =>
  request('POST', `/plans/${planId}/readings`, body);
export const getNodeReadings = (planId: string, nodeId: string): Promise<Answer<'/api/v1/plans/{planId}/nodes/{nodeId}/readings', 'get'>> =>
  request('GET', `/plans/${planId}/nodes/${nodeId}/readings`);

export type FleetTable = Answer<'/api/v1/plans/{planId}/links', 'get'>;
export type FleetRow = FleetTable['items'][number];
export async function getFleet(planId: string, status?: LinkStatus): Promise<FleetTable> {
  const rows: FleetRow[] = [];
  let first: FleetTable | null = null;
  let cursor: string | null = null;
  let total = 0;
  for (let guard = 0; guard < 200; guard++) {
    const q = new URLSearchParams({ limit: '500' });
    if (status) q.set('status', status);
    if (cursor) q.set('cursor', cursor);
    const page: FleetTable = await request<FleetTable>('GET', `/plans/${planId}/links?${q.toString()}`);
    first = first ?? page;
    rows.push(...page.items);
    total = page.total;
    if (!page.next || page.items.length === 0) break;
    cursor = page.next;
  }
  // Counts, assumptions and warnings of the first page (the same on every page).
  if (!first) throw new ApiError(0, 'no_answer', 'the fleet table answered no page');
  return { ...first, items: rows, total, next: null };
}

// ---------- coverage ----------

export type CoverageRun = Answer<'/api/v1/plans/{planId}/coverage/{runId}', 'get'>;
export type RunState = CoverageRun['status'];
export type CoverageSummary = NonNullable<CoverageRun['summary']>;
export type AreaShare = CoverageSummary['served'];
export type CoverageRequest = BodyOf<'/api/v1/plans/{planId}/coverage', 'post'>;
export const runState = (run: CoverageRun): RunState => run.status;
export const startCoverage = (planId: string, body: CoverageRequest): Promise<CoverageRun> =>
  request<CoverageRun>('POST', `/plans/${planId}/coverage`, body);
export const getCoverage = (planId: string, runId: string): Promise<CoverageRun> =>
  request<CoverageRun>('GET', `/plans/${planId}/coverage/${runId}`);
export const cancelCoverage = (planId: string, runId: string): Promise<CoverageRun> =>
  request<CoverageRun>('POST', `/plans/${planId}/coverage/${runId}/cancel`, {});
export async function listCoverage(planId: string): Promise<CoverageRun[]> {
  return (await request<Answer<'/api/v1/plans/{planId}/coverage', 'get'>>('GET', `/plans/${planId}/coverage`)).items;
}
export const coverageEventsUrl = (planId: string, runId: string): string => `${base}/plans/${planId}/coverage/${runId}/events`;
/** Margin tiles of a finished run. */
export const coverageTileUrl = (planId: string, runId: string): string => `${base}/plans/${planId}/coverage/${runId}/tiles/{z}/{x}/{y}.png`;
/** GeoTIFF export: margin, loss, redundancy (gateways heard with margin) or best-sf. */
export const coverageGeoTiffUrl = (planId: string, runId: string, layer: 'margin' | 'loss' | 'redundancy' | 'best-sf'): string =>
  `${base}/plans/${planId}/coverage/${runId}.tif${layer === 'margin' ? '' : `?layer=${layer}`}`;

export type CoverageLegend = Answer<'/api/v1/coverage/legend', 'get'>;
export const getCoverageLegend = (): Promise<CoverageLegend> => request<CoverageLegend>('GET', '/coverage/legend');

// ---------- session ----------

export type Me = Answer<'/api/v1/me', 'get'>;
export const getMe = (): Promise<Me> => request<Me>('GET', '/me');

// ---------- client settings ----------

export type ClientSettings = Answer<'/api/v1/client-settings', 'get'>;
/** An uplink SF with the LoRaWAN maximum application payload it carries (null: none stated). */
export type UplinkSf = ClientSettings['bandPlans'][number]['uplinkSfs'][number];
/** The valid range of each physical input (FIELD_RANGES, server/planning/field-ranges.ts). */
export type FieldRanges = ClientSettings['ranges'];
export type FieldRange = FieldRanges[keyof FieldRanges];
export const getClientSettings = (): Promise<ClientSettings> => request<ClientSettings>('GET', '/client-settings');
