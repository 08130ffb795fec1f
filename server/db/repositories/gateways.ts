// Gateways of a plan. Callers resolve the plan through the team scope first
// (server/api/scope.ts), so every query here is scoped by planId (plan-scoped.ts).
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';
import { planScopedRepository } from './plan-scoped.ts';

export type GatewayRow = Awaited<ReturnType<Database['prisma']['gateway']['findFirstOrThrow']>>;
export type GatewayCreate = Omit<Prisma.GatewayUncheckedCreateInput, 'id' | 'planId' | 'version' | 'createdAt' | 'updatedAt'>;
export type GatewayPatch = Partial<GatewayCreate>;

const gateways = planScopedRepository<GatewayRow, GatewayCreate, Prisma.GatewayWhereInput>('gateway', (db) => db.prisma.gateway);

export const createGateway = gateways.create;
export const findGateway = gateways.find;
/** The plan's gateways, oldest first; `filter` narrows them further. */
export const listGateways = gateways.list;
export const updateGateway = gateways.update;
export const deleteGateway = gateways.remove;
