// A transaction that fails only at COMMIT (a deferred constraint, a deferred constraint
// trigger) must raise on both engines: PostgreSQL reports it through @prisma/adapter-pg;
// pglite-prisma-adapter dropped it until server/db/pglite-commit.ts. Checked at the adapter
// (an interactive transaction) and through the API (a plan write answers an error, and
// neither the plan nor its audit entry is stored).
import { afterAll, beforeAll, beforeEach, expect, it } from 'vitest';
import request from 'supertest';
import { bearer, createTestApp, describeEngines, type TestApp } from '../helpers/test-app.ts';

describeEngines('a failed COMMIT is an error', (engine) => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp(engine);
    // Test-only: a deferred unique constraint, and a deferred constraint trigger on Plan that
    // refuses one name when the transaction commits.
    await t.db.raw.exec(`
      CREATE TABLE commit_probe (v INTEGER, CONSTRAINT commit_probe_v_key UNIQUE (v) DEFERRABLE INITIALLY DEFERRED);
      CREATE FUNCTION refuse_at_commit() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        IF NEW.name = 'refused at commit' THEN RAISE EXCEPTION 'refused at commit (test trigger)'; END IF;
        RETURN NEW;
      END $$;
      CREATE CONSTRAINT TRIGGER plan_refuse_at_commit AFTER INSERT ON "Plan" DEFERRABLE INITIALLY DEFERRED FOR EACH ROW EXECUTE FUNCTION refuse_at_commit();
    `);
  }, 180_000);
  afterAll(async () => t?.close());
  beforeEach(async () => {
    await t.reset();
    await t.db.raw.exec('DELETE FROM commit_probe');
  });

  it('an interactive transaction whose deferred unique constraint fails at COMMIT throws, and stores nothing', async () => {
    const attempt = t.db.prisma.$transaction(async (tx) => {
      await tx.$executeRawUnsafe('INSERT INTO commit_probe (v) VALUES (1), (1)'); // allowed until COMMIT
      return 'claimed success';
    });
    await expect(attempt).rejects.toThrow();
    expect(await t.db.raw.query('SELECT * FROM commit_probe')).toEqual([]);
    // The engine is still usable, and a good transaction commits.
    await t.db.prisma.$transaction(async (tx) => tx.$executeRawUnsafe('INSERT INTO commit_probe (v) VALUES (2)'));
    expect(await t.db.raw.query('SELECT v FROM commit_probe')).toEqual([{ v: 2 }]);
  });

  it('a rollback inside the transaction still rolls back', async () => {
    await expect(
      t.db.prisma.$transaction(async (tx) => {
        await tx.$executeRawUnsafe('INSERT INTO commit_probe (v) VALUES (3)');
        throw new Error('changed my mind');
      }),
    ).rejects.toThrow('changed my mind');
    expect(await t.db.raw.query('SELECT * FROM commit_probe')).toEqual([]);
  });

  it('POST /plans refused by a deferred trigger answers an error; no plan and no audit entry are stored', async () => {
    const http = request(t.app.server);
    const answer = await http.post('/api/v1/plans').set(bearer(t.tokens.planner)).send({ name: 'refused at commit' });
    expect(answer.status).toBeGreaterThanOrEqual(400);
    expect(answer.body.error).toMatchObject({ code: expect.any(String), message: expect.any(String) });
    expect(await t.db.prisma.plan.count()).toBe(0);
    expect(await t.db.prisma.auditEntry.count()).toBe(0);
    const fine = await http.post('/api/v1/plans').set(bearer(t.tokens.planner)).send({ name: 'kept' });
    expect(fine.status).toBe(201);
    expect(await t.db.prisma.plan.count()).toBe(1);
  });
});
