// The database's cost of writing one tile of Link rows in the three forms issue 20
// went through (`npm run bench -- link-writes`), side by side in one run on
// PostgreSQL: the same 1 500 real pairs (a synthetic fleet of our own, P.1812 over
// a 90 m DEM) written as
//   json, keyed:   one jsonb_to_recordset upsert of rows whose JSON result holds
//                  the path and a budget summary, into the table as it was until
//                  migration 20261207010000 (random UUID id, unique (node, gateway),
//                  plan and gateway indexes, three foreign keys); kept here as a
//                  scratch table "BenchLinkKeyed" with the same statement;
//   slim, keyed:   the path packed into bytes (server/planning/path-pack.ts),
//                  {pathHash} as the JSON, one unnest upsert, same scratch table;
//   slim, keyless: upsertLinkRows (server/db/repositories/links.ts) into "Link" as
//                  it is now (key (plan, node, gateway), no foreign keys, rows
//                  joined to their node and gateway in the plan).
// Reported per row: CPU of the PostgreSQL backends of the bench's own database
// (from /proc, so other databases' load on the shared server is not counted;
// summed over all writes of a form, as /proc counts in 10 ms ticks),
// statement wall time, and the stored row size. The forms take turns (order
// rotated each repetition), cold (rows deleted before each write) and warm (the
// same rows upserted again).
// Size: LINK_WRITES_ROWS (default 1 500, one default tile), LINK_WRITES_REPS (default 10).
import { readFileSync } from 'node:fs';
import { createTestApp, postgresAvailable } from '../helpers/test-app.ts';
import { createFleetFixture } from '../helpers/fleet-fixture.ts';
import { LinkEngine } from '../../server/jobs/link-engine.ts';
import { listPlanLinkRows, upsertLinkRows, type LinkRow } from '../../server/db/repositories/links.ts';
import { unpackPath } from '../../server/planning/path-pack.ts';
import type { Database } from '../../server/db/client.ts';

const CLOCK_TICKS = 100; // USER_HZ of Linux /proc/<pid>/stat (from memory: 100 on every common build)

function cpuSeconds(pid: number): number {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(fields[11]) + Number(fields[12])) / CLOCK_TICKS;
  } catch {
    return 0;
  }
}

async function backendCpu(db: Database): Promise<number> {
  const rows = await db.prisma.$queryRaw<Array<{ pid: number }>>`SELECT pid FROM pg_stat_activity WHERE datname = current_database()`;
  return rows.reduce((sum, row) => sum + cpuSeconds(Number(row.pid)), 0);
}

/** The Link table as it was before migration 20261207010000, as a scratch table of the bench's database. */
async function createKeyedTable(db: Database): Promise<void> {
  await db.prisma.$executeRawUnsafe(`CREATE TABLE "BenchLinkKeyed" ("id" TEXT PRIMARY KEY, "planId" TEXT NOT NULL REFERENCES "Plan"("id") ON DELETE CASCADE,
    "nodeId" TEXT NOT NULL REFERENCES "Node"("id") ON DELETE CASCADE, "gatewayId" TEXT NOT NULL REFERENCES "Gateway"("id") ON DELETE CASCADE,
    "inputHash" TEXT NOT NULL, "result" JSONB NOT NULL, "packed" BYTEA, "computedAt" TIMESTAMP(3) NOT NULL DEFAULT CURRENT_TIMESTAMP)`);
  await db.prisma.$executeRawUnsafe('CREATE UNIQUE INDEX "BenchLinkKeyed_nodeId_gatewayId_key" ON "BenchLinkKeyed"("nodeId", "gatewayId")');
  await db.prisma.$executeRawUnsafe('CREATE INDEX "BenchLinkKeyed_planId_idx" ON "BenchLinkKeyed"("planId")');
  await db.prisma.$executeRawUnsafe('CREATE INDEX "BenchLinkKeyed_gatewayId_idx" ON "BenchLinkKeyed"("gatewayId")');
}

/** json, keyed: the tiles' write before the slim rows (the whole result as JSON). */
async function writeJsonKeyed(db: Database, planId: string, rows: ReadonlyArray<{ nodeId: string; gatewayId: string; inputHash: string; result: unknown }>): Promise<void> {
  const json = JSON.stringify(rows.map((row) => ({ nodeId: row.nodeId, gatewayId: row.gatewayId, inputHash: row.inputHash, result: row.result })));
  await db.prisma.$executeRaw`INSERT INTO "BenchLinkKeyed" ("id", "planId", "nodeId", "gatewayId", "inputHash", "result", "computedAt")
      SELECT gen_random_uuid()::text, ${planId}, r."nodeId", r."gatewayId", r."inputHash", r."result", CURRENT_TIMESTAMP
      FROM jsonb_to_recordset(${json}::jsonb) AS r("nodeId" text, "gatewayId" text, "inputHash" text, "result" jsonb)
    ON CONFLICT ("nodeId", "gatewayId") DO UPDATE SET "planId" = EXCLUDED."planId", "inputHash" = EXCLUDED."inputHash", "result" = EXCLUDED."result", "computedAt" = EXCLUDED."computedAt"`;
}

/** slim, keyed: the slim rows' unnest upsert as it was before the keyless table. */
async function writeSlimKeyed(db: Database, planId: string, rows: readonly LinkRow[]): Promise<void> {
  const col = (pick: (row: LinkRow) => string) => rows.map(pick).join(',');
  await db.prisma.$executeRaw`INSERT INTO "BenchLinkKeyed" ("id", "planId", "nodeId", "gatewayId", "inputHash", "result", "packed", "computedAt")
      SELECT gen_random_uuid()::text, ${planId}, r.n, r.g, r.h, jsonb_build_object('pathHash', r.ph), decode(r.p, 'base64'), CURRENT_TIMESTAMP
      FROM unnest(string_to_array(${col((row) => row.nodeId)}, ','), string_to_array(${col((row) => row.gatewayId)}, ','), string_to_array(${col((row) => row.inputHash)}, ','),
                  string_to_array(${col((row) => (row.result as { pathHash: string }).pathHash)}, ','), string_to_array(${col((row) => Buffer.from(row.packed!).toString('base64'))}, ',')) AS r(n, g, h, ph, p)
    ON CONFLICT ("nodeId", "gatewayId") DO UPDATE SET "planId" = EXCLUDED."planId", "inputHash" = EXCLUDED."inputHash", "result" = EXCLUDED."result", "packed" = EXCLUDED."packed", "computedAt" = EXCLUDED."computedAt"`;
}

export async function run(): Promise<void> {
  if (!postgresAvailable) {
    console.log('link-writes: SKIPPED (needs PostgreSQL)');
    return;
  }
  const wanted = Number(process.env.LINK_WRITES_ROWS ?? 1500);
  const reps = Number(process.env.LINK_WRITES_REPS ?? 10);
  const t = await createTestApp('postgres', { env: { EARSHOT_WORKERS: '1' } });
  try {
    const gateways = 4;
    const fleet = await createFleetFixture(t.db, t.teamId, t.config.filesDir, { nodes: Math.ceil(wanted / gateways), gateways, sideKm: 12, cellM: 90, maxLinkRangeKm: 50, seed: 3 });
    const engine = new LinkEngine(t.db, t.config, { workers: 0 });
    const plan = await t.db.prisma.plan.findUniqueOrThrow({ where: { id: fleet.planId } });
    const ctx = await engine.planContext(plan);
    const outcomes = await engine.fleet(ctx);
    await engine.close();
    const after: LinkRow[] = (await listPlanLinkRows(t.db, fleet.planId)).slice(0, wanted);
    // The same rows in the form written before: path and budget summary in the JSON result.
    const links = new Map(outcomes.flatMap((o) => o.links.map((link) => [`${o.node.row.id}|${link.gatewayId}`, link] as const)));
    const before = after.map((row) => {
      const link = links.get(`${row.nodeId}|${row.gatewayId}`)!;
      const { gatewayId, distanceM, basicLossDb, rssiDbm, snrDb, marginDb, bestSf, usedSf, deliveryProbability, timeOnAirMs } = link;
      const summary = { gatewayId, distanceM, basicLossDb, rssiDbm, snrDb, marginDb, bestSf, usedSf, deliveryProbability, timeOnAirMs, legalOk: link.legal ? link.legal.withinLimit : null };
      return { nodeId: row.nodeId, gatewayId: row.gatewayId, inputHash: row.inputHash, result: { pathHash: (row.result as { pathHash: string }).pathHash, path: unpackPath(row.packed!), summary } };
    });
    console.log(`${after.length} Link rows of a synthetic fleet (P.1812, 90 m DEM); ${reps} rotating writes of each form, cold and warm; PostgreSQL backends of this database only`);
    const FORMS = ['json, keyed', 'slim, keyed', 'slim, keyless'] as const;
    type Form = (typeof FORMS)[number];
    const figures = Object.fromEntries(FORMS.map((form) => [form, { cold: [] as number[], warm: [] as number[], coldWall: [] as number[], warmWall: [] as number[], bytes: 0 }])) as Record<Form, { cold: number[]; warm: number[]; coldWall: number[]; warmWall: number[]; bytes: number }>;
    await createKeyedTable(t.db);
    const write = (form: Form): Promise<unknown> => (form === 'json, keyed' ? writeJsonKeyed(t.db, fleet.planId, before) : form === 'slim, keyed' ? writeSlimKeyed(t.db, fleet.planId, after) : upsertLinkRows(t.db.prisma, fleet.planId, after));
    const table = (form: Form) => (form === 'slim, keyless' ? '"Link"' : '"BenchLinkKeyed"');
    for (let rep = 0; rep < reps; rep++) {
      for (const form of FORMS.map((_f, k) => FORMS[(k + rep) % FORMS.length])) {
        await t.db.prisma.link.deleteMany({ where: { planId: fleet.planId } });
        await t.db.prisma.$executeRawUnsafe('DELETE FROM "BenchLinkKeyed"');
        await t.db.prisma.$executeRawUnsafe(`VACUUM ${table(form)}`);
        for (const phase of ['cold', 'warm'] as const) {
          const cpu0 = await backendCpu(t.db);
          const w0 = performance.now();
          await write(form);
          const wall = performance.now() - w0;
          const cpu = (await backendCpu(t.db)) - cpu0;
          figures[form][phase].push((cpu * 1000) / after.length);
          figures[form][phase === 'cold' ? 'coldWall' : 'warmWall'].push(wall / after.length);
        }
        const [size] = await t.db.prisma.$queryRawUnsafe<Array<{ bytes: number }>>(`SELECT avg(pg_column_size(l.*))::float8 AS bytes FROM ${table(form)} l WHERE "planId" = $1`, fleet.planId);
        figures[form].bytes = Number(size.bytes);
      }
    }
    const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];
    const mean = (values: number[]) => values.reduce((sum, v) => sum + v, 0) / values.length;
    console.log('\nform | row bytes | PG CPU ms/row cold | PG CPU ms/row warm | wall ms/row cold | wall ms/row warm   (CPU: over all writes; wall: medians)');
    for (const form of FORMS) {
      const f = figures[form];
      console.log(`${form} | ${f.bytes.toFixed(0)} | ${mean(f.cold).toFixed(4)} | ${mean(f.warm).toFixed(4)} | ${median(f.coldWall).toFixed(4)} | ${median(f.warmWall).toFixed(4)}`);
    }
    const now = figures['slim, keyless'];
    for (const form of ['json, keyed', 'slim, keyed'] as const) {
      const f = figures[form];
      console.log(
        `slim, keyless vs ${form}: rows ${(f.bytes / now.bytes).toFixed(2)}× smaller; PG CPU ${(mean(f.cold) / mean(now.cold)).toFixed(2)}× less cold, ${(mean(f.warm) / mean(now.warm)).toFixed(2)}× less warm; ` +
          `wall ${(median(f.coldWall) / median(now.coldWall)).toFixed(2)}× / ${(median(f.warmWall) / median(now.warmWall)).toFixed(2)}× faster`,
      );
    }
    console.log(`load average: ${readFileSync('/proc/loadavg', 'utf8').split(' ').slice(0, 3).join(' ')}`);
  } finally {
    await t.close();
  }
}
