// Browser-test harness: starts the real earshot server (`tsx server/main.ts`)
// on a fresh data folder and a free port, so it seeds the demo plan and prints
// its one-time sign-in URL; launches Debian's chromium through playwright-core
// (never a downloaded browser); and guards every page: a console error, an
// uncaught exception or a request to any host other than the local server
// fails the test.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';

export const chromiumPath = '/usr/bin/chromium';
export const chromiumArgs = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];
export const screenshotDir = join('test-artefacts', 'screenshots');

export interface RunningServer {
  baseUrl: string;
  signInUrl: string;
  dataDir: string;
  env: NodeJS.ProcessEnv;
  output(): string;
  stop(): Promise<void>;
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.unref();
    server.on('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      server.close(() => resolve(port));
    });
  });
}

/** Spawns the server exactly as `npm start` does (minus the web build, done by the caller). */
export async function startServer(timeoutMs = 150_000): Promise<RunningServer> {
  const dataDir = mkdtempSync(join(tmpdir(), 'earshot-e2e-'));
  const port = await freePort();
  const env: NodeJS.ProcessEnv = { ...process.env, EARSHOT_DATA_DIR: dataDir, PORT: String(port), HOST: '127.0.0.1', NODE_ENV: 'test' };
  delete env.DATABASE_URL;
  delete env.REDIS_URL;
  delete env.EARSHOT_ONLINE_BASE_LAYER_URL;
  const child: ChildProcess = spawn(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/main.ts'], { env, stdio: ['ignore', 'pipe', 'pipe'] });
  let log = '';
  child.stdout?.on('data', (chunk: Buffer) => (log += chunk.toString()));
  child.stderr?.on('data', (chunk: Buffer) => (log += chunk.toString()));
  const signInUrl = await new Promise<string>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`server did not print a sign-in URL within ${timeoutMs} ms:\n${log.slice(-3000)}`)), timeoutMs);
    const check = (): void => {
      const match = /(http:\/\/[^\s]+\/signin\?token=[A-Za-z0-9._~%-]+)/.exec(log);
      if (match) {
        clearTimeout(timer);
        resolve(match[1]);
      }
    };
    child.stdout?.on('data', check);
    child.stderr?.on('data', check);
    child.on('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`server exited (${code}) before it was ready:\n${log.slice(-3000)}`));
    });
  });
  const baseUrl = `http://127.0.0.1:${port}`;
  // The printed URL may name the configured host; the tests always use 127.0.0.1.
  const local = new URL(signInUrl);
  const signIn = `${baseUrl}${local.pathname}${local.search}`;
  return {
    baseUrl,
    signInUrl: signIn,
    dataDir,
    env,
    output: () => log,
    async stop() {
      if (child.exitCode === null) {
        const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
        child.kill('SIGTERM');
        const timer = setTimeout(() => child.kill('SIGKILL'), 10_000);
        await exited;
        clearTimeout(timer);
      }
      rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

/** Runs the earshot CLI against the running server's data folder (e.g. to issue an installer token). */
export function cli(server: RunningServer, args: string[]): unknown {
  const result = spawnSync(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args, '--json'], { env: server.env, encoding: 'utf8', timeout: 120_000 });
  if (result.status !== 0) throw new Error(`earshot ${args.join(' ')} failed (${result.status}): ${result.stderr}`);
  return JSON.parse(result.stdout) as unknown;
}

export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({ executablePath: chromiumPath, args: chromiumArgs, headless: true });
}

export interface Guard {
  /** Problems seen so far: console errors, page errors, foreign requests, unexpected HTTP errors. */
  problems: string[];
  /** Declares an HTTP error status the scenario expects (e.g. 401 on the first session probe). */
  expectHttpError(pattern: RegExp, status: number): void;
  assertClean(): void;
  /** Forgets what was seen so far (each test checks only its own steps). */
  reset(): void;
}

/** Watches a page: any console error, uncaught error or request off the local server is a problem. */
export function guard(page: Page, baseUrl: string): Guard {
  const origin = new URL(baseUrl).origin;
  const problems: string[] = [];
  const expected: Array<{ pattern: RegExp; status: number }> = [];
  const failedResponses: Array<{ url: string; status: number }> = [];
  page.on('request', (request) => {
    const url = request.url();
    if (url.startsWith('data:') || url.startsWith('blob:') || url === 'about:blank') return;
    if (!url.startsWith(`${origin}/`) && url !== origin) problems.push(`request left the local server: ${url}`);
  });
  page.on('response', (response) => {
    if (response.status() >= 400) failedResponses.push({ url: response.url(), status: response.status() });
  });
  page.on('pageerror', (error) => problems.push(`uncaught error in the page: ${error.message}`));
  page.on('console', (message) => {
    if (message.type() !== 'error') return;
    const text = message.text();
    // Chromium reports every 4xx/5xx response as a console error "Failed to load resource";
    // only the ones the scenario declared (by URL and status) are accepted.
    const url = message.location().url;
    if (/Failed to load resource: the server responded with a status of (\d+)/.test(text)) {
      const status = Number(/status of (\d+)/.exec(text)?.[1]);
      if (expected.some((e) => e.status === status && e.pattern.test(url))) return;
      problems.push(`console error: ${text} (${url})`);
      return;
    }
    problems.push(`console error: ${text}${url ? ` (${url})` : ''}`);
  });
  return {
    problems,
    expectHttpError(pattern, status) {
      expected.push({ pattern, status });
    },
    reset() {
      problems.length = 0;
      failedResponses.length = 0;
    },
    assertClean() {
      const unexpected = failedResponses.filter((r) => !expected.some((e) => e.status === r.status && e.pattern.test(r.url)));
      const all = [...problems, ...unexpected.map((r) => `unexpected HTTP ${r.status}: ${r.url}`)];
      if (all.length > 0) throw new Error(`page problems:\n${all.join('\n')}`);
    },
  };
}

export async function newContext(browser: Browser, viewport = { width: 1400, height: 900 }): Promise<BrowserContext> {
  return browser.newContext({ viewport, deviceScaleFactor: 1, locale: 'en-US', timezoneId: 'UTC' });
}

export async function screenshot(page: Page, name: string): Promise<string> {
  mkdirSync(screenshotDir, { recursive: true });
  const path = join(screenshotDir, `${name}.png`);
  await page.screenshot({ path, fullPage: false });
  return path;
}

/** Builds web/dist (as npm start does) so the server has a current front end to serve. */
export function buildWeb(): void {
  const result = spawnSync(process.execPath, ['scripts/build-web.mjs'], { stdio: 'inherit' });
  if (result.status !== 0) throw new Error('web build failed');
}
