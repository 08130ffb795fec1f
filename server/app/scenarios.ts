// Scenarios: copy a plan (to try "one more gateway" without touching today's
// plan) and compare two plans of one team node by node. The comparison is two
// planFigures() side by side, so its counts equal each plan's fleet table.
import type { Database } from '../db/client.ts';
import type { AuditPrincipal } from '../db/repositories/audit.ts';
import type { PlanRow } from '../db/repositories/plans.ts';
import { copyPlanWithAudit, type PlanCopyResult } from '../db/repositories/scenarios.ts';
import type { LinkEngine } from '../jobs/link-engine.ts';
import type { LinkStatus } from '../planning/status.ts';
import { planFigures, type NodeFigure, type PlanFigures, type Redundancy } from './plan-figures.ts';

/** Copies a plan of the principal's team; null when the plan is not the team's. */
export async function copyPlan(db: Database, principal: AuditPrincipal, planId: string, name: string): Promise<PlanCopyResult | null> {
  return copyPlanWithAudit(db, principal.teamId, planId, name, (result) => ({
    principal,
    action: 'copy',
    entity: 'plan',
    entityId: result.plan.id,
    detail: { from: planId, name, ...result.counts },
  }));
}

export interface ScenarioSide {
  planId: string;
  name: string;
  counts: Record<LinkStatus, number>;
  nodes: number;
  gateways: number;
  sites: number;
  redundancy: Redundancy;
  /** Kit (antennas, feedlines, masts) of every node and gateway, USD. */
  kitCostUsd: number;
  /** Bill of materials total (kit, connectors, gateway radios, site works), USD. */
  costUsd: number;
  servedShare: number;
  risks: { unserved: number; singleGateway: number; illegal: number; overDutyCycle: number };
}

export interface NodeComparison {
  id: string;
  name: string;
  idA: string | null;
  idB: string | null;
  statusA: LinkStatus | null;
  statusB: LinkStatus | null;
  marginA: number | null;
  marginB: number | null;
  /** marginB − marginA, dB (null when either is missing). */
  marginChangeDb: number | null;
}

export interface PlanComparison {
  a: ScenarioSide;
  b: ScenarioSide;
  nodes: NodeComparison[];
  /** How nodes were paired: by copy lineage (originId), else by unique name. */
  matching: string;
}

function side(f: PlanFigures): ScenarioSide {
  return {
    planId: f.plan.id,
    name: f.plan.name,
    counts: f.counts,
    nodes: f.nodes.length,
    gateways: f.gateways.length,
    sites: f.sites.length,
    redundancy: f.redundancy,
    kitCostUsd: f.bom.kitCostUsd,
    costUsd: f.bom.totalUsd,
    servedShare: f.nodes.length ? f.counts.served / f.nodes.length : 0,
    risks: { unserved: f.risks.unserved.length, singleGateway: f.risks.singleGateway.length, illegal: f.risks.illegal.length, overDutyCycle: f.risks.overDutyCycle.length },
  };
}

/**
 * Pairs the nodes of two plans: same node, or one copied from the other, or both
 * copied from the same node (originId); a node without such a partner pairs with
 * the other plan's node of the same name when that name is unique on both sides.
 */
export function pairNodes(a: readonly NodeFigure[], b: readonly NodeFigure[]): NodeComparison[] {
  const lineage = (n: NodeFigure) => n.originId ?? n.id;
  const bByLineage = new Map<string, NodeFigure>();
  for (const n of b) if (!bByLineage.has(lineage(n))) bByLineage.set(lineage(n), n);
  const used = new Set<string>();
  const pairs: Array<[NodeFigure | null, NodeFigure | null]> = [];
  const unmatchedA: NodeFigure[] = [];
  for (const n of a) {
    const partner = bByLineage.get(lineage(n));
    if (partner && !used.has(partner.id)) {
      used.add(partner.id);
      pairs.push([n, partner]);
    } else unmatchedA.push(n);
  }
  const restB = b.filter((n) => !used.has(n.id));
  const count = (list: readonly NodeFigure[]) => {
    const m = new Map<string, number>();
    for (const n of list) m.set(n.name, (m.get(n.name) ?? 0) + 1);
    return m;
  };
  const namesA = count(unmatchedA);
  const namesB = count(restB);
  const bByName = new Map(restB.map((n) => [n.name, n]));
  for (const n of unmatchedA) {
    const partner = namesA.get(n.name) === 1 && namesB.get(n.name) === 1 ? bByName.get(n.name) : undefined;
    if (partner) {
      used.add(partner.id);
      pairs.push([n, partner]);
    } else pairs.push([n, null]);
  }
  for (const n of restB) if (!used.has(n.id)) pairs.push([null, n]);
  return pairs.map(([x, y]) => ({
    id: (x ?? y)!.id,
    name: (x ?? y)!.name,
    idA: x?.id ?? null,
    idB: y?.id ?? null,
    statusA: x?.status ?? null,
    statusB: y?.status ?? null,
    marginA: x?.bestMarginDb ?? null,
    marginB: y?.bestMarginDb ?? null,
    marginChangeDb: x && y && x.bestMarginDb !== null && y.bestMarginDb !== null ? Math.round((y.bestMarginDb - x.bestMarginDb) * 100) / 100 : null,
  }));
}

/** Two plans side by side (the caller has checked both belong to the team). */
export async function comparePlans(engine: LinkEngine, a: PlanRow, b: PlanRow): Promise<PlanComparison> {
  const figuresA = await planFigures(engine, a);
  const figuresB = await planFigures(engine, b);
  return { a: side(figuresA), b: side(figuresB), nodes: pairNodes(figuresA.nodes, figuresB.nodes), matching: 'copy lineage (originId), else the same unique name' };
}
