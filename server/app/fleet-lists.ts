// Lists for the command line: `earshot plans` and `earshot nodes --plan ID` (the ids other
// commands such as `link` and `recommend` need, beside the names people know). Admin scope:
// the CLI runs on the server machine with access to the data folder, so it sees every team;
// `team` narrows the list.
import { z } from 'zod';
import type { Database } from '../db/client.ts';
import { NotFoundError } from '../db/errors.ts';

export const plansListInput = z.strictObject({ team: z.string().min(1).max(100).optional() });
export const nodesListInput = z.strictObject({ plan: z.string().min(1).max(100) });

export interface PlanListItem {
  id: string;
  name: string;
  team: string;
  nodes: number;
  gateways: number;
  updatedAt: Date;
}

export async function listPlansForAdmin(db: Database, input: z.infer<typeof plansListInput>): Promise<{ items: PlanListItem[] }> {
  const plans = await db.prisma.plan.findMany({
    where: input.team ? { team: { slug: input.team } } : {},
    include: { team: true, _count: { select: { nodes: true, gateways: true } } },
    orderBy: [{ name: 'asc' }, { id: 'asc' }],
  });
  if (input.team && plans.length === 0 && !(await db.prisma.team.findUnique({ where: { slug: input.team } }))) throw new NotFoundError(`team "${input.team}"`);
  return { items: plans.map((p) => ({ id: p.id, name: p.name, team: p.team.slug, nodes: p._count.nodes, gateways: p._count.gateways, updatedAt: p.updatedAt })) };
}

export interface NodeListItem {
  id: string;
  name: string;
  lat: number;
  lon: number;
  installStatus: string;
}

export async function listNodesForAdmin(db: Database, input: z.infer<typeof nodesListInput>): Promise<{ plan: { id: string; name: string }; items: NodeListItem[]; gateways: Array<{ id: string; name: string }> }> {
  const plan = await db.prisma.plan.findUnique({ where: { id: input.plan } });
  if (!plan) throw new NotFoundError(`plan "${input.plan}"`);
  const [nodes, gateways] = await Promise.all([
    db.prisma.node.findMany({ where: { planId: plan.id }, orderBy: [{ name: 'asc' }, { id: 'asc' }] }),
    db.prisma.gateway.findMany({ where: { planId: plan.id }, orderBy: [{ name: 'asc' }, { id: 'asc' }] }),
  ]);
  return {
    plan: { id: plan.id, name: plan.name },
    items: nodes.map((n) => ({ id: n.id, name: n.name, lat: n.lat, lon: n.lon, installStatus: String(n.installStatus).replace('_', '-') })),
    gateways: gateways.map((g) => ({ id: g.id, name: g.name })),
  };
}
