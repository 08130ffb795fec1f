// The operations behind `earshot team add | token issue | token revoke`, shared by the CLI
// (when it opens the database itself) and the server's loopback admin endpoints (when the
// server holds the embedded data folder). Each writes an audit entry.
import { z } from 'zod';
import type { Database } from '../client.ts';
import { createTeam, findTeamBySlug, issueTeamToken, revokeToken, roles, type Role } from './accounts.ts';
import { writeWithAudit } from './audit.ts';
import { NotFoundError } from '../errors.ts';

export const teamAddInput = z.strictObject({
  slug: z.string().regex(/^[a-z0-9][a-z0-9-]{1,39}$/, 'must be 2-40 characters of a-z, 0-9 and "-", starting with a letter or digit'),
  name: z.string().trim().min(1, 'must not be empty').max(200, 'must be at most 200 characters'),
});
export const tokenIssueInput = z.strictObject({
  team: z.string().min(1, 'needs a team slug'),
  role: z.enum(roles as [Role, ...Role[]], { error: 'must be planner, installer or viewer' }),
  name: z.string().trim().min(1).max(200).optional(),
  oneTime: z.boolean().optional(),
  expiresInDays: z.number().int('must be a whole number').min(1, 'must be ≥ 1').max(3650, 'must be ≤ 3650').optional(),
});
export const tokenRevokeInput = z
  .strictObject({ token: z.string().min(1).optional(), id: z.string().min(1).optional() })
  .refine((value) => Boolean(value.token) !== Boolean(value.id), { message: 'give exactly one of --token or --id' });

const system = (teamId: string) => ({ teamId, userId: null, tokenId: null });

export async function adminTeamAdd(db: Database, input: z.infer<typeof teamAddInput>) {
  const team = await writeWithAudit(db, (tx) => createTeam(tx, input), (row) => ({ principal: system(row.id), action: 'create', entity: 'team', entityId: row.id, detail: { slug: row.slug, via: 'cli' } }));
  return { id: team.id, slug: team.slug, name: team.name };
}

export async function adminTokenIssue(db: Database, input: z.infer<typeof tokenIssueInput>) {
  if (!(await findTeamBySlug(db, input.team))) throw new NotFoundError(`team "${input.team}"`);
  const issued = await writeWithAudit(
    db,
    (tx) => issueTeamToken(tx, { teamSlug: input.team, role: input.role, userName: input.name, oneTime: input.oneTime, label: input.oneTime ? 'invitation link (admin CLI)' : 'issued by admin CLI', expiresAt: input.expiresInDays ? new Date(Date.now() + input.expiresInDays * 86_400_000) : null }),
    (row) => ({ principal: system(row.teamId), action: 'issue', entity: 'token', entityId: row.id, detail: { role: row.role, via: 'cli' } }),
  );
  return { token: issued.token, id: issued.id, team: input.team, role: issued.role, userId: issued.userId, oneTime: input.oneTime ?? false, expiresAt: issued.expiresAt };
}

export async function adminTokenRevoke(db: Database, input: z.infer<typeof tokenRevokeInput>) {
  let teamId = '';
  const result = await writeWithAudit(
    db,
    async (tx) => {
      const revoked = await revokeToken(tx, input);
      teamId = (await tx.prisma.apiToken.findUniqueOrThrow({ where: { id: revoked.id } })).teamId;
      return revoked;
    },
    (revoked) => ({ principal: system(teamId), action: 'revoke', entity: 'token', entityId: revoked.id, detail: { via: 'cli' } }),
  );
  return { id: result.id, revoked: true, alreadyRevoked: result.alreadyRevoked };
}
