// Client calls for sign-in, sign-out and team access (invitations, the access list, revoking,
// the audit log). The browser session is always the HttpOnly cookie: a pasted token is
// exchanged for it with POST /signin (token in the body, never in a URL), so tiles, sheets and
// downloads, which the browser fetches without our headers, are signed in too.
import { ApiError, request, storeToken, type Answer, type BodyOf } from './api.ts';

export type Role = Answer<'/api/v1/me', 'get'>['role'];

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

/** A new invitation (its one-time sign-in link and QR code); shapes from the OpenAPI document. */
export type Invitation = Answer<'/api/v1/invitations', 'post', 201>;
export const inviteTeammate = (body: BodyOf<'/api/v1/invitations', 'post'>): Promise<Invitation> => request<Invitation>('POST', '/invitations', body);

export type TeamMember = Answer<'/api/v1/team/access', 'get'>['items'][number];
export type AccessEntry = TeamMember['access'][number];
export async function getTeamAccess(): Promise<TeamMember[]> {
  return (await request<Answer<'/api/v1/team/access', 'get'>>('GET', '/team/access')).items;
}
export const revokeAccess = (tokenId: string): Promise<void> => request<void>('DELETE', `/tokens/${encodeURIComponent(tokenId)}`);

type AuditPage = Answer<'/api/v1/audit', 'get'>;
export type AuditEntry = AuditPage['items'][number];
export const getAudit = (limit = 100): Promise<AuditPage> => request<AuditPage>('GET', `/audit?limit=${limit}`);
