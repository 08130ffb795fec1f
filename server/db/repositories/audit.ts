// The audit log: who did what, when. Every write path calls recordAudit.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { pageWindow, toPage, type Page, type PageQuery } from './pagination.ts';

export interface AuditPrincipal {
  userId: string | null;
  teamId: string;
  tokenId?: string | null;
}

export interface AuditInput {
  principal: AuditPrincipal;
  action: string;
  entity: string;
  entityId: string;
  detail?: Record<string, unknown>;
}

/** A Prisma client or a transaction client: audit rows can join a transaction. */
type Writer = Pick<Database['prisma'], 'auditEntry'>;

export async function recordAudit(db: Database | { prisma: Writer }, input: AuditInput): Promise<void> {
  await db.prisma.auditEntry.create({
    data: {
      teamId: input.principal.teamId,
      userId: input.principal.userId,
      tokenId: input.principal.tokenId ?? null,
      action: input.action,
      entity: input.entity,
      entityId: input.entityId,
      detail: (input.detail ?? {}) as Prisma.InputJsonValue,
    },
  });
}

export interface AuditFilter {
  entity?: string;
  entityId?: string;
  userId?: string;
}

export async function listAudit(
  db: Database,
  teamId: string,
  filter: AuditFilter,
  query: PageQuery,
): Promise<Page<Awaited<ReturnType<Database['prisma']['auditEntry']['findFirstOrThrow']>>>> {
  const where = { teamId, ...filter };
  const window = pageWindow(query);
  const [items, total] = await Promise.all([
    db.prisma.auditEntry.findMany({ where, orderBy: [{ at: 'desc' }, { id: 'desc' }], ...window }),
    db.prisma.auditEntry.count({ where }),
  ]);
  return toPage(items, total, window);
}
