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

/**
 * Runs a write and its audit entry in one interactive transaction: if either fails, neither
 * is kept. `write` gets a Database whose `prisma` is the transaction client, so the usual
 * repository functions can be used unchanged (they only use model delegates; `raw` is the
 * outer connection and must not be used inside). `audit` builds the entry from the result.
 */
/** Generous limits: a loaded machine (or scrypt hashing a token inside the write) can exceed Prisma's 5 s default. */
export const transactionLimits = { maxWait: 30_000, timeout: 60_000 };

export async function writeWithAudit<T>(
  db: Database,
  write: (tx: Database) => Promise<T>,
  audit: (result: T) => AuditInput,
): Promise<T> {
  return db.prisma.$transaction(async (tx) => {
    // The transaction client lacks only the client-level methods ($transaction, $connect…),
    // which repository functions never call.
    const inTransaction: Database = { ...db, prisma: tx as unknown as Database['prisma'], changes: undefined };
    const result = await write(inTransaction);
    await recordAudit({ prisma: tx }, audit(result));
    return result;
  }, transactionLimits);
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
