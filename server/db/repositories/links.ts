// Cached link predictions (model Link). A row holds the result for one
// node–gateway pair and the hash of every input it was computed from; a
// lookup with a different hash is a miss, so any change to the node, the
// gateway, the kit, the plan's settings or the terrain invalidates it.
import type { Database } from '../client.ts';
import type { Prisma } from '../generated/client.ts';

export interface CachedLink<T> {
  nodeId: string;
  gatewayId: string;
  inputHash: string;
  result: T;
}

/** Cached results for a set of pairs of one plan whose hash still matches. */
export async function findFreshLinks<T>(
  db: Database,
  planId: string,
  wanted: ReadonlyArray<{ nodeId: string; gatewayId: string; inputHash: string }>,
): Promise<Map<string, T>> {
  const fresh = new Map<string, T>();
  if (wanted.length === 0) return fresh;
  const hashes = [...new Set(wanted.map((pair) => pair.inputHash))];
  const rows = await db.prisma.link.findMany({
    where: { planId, inputHash: { in: hashes } },
    select: { nodeId: true, gatewayId: true, inputHash: true, result: true },
  });
  const wantedHash = new Map(wanted.map((pair) => [`${pair.nodeId}|${pair.gatewayId}`, pair.inputHash]));
  for (const row of rows) {
    const key = `${row.nodeId}|${row.gatewayId}`;
    if (wantedHash.get(key) === row.inputHash) fresh.set(key, row.result as T);
  }
  return fresh;
}

/** Stores (or replaces) the cached result of each pair. */
export async function saveLinks<T>(db: Database, planId: string, links: ReadonlyArray<CachedLink<T>>): Promise<void> {
  if (links.length === 0) return;
  // One statement per pair in a transaction: an upsert keyed on (nodeId, gatewayId).
  await db.prisma.$transaction(
    links.map((link) =>
      db.prisma.link.upsert({
        where: { nodeId_gatewayId: { nodeId: link.nodeId, gatewayId: link.gatewayId } },
        create: { planId, nodeId: link.nodeId, gatewayId: link.gatewayId, inputHash: link.inputHash, result: link.result as Prisma.InputJsonValue },
        update: { inputHash: link.inputHash, result: link.result as Prisma.InputJsonValue, computedAt: new Date() },
      }),
    ),
  );
}

/** Drops every cached link of a plan (e.g. after a terrain change, to free space). */
export async function clearPlanLinks(db: Database, planId: string): Promise<number> {
  const { count } = await db.prisma.link.deleteMany({ where: { planId } });
  return count;
}
