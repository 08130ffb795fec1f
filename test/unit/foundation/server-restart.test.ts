// The server on a real data folder: first start seeds the demo and prints a working
// one-time sign-in link; the admin CLI reaches the running server instead of opening the
// folder twice; a restart on the same folder loses nothing; with the server stopped the CLI
// opens the folder itself; a folder held by another live process is refused.
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, describe, expect, it } from 'vitest';
import { runAdminOperation } from '../../../server/cli/admin.ts';
import { loadConfig, type Config } from '../../../server/config.ts';
import { DatabaseBusyError, dataFolderLockPath, openDatabase } from '../../../server/db/client.ts';
import { adminFilePath, startServer, type RunningServer } from '../../../server/main.ts';

const dataDir = mkdtempSync(join(tmpdir(), 'earshot-restart-'));
const env = { EARSHOT_DATA_DIR: dataDir };
const config: Config = { ...loadConfig(env), port: 0, databaseUrl: undefined };
let server: RunningServer | null = null;

afterAll(async () => {
  await server?.stop().catch(() => {});
  rmSync(dataDir, { recursive: true, force: true });
});

// PGlite folder start-up and tsx child processes take tens of seconds on a loaded 2-core machine.
const SLOW_MS = 300_000;

describe('server start, admin CLI and restart on one data folder', () => {
  let plannerToken = '';
  let planId = '';

  it('first start on an empty folder seeds the demo and prints a one-time sign-in URL that works', async () => {
    server = await startServer(config, { logger: false });
    console.log(`start on an empty data folder: ${server.startupMs} ms`);
    expect(server.demoSeeded).toBe(true);
    expect(server.signInUrl).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/signin\?token=esk_/);
    expect(statSync(adminFilePath(config)).mode & 0o777).toBe(0o600);
    const http = request(server.app.server);
    const signIn = await http.get(new URL(server.signInUrl!).pathname + new URL(server.signInUrl!).search);
    expect(signIn.status).toBe(303);
    const cookie = String(signIn.headers['set-cookie']).split(';')[0];
    const plans = await http.get('/api/v1/plans').set('Cookie', cookie);
    expect(plans.body.total).toBe(1);
    const plan = plans.body.items[0];
    expect(plan.bandPlanId).toBe('us-902-928');
    const base = `/api/v1/plans/${plan.id}`;
    const nodes = (await http.get(`${base}/nodes?limit=1000`).set('Cookie', cookie)).body;
    expect(nodes.total).toBeGreaterThanOrEqual(40);
    expect(nodes.total).toBeLessThanOrEqual(80);
    expect(new Set(nodes.items.map((n: { environment: string }) => n.environment))).toEqual(new Set(['outdoor', 'indoor', 'pit']));
    const sites = (await http.get(`${base}/sites`).set('Cookie', cookie)).body;
    expect(sites.items.filter((s: { kind: string }) => s.kind === 'candidate').length).toBeGreaterThanOrEqual(3);
    const gateways = (await http.get(`${base}/gateways`).set('Cookie', cookie)).body;
    expect([1, 2]).toContain(gateways.total);
    const layers = await server.db.prisma.terrainLayer.findMany({ where: { planId: plan.id } });
    expect(layers).toHaveLength(1);
    expect(layers[0]).toMatchObject({ kind: 'elevation', epsg: 32611, widthPx: 420, heightPx: 420 });
    expect(layers[0].name).toMatch(/SYNTHETIC/);
    expect(existsSync(join(config.filesDir, layers[0].filePath))).toBe(true);
  }, SLOW_MS);

  it('the admin CLI goes through the running server (the folder is never opened twice)', async () => {
    await expect(openDatabase(config)).rejects.toBeInstanceOf(DatabaseBusyError);
    const team = (await runAdminOperation('team-add', { slug: 'night-crew', name: 'Night crew' }, env)) as { slug: string };
    expect(team.slug).toBe('night-crew');
    const issued = (await runAdminOperation('token-issue', { team: 'demo', role: 'planner' }, env)) as { token: string };
    plannerToken = issued.token;
    const created = await request(server!.app.server).post('/api/v1/plans').set('Authorization', `Bearer ${plannerToken}`).send({ name: 'Written before restart' });
    expect(created.status).toBe(201);
    planId = created.body.id;
    await expect(runAdminOperation('token-issue', { team: 'nobody', role: 'viewer' }, env)).rejects.toThrow(/team "nobody" not found/);
  }, SLOW_MS);

  it('a restart on the same folder loses nothing and does not seed again', async () => {
    await server!.stop();
    expect(existsSync(adminFilePath(config))).toBe(false);
    expect(existsSync(dataFolderLockPath(dataDir))).toBe(false);
    server = await startServer(config, { logger: false });
    console.log(`start on an existing data folder: ${server.startupMs} ms`);
    expect(server.demoSeeded).toBe(false);
    const http = request(server.app.server);
    const plan = await http.get(`/api/v1/plans/${planId}`).set('Authorization', `Bearer ${plannerToken}`);
    expect(plan.status).toBe(200);
    expect(plan.body.name).toBe('Written before restart');
    expect((await http.get('/api/v1/plans').set('Authorization', `Bearer ${plannerToken}`)).body.total).toBe(2);
    expect(await server.db.prisma.team.count({ where: { slug: 'night-crew' } })).toBe(1);
    expect(await server.db.prisma.node.count()).toBeGreaterThanOrEqual(40);
    await server.stop();
    server = null;
  }, SLOW_MS);

  it('with the server stopped the CLI opens the folder itself, under the lock', async () => {
    const revoked = (await runAdminOperation('token-revoke', { token: plannerToken }, env)) as { revoked: boolean };
    expect(revoked.revoked).toBe(true);
    expect(existsSync(dataFolderLockPath(dataDir))).toBe(false);
  }, SLOW_MS);

  it('a folder held by another live process is refused with a clear message', async () => {
    const holder = spawn('sleep', ['60'], { stdio: 'ignore' });
    try {
      writeFileSync(dataFolderLockPath(dataDir), `${holder.pid}\n`);
      await expect(openDatabase(config)).rejects.toThrow(new RegExp(`in use by process ${holder.pid}`));
      await expect(runAdminOperation('team-add', { slug: 'late', name: 'Late' }, env)).rejects.toThrow(/in use by process/);
    } finally {
      holder.kill();
      rmSync(dataFolderLockPath(dataDir), { force: true });
    }
  }, SLOW_MS);
});
