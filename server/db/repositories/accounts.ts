// Teams, users and tokens. Tokens look like `esk_<lookupId>_<secret>`: the lookupId finds
// the row, only a scrypt hash of the whole token is stored, and it is compared in constant
// time. Every check that is not answered from the cache costs one row lookup and one scrypt,
// whether the lookupId exists or not (an unknown one is compared against a dummy hash), so the
// time does not tell which lookupIds exist.
//
// Verified tokens are cached for a short while (tokenCacheTtlMs) under an HMAC of the token
// with a per-process random key (the cache never holds the token or a plain hash of it). A
// revocation in this process drops the entry at once; other processes (API instances, the CLI
// through the database) are seen within tokenRecheckMs: cached entries are re-read from the
// database in one query at most that often, and revoked, expired or deleted ones are dropped.
import { createHmac, randomBytes, scrypt as scryptCallback, timingSafeEqual } from 'node:crypto';
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

/** How long a verified token is answered from memory. */
export const tokenCacheTtlMs = 30_000;
/** How stale the cache may be about revocations made by other processes. */
export const tokenRecheckMs = 1_000;
const tokenCacheMax = 10_000;
const cacheKeySecret = randomBytes(32);

interface CachedToken {
  principal: Principal;
  lookupId: string;
  tokenExpiresAtMs: number | null;
  cachedUntilMs: number;
  lastUsedWriteMs: number;
  owner: Database;
}
const verifiedTokens = new Map<string, CachedToken>(); // HMAC(token) -> what the row said
const recheck = new WeakMap<Database, { atMs: number; running: Promise<void> | null }>();

function cacheKey(token: string): string {
  return createHmac('sha256', cacheKeySecret).update(token).digest('base64url');
}

function forgetLookupId(lookupId: string): void {
  for (const [key, entry] of verifiedTokens) if (entry.lookupId === lookupId) verifiedTokens.delete(key);
}

/** Re-reads every cached token of `db` (one query), at most once per tokenRecheckMs; concurrent callers share it. */
async function recheckCachedTokens(db: Database): Promise<void> {
  let state = recheck.get(db);
  if (!state) {
    state = { atMs: 0, running: null };
    recheck.set(db, state);
  }
  if (state.running) return state.running;
  if (Date.now() - state.atMs < tokenRecheckMs) return;
  const current = state;
  current.running = (async () => {
    const startedMs = Date.now();
    const lookupIds = [...verifiedTokens.values()].filter((entry) => entry.owner === db).map((entry) => entry.lookupId);
    if (lookupIds.length > 0) {
      const rows = await db.prisma.apiToken.findMany({ where: { lookupId: { in: lookupIds } }, select: { lookupId: true, revokedAt: true, expiresAt: true, user: { select: { role: true } } } });
      const live = new Map(rows.filter((row) => !row.revokedAt && !(row.expiresAt && row.expiresAt.getTime() <= Date.now())).map((row) => [row.lookupId, row.user.role]));
      for (const [key, entry] of verifiedTokens) {
        if (entry.owner !== db) continue;
        const role = live.get(entry.lookupId);
        if (role === undefined) verifiedTokens.delete(key);
        else entry.principal = { ...entry.principal, role }; // a role change is seen as quickly as a revocation
      }
    }
    current.atMs = startedMs;
  })().finally(() => {
    current.running = null;
  });
  return current.running;
}

/** Whether `token` would be answered from the cache (no scrypt): the throttle does not count those. */
export function isTokenCached(db: Database, token: string): boolean {
  const hit = verifiedTokens.get(cacheKey(token));
  return hit !== undefined && hit.owner === db && hit.cachedUntilMs > Date.now() && !(hit.tokenExpiresAtMs !== null && hit.tokenExpiresAtMs <= Date.now());
}

/** Drops every cached verification (tests; an operator's "log everyone out"). */
export function clearTokenCache(): void {
  verifiedTokens.clear();
}

// A well-formed hash of a random token nobody holds: unknown lookupIds are compared against it,
// so they cost the same scrypt as a wrong secret for a known one.
let dummyHash: Promise<string> | null = null;
const dummyHashOnce = () => (dummyHash ??= hashToken(`esk_${randomBytes(8).toString('hex')}_${randomBytes(32).toString('base64url')}`));

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
  const key = cacheKey(token);
  if (!options.consumeOneTime) {
    const hit = verifiedTokens.get(key);
    if (hit && hit.owner === db && hit.cachedUntilMs > Date.now() && !(hit.tokenExpiresAtMs !== null && hit.tokenExpiresAtMs <= Date.now())) {
      await recheckCachedTokens(db);
      const still = verifiedTokens.get(key);
      if (still) {
        if (Date.now() - still.lastUsedWriteMs > 60_000) {
          still.lastUsedWriteMs = Date.now();
          // Best effort, off the request path: lastUsedAt is informational.
          void db.prisma.apiToken.updateMany({ where: { lookupId: still.lookupId }, data: { lastUsedAt: new Date() } }).catch(() => undefined);
        }
        return { ...still.principal, oneTime: false };
      }
      return null;
    }
  }
  const row = await db.prisma.apiToken.findUnique({ where: { lookupId: match[1] }, include: { user: true } });
  // One scrypt on every path: the answer takes as long for an unknown lookupId as for a wrong secret.
  const matches = await tokenMatches(token, row?.hash ?? (await dummyHashOnce()));
  if (!row || !matches) return null;
  if (row.revokedAt || (row.expiresAt && row.expiresAt.getTime() <= Date.now())) return null;
  if (row.oneTime && !options.consumeOneTime) return null; // one-time sign-in tokens only work at /signin
  if (!row.oneTime) {
    if (verifiedTokens.size >= tokenCacheMax) verifiedTokens.delete(verifiedTokens.keys().next().value as string);
    verifiedTokens.set(key, {
      principal: { userId: row.userId, teamId: row.teamId, role: row.user.role, tokenId: row.id },
      lookupId: row.lookupId,
      tokenExpiresAtMs: row.expiresAt ? row.expiresAt.getTime() : null,
      cachedUntilMs: Date.now() + tokenCacheTtlMs,
      lastUsedWriteMs: Date.now(),
      owner: db,
    });
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
  forgetLookupId(row.lookupId);
  if (row.revokedAt) return { id: row.id, alreadyRevoked: true };
  await db.prisma.apiToken.update({ where: { id: row.id }, data: { revokedAt: new Date() } });
  return { id: row.id, alreadyRevoked: false };
}
