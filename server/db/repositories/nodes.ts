// Nodes of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';
import { recordAudit, type AuditInput } from './audit.ts';

export type NodeRow = Awaited<ReturnType<Database['prisma']['node']['findFirstOrThrow']>>;
export type NodeCreate = Omit<Prisma.NodeUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type NodePatch = Partial<NodeCreate>;

export async function createNode(db: Database, planId: string, data: NodeCreate): Promise<NodeRow> {
  return db.prisma.node.create({ data: { ...data, planId } });
}

export async function findNode(db: Database, planId: string, id: string): Promise<NodeRow | null> {
  return db.prisma.node.findFirst({ where: { id, planId } });
}

export async function listNodes(db: Database, planId: string, query: PageQuery, filter: Prisma.NodeWhereInput = {}) {
  const window = pageWindow(query);
  const where = { ...filter, planId };
  const [items, total] = await Promise.all([
    db.prisma.node.findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }),
    db.prisma.node.count({ where }),
  ]);
  return toPage(items, total, window);
}

export async function updateNode(db: Database, planId: string, id: string, version: number, patch: NodePatch): Promise<NodeRow> {
  return versionedUpdate('node', {
    attempt: () => db.prisma.node.updateMany({ where: { id, planId, version }, data: { ...patch, version: { increment: 1 } } }),
    current: () => findNode(db, planId, id),
  });
}

export async function deleteNode(db: Database, planId: string, id: string): Promise<void> {
  const { count } = await db.prisma.node.deleteMany({ where: { id, planId } });
  if (count === 0) throw new NotFoundError('node');
}

/** Creates many nodes in one transaction: all rows or none (and the audit entry with them). */
export async function createNodesAtomically(db: Database, planId: string, rows: NodeCreate[], audit?: AuditInput): Promise<NodeRow[]> {
  return db.prisma.$transaction(async (tx) => {
    const created: NodeRow[] = [];
    for (const row of rows) created.push(await tx.node.create({ data: { ...row, planId } }));
    if (audit) await recordAudit({ prisma: tx }, audit);
    return created;
  });
}
