// Team scoping: every plan-scoped route resolves the plan through the caller's team first.
// A plan of another team answers exactly like a plan that does not exist (404).
import type { Database } from '../db/client.ts';
import type { Principal } from '../db/repositories/accounts.ts';
import { findPlan, findPlanForRead, type PlanRow } from '../db/repositories/plans.ts';
import { ApiError } from './errors.ts';

export async function loadPlanForPrincipal(db: Database, principal: Principal, planId: string): Promise<PlanRow> {
  const plan = await findPlan(db, principal.teamId, planId);
  if (!plan) throw new ApiError(404, 'not_found', 'plan not found');
  return plan;
}

/** The same for read-only routes: the row is memoised per generation of the change feed (see findPlanForRead). */
export async function loadPlanForRead(db: Database, principal: Principal, planId: string): Promise<PlanRow> {
  const plan = await findPlanForRead(db, principal.teamId, planId);
  if (!plan) throw new ApiError(404, 'not_found', 'plan not found');
  return plan;
}
