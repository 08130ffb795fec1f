// Client calls for sign-in, sign-out and team access (invitations, the access list, revoking,
// the audit log). The browser session is always the HttpOnly cookie: a pasted token is
// exchanged for it with POST /signin (token in the body, never in a URL), so tiles, sheets and
// downloads, which the browser fetches without our headers, are signed in too.
import { ApiError, request, storeToken, type ListPage } from './api.ts';

export type Role = 'planner' | 'installer' | 'viewer';

/** Exchanges an API token or a one-time sign-in token for the session cookie. */
export async function signInWithToken(token: string): Promise<void> {
  storeToken(null);
  const response = await fetch('/signin', {
    method: 'POST',
    credentials: 'same-origin',
    headers: { 'content-type': 'application/json', accept: 'application/json', 'x-earshot-request': '1' },
    body: JSON.stringify({ token }),
  });
  if (response.ok) return;
  let code = `http_${response.status}`;
  let message = response.statusText;
  try {
    const body = (await response.json()) as { error?: { code?: string; message?: string } };
    code = body.error?.code ?? code;
    message = body.error?.message ?? message;
  } catch {
    // not JSON
  }
  throw new ApiError(response.status, code, message);
}

/** Ends the session on the server (the cookie's token is revoked), then forgets any tab token. */
export async function signOut(): Promise<void> {
  try {
    await request<void>('POST', '/auth/signout');
  } finally {
    storeToken(null);
  }
}

export interface Invitation {
  link: string;
  qrSvg: string;
  id: string;
  userId: string;
  userName: string;
  role: Role;
  expiresAt: string;
}
export const inviteTeammate = (body: { role: Role; userName?: string; expiresInDays?: number }): Promise<Invitation> => request<Invitation>('POST', '/invitations', body);

export interface AccessEntry {
  id: string;
  kind: 'api-token' | 'browser-session' | 'sign-in-link';
  label: string;
  createdAt: string;
  lastUsedAt: string | null;
  expiresAt: string | null;
  current: boolean;
}
export interface TeamMember {
  id: string;
  name: string;
  role: Role;
  createdAt: string;
  access: AccessEntry[];
}
export async function getTeamAccess(): Promise<TeamMember[]> {
  return (await request<{ items: TeamMember[] }>('GET', '/team/access')).items;
}
export const revokeAccess = (tokenId: string): Promise<void> => request<void>('DELETE', `/tokens/${encodeURIComponent(tokenId)}`);

export interface AuditEntry {
  id: string;
  userId: string | null;
  action: string;
  entity: string;
  entityId: string;
  detail: unknown;
  at: string;
}
export const getAudit = (limit = 100): Promise<ListPage<AuditEntry>> => request<ListPage<AuditEntry>>('GET', `/audit?limit=${limit}`);
