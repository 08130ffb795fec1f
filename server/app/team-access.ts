// Team access use cases: invitations (one-time sign-in links with a QR code), browser
// sessions, and the planner's list of who can reach the team. The API routes
// (server/api/routes/team-access.ts, /signin) and the CLI (`token issue --link`) call these.
//
// Why a browser session is its own token: the cookie must be revocable on its own (sign-out
// ends it on the server) without touching the API token a teammate pasted to get it.
import type { Config } from '../config.ts';
import type { Database } from '../db/client.ts';
import { createUser, issueToken, type Principal, type Role } from '../db/repositories/accounts.ts';
import { writeWithAudit } from '../db/repositories/audit.ts';
import { NotFoundError } from '../db/errors.ts';

/** How long a browser session lasts (common practice for a work tool: a month). */
export const sessionDays = 30;
/** Default life of an invitation link; planners may choose 1–30 days. */
export const invitationDays = 7;
/** The label every browser-session token carries (the team-access list tells sessions apart by it). */
export const sessionLabel = 'browser session';
const invitationLabel = 'invitation link';

/** The address teammates open: EARSHOT_PUBLIC_URL when set, else this server's own host and port. */
export function publicBaseUrl(config: Pick<Config, 'publicBaseUrl' | 'host'>, port: number): string {
  if (config.publicBaseUrl) return config.publicBaseUrl.replace(/\/$/, '');
  const host = config.host === '0.0.0.0' || config.host === '::' ? 'localhost' : config.host.includes(':') ? `[${config.host}]` : config.host;
  return `http://${host}:${port}`;
}

export function signInLink(baseUrl: string, token: string): string {
  return `${baseUrl.replace(/\/$/, '')}/signin?token=${encodeURIComponent(token)}`;
}

/** An SVG QR code of the link (error correction M: survives a smudged phone screen). */
export async function linkQrSvg(link: string): Promise<string> {
  const { default: QRCode } = await import('qrcode'); // loaded when a link is drawn, not by every importer
  return QRCode.toString(link, { type: 'svg', errorCorrectionLevel: 'M', margin: 2, color: { dark: '#1b2430', light: '#ffffff' } });
}

export interface Invitation {
  token: string;
  link: string;
  qrSvg: string;
  id: string;
  userId: string;
  userName: string;
  role: Role;
  expiresAt: Date;
}

/**
 * A planner invites a teammate: a new user of the team with the role (or an existing user of
 * the team, whose role must match), and a one-time sign-in token for them. User, token and the
 * audit entry are written together or not at all.
 */
export async function inviteTeammate(
  db: Database,
  principal: Principal,
  input: { role: Role; userName?: string; userId?: string; expiresInDays?: number },
  baseUrl: string,
): Promise<Invitation> {
  const expiresAt = new Date(Date.now() + (input.expiresInDays ?? invitationDays) * 86_400_000);
  if (input.userId) {
    const user = await db.prisma.user.findFirst({ where: { id: input.userId, teamId: principal.teamId } });
    if (!user) throw new NotFoundError('user');
    if (user.role !== input.role) throw new InvitationError(`role: ${user.name} has the ${user.role} role, not ${input.role}`);
  }
  let userName = '';
  const issued = await writeWithAudit(
    db,
    async (tx) => {
      const user = input.userId
        ? await tx.prisma.user.findUniqueOrThrow({ where: { id: input.userId } })
        : await createUser(tx, { teamId: principal.teamId, name: input.userName?.trim() || `new ${input.role}`, role: input.role });
      userName = user.name;
      return issueToken(tx, { userId: user.id, label: invitationLabel, oneTime: true, expiresAt });
    },
    (row) => ({ principal, action: 'invite', entity: 'token', entityId: row.id, detail: { role: row.role, name: userName, expiresAt: expiresAt.toISOString() } }),
  );
  const link = signInLink(baseUrl, issued.token);
  return { token: issued.token, link, qrSvg: await linkQrSvg(link), id: issued.id, userId: issued.userId, userName, role: issued.role, expiresAt };
}

export class InvitationError extends Error {}

/** Starts a browser session for the signed-in principal (after a one-time link or a pasted API token). */
export async function startBrowserSession(db: Database, principal: Principal, via: 'one-time link' | 'api token'): Promise<{ token: string; expiresAt: Date }> {
  const expiresAt = new Date(Date.now() + sessionDays * 86_400_000);
  const session = await writeWithAudit(
    db,
    (tx) => issueToken(tx, { userId: principal.userId, label: sessionLabel, expiresAt }),
    (issued) => ({ principal, action: 'signin', entity: 'token', entityId: issued.id, detail: { via } }),
  );
  return { token: session.token, expiresAt };
}

export type AccessKind = 'api-token' | 'browser-session' | 'sign-in-link';
export interface AccessEntry {
  id: string;
  kind: AccessKind;
  label: string;
  createdAt: Date;
  lastUsedAt: Date | null;
  expiresAt: Date | null;
  /** True for the session making this request (revoking it signs you out). */
  current: boolean;
}
export interface TeamMember {
  id: string;
  name: string;
  role: Role;
  createdAt: Date;
  access: AccessEntry[];
}

/** Everyone in the team with their live tokens (revoked, used and expired ones are left out). */
export async function listTeamAccess(db: Database, principal: Principal): Promise<TeamMember[]> {
  const now = new Date();
  const users = await db.prisma.user.findMany({
    where: { teamId: principal.teamId },
    orderBy: [{ role: 'asc' }, { name: 'asc' }, { id: 'asc' }],
    include: { tokens: { where: { revokedAt: null, OR: [{ expiresAt: null }, { expiresAt: { gt: now } }] }, orderBy: { createdAt: 'desc' } } },
  });
  return users.map((user) => ({
    id: user.id,
    name: user.name,
    role: user.role,
    createdAt: user.createdAt,
    access: user.tokens.map((token) => ({
      id: token.id,
      kind: token.oneTime ? 'sign-in-link' : token.label === sessionLabel ? 'browser-session' : 'api-token',
      label: token.label,
      createdAt: token.createdAt,
      lastUsedAt: token.lastUsedAt,
      expiresAt: token.expiresAt,
      current: token.id === principal.tokenId,
    })),
  }));
}
