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
  delete env.EARSHOT_BASE_LAYER_URL;
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

/**
 * A browser context. Service workers are blocked unless asked for: page.route() does not see
 * requests a service worker answers, and only the offline scenario needs the worker.
 */
export async function newContext(browser: Browser, viewport = { width: 1400, height: 900 }, options: { serviceWorkers?: 'allow' | 'block' } = {}): Promise<BrowserContext> {
  return browser.newContext({ viewport, deviceScaleFactor: 1, locale: 'en-US', timezoneId: 'UTC', serviceWorkers: options.serviceWorkers ?? 'block' });
}

export async function screenshot(page: Page, name: string, fullPage = false): Promise<string> {
  mkdirSync(screenshotDir, { recursive: true });
  const path = join(screenshotDir, `${name}.png`);
  await page.screenshot({ path, fullPage });
  return path;
}

/** Builds web/dist (as npm start does) so the server has a current front end to serve. */
export function buildWeb(): void {
  const result = spawnSync(process.execPath, ['scripts/build-web.mjs'], { stdio: 'inherit' });
  if (result.status !== 0) throw new Error('web build failed');
}

export interface SessionOptions {
  /** 'demo': the demo plan the server seeds (default); 'blank': a new empty plan of the demo team. */
  plan?: 'demo' | 'blank';
  /** 'link': the start-up sign-in link (default); 'token': a token issued by the CLI, exchanged for the cookie; 'none': not signed in. */
  signIn?: 'link' | 'token' | 'none';
  /** Role of the CLI token (signIn 'token'; default planner). The start-up link is a planner's. */
  role?: 'planner' | 'installer' | 'viewer';
  viewport?: { width: number; height: number };
  serviceWorkers?: 'allow' | 'block';
  /** Playwright's default timeout for the page's waits (default 120 s: the machine is shared). */
  pageTimeoutMs?: number;
}

export interface Session {
  server: RunningServer;
  browser: Browser;
  context: BrowserContext;
  page: Page;
  /** Guards the page (console errors, foreign hosts, unexpected HTTP errors); the 401 probe before sign-in is expected. */
  watch: Guard;
  /** The plan the session opened on (the demo plan or the blank one); '' when not signed in. */
  planId: string;
  /** Closes the context, the browser and the server (and removes its data folder). */
  close(): Promise<void>;
}

/**
 * The one set-up of a browser test: builds the web front end, starts the server on a temporary data
 * folder (it seeds the demo team and plan), launches Chromium, opens a guarded page, signs in (by the
 * printed link or by a CLI token) and opens the demo plan or a new blank one at #/plan/<id>.
 */
export async function openSession(options: SessionOptions = {}): Promise<Session> {
  buildWeb();
  const [server, browser] = await Promise.all([startServer(), launchBrowser()]);
  const context = await newContext(browser, options.viewport, { serviceWorkers: options.serviceWorkers });
  const page = await context.newPage();
  page.setDefaultTimeout(options.pageTimeoutMs ?? 120_000);
  const watch = guard(page, server.baseUrl);
  const close = async (): Promise<void> => {
    await context.close().catch(() => undefined);
    await browser.close().catch(() => undefined);
    await server.stop();
  };
  try {
    const signIn = options.signIn ?? 'link';
    if (signIn === 'none') return { server, browser, context, page, watch, planId: '', close };
    // Before signing in the app probes /api/v1/me and gets 401: that one is expected.
    watch.expectHttpError(/\/api\/v1\/me$/, 401);
    if (signIn === 'link') await page.goto(server.signInUrl);
    else {
      const issued = cli(server, ['token', 'issue', '--team', 'demo', '--role', options.role ?? 'planner']) as { token: string };
      await page.goto(server.baseUrl);
      const status = await page.evaluate(
        async (token) => (await fetch('/signin', { method: 'POST', headers: { 'content-type': 'application/json', accept: 'application/json', 'x-earshot-request': '1' }, body: JSON.stringify({ token }) })).status,
        issued.token,
      );
      if (status >= 300) throw new Error(`signing in with a CLI token answered ${status}`);
      await page.goto(server.baseUrl);
    }
    let planId: string;
    if ((options.plan ?? 'demo') === 'demo') {
      await page.locator('a.plan-link').first().waitFor();
      planId = decodeURIComponent(/#\/plan\/([^/?]+)/.exec((await page.locator('a.plan-link').first().getAttribute('href')) ?? '')?.[1] ?? '');
    } else {
      planId = await page.evaluate(async () => {
        const response = await fetch('/api/v1/plans', { method: 'POST', headers: { 'content-type': 'application/json', 'x-earshot-request': '1' }, body: JSON.stringify({ name: 'Blank plan (e2e)' }) });
        if (response.status !== 201) throw new Error(`creating a blank plan answered ${response.status}`);
        return ((await response.json()) as { id: string }).id;
      });
    }
    if (!planId) throw new Error('no plan to open');
    await page.goto(`${server.baseUrl}/#/plan/${encodeURIComponent(planId)}`);
    await page.waitForURL(/#\/plan\//);
    return { server, browser, context, page, watch, planId, close };
  } catch (error) {
    await close();
    throw error;
  }
}

/**
 * Accessibility checks run in the page: every visible form control and button has an
 * accessible name, and visible text meets the WCAG 2.x contrast minimum of 4.5:1
 * (3:1 for large text: ≥ 24 px, or ≥ 18.66 px bold), computed with the WCAG 2.x
 * relative-luminance formula over the nearest opaque background. Returns the failures.
 */
export async function accessibilityProblems(page: Page, root = 'body'): Promise<string[]> {
  // The TypeScript transform may wrap named inner functions in a __name() helper; give the page one.
  await page.evaluate('globalThis.__name = globalThis.__name || ((f) => f)');
  return page.evaluate((rootSelector) => {
    const problems: string[] = [];
    const scope = document.querySelector(rootSelector) ?? document.body;
    const visible = (el: Element): boolean => {
      const r = el.getBoundingClientRect();
      const st = getComputedStyle(el);
      return r.width > 0 && r.height > 0 && st.visibility !== 'hidden' && st.display !== 'none';
    };
    for (const el of Array.from(scope.querySelectorAll('input, select, textarea, button'))) {
      if (!visible(el) || (el as HTMLInputElement).type === 'hidden') continue;
      const labelled =
        (el as HTMLInputElement).labels?.length ||
        el.getAttribute('aria-label') ||
        el.getAttribute('aria-labelledby') ||
        (el.tagName === 'BUTTON' && (el.textContent ?? '').trim() !== '');
      if (!labelled) problems.push(`no accessible name: <${el.tagName.toLowerCase()} id="${el.id}" class="${el.className}">`);
    }
    const parse = (c: string): number[] | null => {
      const m = /rgba?\(([\d.]+),\s*([\d.]+),\s*([\d.]+)(?:,\s*([\d.]+))?\)/.exec(c);
      return m ? [Number(m[1]), Number(m[2]), Number(m[3]), m[4] === undefined ? 1 : Number(m[4])] : null;
    };
    // WCAG 2.x relative luminance: sRGB channel linearisation then 0.2126 R + 0.7152 G + 0.0722 B.
    const lum = (rgb: number[]): number => {
      const lin = rgb.slice(0, 3).map((v) => {
        const s = v / 255;
        return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
      });
      return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
    };
    const background = (el: Element | null): number[] | null => {
      for (let e = el; e; e = e.parentElement) {
        const st = getComputedStyle(e);
        if (st.backgroundImage !== 'none' && !e.classList.contains('share')) return null; // gradients/images: not judged
        const bg = parse(st.backgroundColor);
        if (bg && bg[3] >= 0.99) return bg;
      }
      return [255, 255, 255, 1];
    };
    const walker = document.createTreeWalker(scope, NodeFilter.SHOW_TEXT);
    const seen = new Set<Element>();
    for (let node = walker.nextNode(); node; node = walker.nextNode()) {
      const el = node.parentElement;
      if (!el || seen.has(el) || (node.textContent ?? '').trim() === '' || !visible(el)) continue;
      if (el.closest('.leaflet-container, svg, option')) continue;
      seen.add(el);
      const st = getComputedStyle(el);
      const fg = parse(st.color);
      const bg = background(el);
      if (!fg || !bg) continue;
      const ratio = (Math.max(lum(fg), lum(bg)) + 0.05) / (Math.min(lum(fg), lum(bg)) + 0.05);
      const size = Number.parseFloat(st.fontSize);
      const large = size >= 24 || (size >= 18.66 && Number(st.fontWeight) >= 700);
      const disabled = el.closest('button[disabled], [aria-disabled="true"]');
      if (!disabled && ratio < (large ? 3 : 4.5)) problems.push(`contrast ${ratio.toFixed(2)}:1 for "${(node.textContent ?? '').trim().slice(0, 40)}" (${st.color} on rgb(${bg.slice(0, 3).join(',')}))`);
    }
    return problems;
  }, root);
}
