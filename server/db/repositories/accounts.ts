// Teams, users and tokens. Tokens look like `esk_<lookupId>_<secret>`: the lookupId finds
// the row, only a scrypt hash of the whole token is stored, and it is compared in constant
// time. A successful check is remembered per process (sha256 of the token) so requests
// do not pay the scrypt cost again, while revocation and expiry are read from the row
// every time.
import { createHash, randomBytes, scrypt as scryptCallback, timingSafeEqual } from 'node:crypto';
import { promisify } from 'node:util';
import type { Database } from '../client.ts';
import type { UserRole } from '../generated/client.ts';
import { ConflictError, NotFoundError } from '../errors.ts';

const scrypt = promisify(scryptCallback) as (password: string, salt: Buffer, keylen: number, options: object) => Promise<Buffer>;

export type Role = UserRole;
export const roles: readonly Role[] = ['planner', 'installer', 'viewer'];

export interface Principal {
  userId: string;
  teamId: string;
  role: Role;
  tokenId: string;
}

// scrypt cost parameters (RFC 7914 §2): N=2^15, r=8, p=1 -> 32 MiB, tens of ms per check.
const scryptN = 32768;
const scryptR = 8;
const scryptP = 1;
const keyLength = 32;
const scryptOptions = { N: scryptN, r: scryptR, p: scryptP, maxmem: 64 * 1024 * 1024 };

async function hashToken(token: string): Promise<string> {
  const salt = randomBytes(16);
  const key = await scrypt(token, salt, keyLength, scryptOptions);
  return `scrypt$${scryptN}$${scryptR}$${scryptP}$${salt.toString('base64url')}$${key.toString('base64url')}`;
}

async function tokenMatches(token: string, stored: string): Promise<boolean> {
  const parts = stored.split('$');
  if (parts.length !== 6 || parts[0] !== 'scrypt') return false;
  const [, n, r, p, saltText, keyText] = parts;
  const expected = Buffer.from(keyText, 'base64url');
  const key = await scrypt(token, Buffer.from(saltText, 'base64url'), expected.length, {
    N: Number(n),
    r: Number(r),
    p: Number(p),
    maxmem: 64 * 1024 * 1024,
  });
  return key.length === expected.length && timingSafeEqual(key, expected);
}

const tokenPattern = /^esk_([0-9a-f]{16})_([A-Za-z0-9_-]{43})$/;
const verifiedCache = new Map<string, string>(); // lookupId -> sha256(token) known to match the stored hash

function sha256(text: string): Buffer {
  return createHash('sha256').update(text).digest();
}

export async function createTeam(db: Database, input: { slug: string; name: string }) {
  const existing = await db.prisma.team.findUnique({ where: { slug: input.slug } });
  if (existing) throw new ConflictError(`a team with slug "${input.slug}" already exists`);
  return db.prisma.team.create({ data: input });
}

export async function findTeamBySlug(db: Database, slug: string) {
  return db.prisma.team.findUnique({ where: { slug } });
}

export async function createUser(db: Database, input: { teamId: string; name: string; role: Role; email?: string | null }) {
  return db.prisma.user.create({ data: { teamId: input.teamId, name: input.name, role: input.role, email: input.email ?? null } });
}

export interface IssuedToken {
  token: string;
  id: string;
  userId: string;
  teamId: string;
  role: Role;
  expiresAt: Date | null;
}

/** Issues a token for an existing user. Only its hash is stored; the token is returned once. */
export async function issueToken(
  db: Database,
  input: { userId: string; label?: string; oneTime?: boolean; expiresAt?: Date | null },
): Promise<IssuedToken> {
  const user = await db.prisma.user.findUnique({ where: { id: input.userId } });
  if (!user) throw new NotFoundError('user');
  const lookupId = randomBytes(8).toString('hex');
  const token = `esk_${lookupId}_${randomBytes(32).toString('base64url')}`;
  const row = await db.prisma.apiToken.create({
    data: {
      teamId: user.teamId,
      userId: user.id,
      lookupId,
      hash: await hashToken(token),
      label: input.label ?? '',
      oneTime: input.oneTime ?? false,
      expiresAt: input.expiresAt ?? null,
    },
  });
  return { token, id: row.id, userId: user.id, teamId: user.teamId, role: user.role, expiresAt: row.expiresAt };
}

/** Issues a token for a team and role: reuses the team's first user of that role, or creates one. */
export async function issueTeamToken(
  db: Database,
  input: { teamSlug: string; role: Role; label?: string; oneTime?: boolean; expiresAt?: Date | null; userName?: string },
): Promise<IssuedToken> {
  const team = await findTeamBySlug(db, input.teamSlug);
  if (!team) throw new NotFoundError(`team "${input.teamSlug}"`);
  const user =
    (input.userName
      ? null
      : await db.prisma.user.findFirst({ where: { teamId: team.id, role: input.role }, orderBy: { createdAt: 'asc' } })) ??
    (await createUser(db, { teamId: team.id, name: input.userName ?? `${team.slug} ${input.role}`, role: input.role }));
  return issueToken(db, { userId: user.id, label: input.label, oneTime: input.oneTime, expiresAt: input.expiresAt });
}

/** Checks a presented token; returns the principal or null (unknown, wrong, revoked, expired). */
export async function verifyToken(db: Database, token: string, options: { consumeOneTime?: boolean } = {}): Promise<(Principal & { oneTime: boolean }) | null> {
  const match = tokenPattern.exec(token);
  if (!match) return null;
  const row = await db.prisma.apiToken.findUnique({ where: { lookupId: match[1] }, include: { user: true } });
  if (!row || row.revokedAt || (row.expiresAt && row.expiresAt.getTime() <= Date.now())) return null;
  if (row.oneTime && !options.consumeOneTime) return null; // one-time sign-in tokens only work at /signin
  const digest = sha256(token);
  const cached = verifiedCache.get(row.lookupId);
  const cachedOk = cached !== undefined && timingSafeEqual(Buffer.from(cached, 'hex'), digest);
  if (!cachedOk) {
    if (!(await tokenMatches(token, row.hash))) return null;
    verifiedCache.set(row.lookupId, digest.toString('hex'));
  }
  if (row.oneTime) {
    // Consume atomically: only the first of two racing sign-ins wins.
    const consumed = await db.prisma.apiToken.updateMany({ where: { id: row.id, revokedAt: null }, data: { revokedAt: new Date(), lastUsedAt: new Date() } });
    if (consumed.count !== 1) return null;
  } else if (!row.lastUsedAt || Date.now() - row.lastUsedAt.getTime() > 60_000) {
    await db.prisma.apiToken.update({ where: { id: row.id }, data: { lastUsedAt: new Date() } });
  }
  return { userId: row.userId, teamId: row.teamId, role: row.user.role, tokenId: row.id, oneTime: row.oneTime };
}

/** Revokes by token text or by id; returns the revoked row's id. */
export async function revokeToken(db: Database, by: { token?: string; id?: string }): Promise<{ id: string; alreadyRevoked: boolean }> {
  let row = null;
  if (by.id) row = await db.prisma.apiToken.findUnique({ where: { id: by.id } });
  else if (by.token) {
    const match = tokenPattern.exec(by.token);
    if (match) {
      const candidate = await db.prisma.apiToken.findUnique({ where: { lookupId: match[1] } });
      if (candidate && (await tokenMatches(by.token, candidate.hash))) row = candidate;
    }
  }
  if (!row) throw new NotFoundError('token');
  verifiedCache.delete(row.lookupId);
  if (row.revokedAt) return { id: row.id, alreadyRevoked: true };
  await db.prisma.apiToken.update({ where: { id: row.id }, data: { revokedAt: new Date() } });
  return { id: row.id, alreadyRevoked: false };
}
