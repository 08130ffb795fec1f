// The five functions every plan-scoped model (sites, gateways, nodes) has: create, find, list
// (oldest first, paged), versioned update and delete, each with planId in its where clause.
// Callers resolve the plan through the team scope first (server/api/scope.ts).
import type { Database } from '../database.ts';
import { NotFoundError } from '../errors.ts';
import { pageWindow, toPage, type Page, type PageQuery } from './pagination.ts';
import { versionedUpdate } from './versioned.ts';

/** The part of a Prisma model delegate these functions use (Prisma's own is generic over its arguments). */
export interface PlanScopedDelegate<Row, Create, Where> {
  create(args: { data: Create & { planId: string } }): PromiseLike<Row>;
  findFirst(args: { where: { id: string; planId: string } }): PromiseLike<Row | null>;
  findMany(args: { where: Where; orderBy: Array<{ createdAt: 'asc' } | { id: 'asc' }>; skip: number; take: number }): PromiseLike<Row[]>;
  count(args: { where: Where }): PromiseLike<number>;
  updateMany(args: { where: { id: string; planId: string; version: number }; data: Partial<Create> & { version: { increment: 1 } } }): PromiseLike<{ count: number }>;
  deleteMany(args: { where: { id: string; planId: string } }): PromiseLike<{ count: number }>;
}

export interface PlanScopedRepository<Row extends { version: number }, Create, Where> {
  create(db: Database, planId: string, data: Create): Promise<Row>;
  find(db: Database, planId: string, id: string): Promise<Row | null>;
  list(db: Database, planId: string, query: PageQuery, filter?: Where): Promise<Page<Row>>;
  update(db: Database, planId: string, id: string, version: number, patch: Partial<Create>): Promise<Row>;
  remove(db: Database, planId: string, id: string): Promise<void>;
}

/** `entity` names the model in NotFound / version-conflict errors ('site', 'gateway', 'node'). */
export function planScopedRepository<Row extends { version: number }, Create, Where extends object>(
  entity: string,
  model: (db: Database) => PlanScopedDelegate<Row, Create, Where>,
): PlanScopedRepository<Row, Create, Where> {
  const find = async (db: Database, planId: string, id: string) => model(db).findFirst({ where: { id, planId } });
  return {
    create: async (db, planId, data) => model(db).create({ data: { ...data, planId } }),
    find,
    async list(db, planId, query, filter = {} as Where) {
      const window = pageWindow(query);
      const where = { ...filter, planId } as Where;
      const [items, total] = await Promise.all([model(db).findMany({ where, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], ...window }), model(db).count({ where })]);
      return toPage(items, total, window);
    },
    update: (db, planId, id, version, patch) =>
      versionedUpdate(entity, {
        attempt: async () => model(db).updateMany({ where: { id, planId, version }, data: { ...patch, version: { increment: 1 } } }),
        current: () => find(db, planId, id),
      }),
    async remove(db, planId, id) {
      const { count } = await model(db).deleteMany({ where: { id, planId } });
      if (count === 0) throw new NotFoundError(entity);
    },
  };
}
