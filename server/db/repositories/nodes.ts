// Nodes of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId (plan-scoped.ts).
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { planScopedRepository } from './plan-scoped.ts';
import { recordAudit, type AuditInput } from './audit.ts';

export type NodeRow = Awaited<ReturnType<Database['prisma']['node']['findFirstOrThrow']>>;
export type NodeCreate = Omit<Prisma.NodeUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type NodePatch = Partial<NodeCreate>;

const nodes = planScopedRepository<NodeRow, NodeCreate, Prisma.NodeWhereInput>('node', (db) => db.prisma.node);

export const createNode = nodes.create;
export const findNode = nodes.find;
/** The plan's nodes, oldest first; `filter` narrows them further. */
export const listNodes = nodes.list;
export const updateNode = nodes.update;
export const deleteNode = nodes.remove;

/** Creates many nodes in one transaction: all rows or none (and the audit entry with them). */
export async function createNodesAtomically(db: Database, planId: string, rows: NodeCreate[], audit?: AuditInput): Promise<NodeRow[]> {
  return db.prisma.$transaction(async (tx) => {
    const created: NodeRow[] = [];
    for (const row of rows) created.push(await tx.node.create({ data: { ...row, planId } }));
    if (audit) await recordAudit({ prisma: tx }, audit);
    return created;
  });
}
