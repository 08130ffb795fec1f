// What `npm start` prints (server/main.ts): the sign-in link comes last, inside a frame, and the
// requests that follow do not scroll it away (request lines are logged at debug by default, below
// the default info level). Off a terminal the log lines are pino's JSON, one document a line.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { startServer, type RunningServer } from './harness.ts';

let server: RunningServer;

beforeAll(async () => {
  server = await startServer();
}, 240_000);

afterAll(async () => {
  await server?.stop();
});

it('prints the sign-in link last and framed; requests add no lines at the default level; log lines are JSON off a terminal', async () => {
  for (let i = 0; i < 5; i++) expect((await fetch(`${server.baseUrl}/api/v1/health`)).status).toBe(200);
  expect((await fetch(`${server.baseUrl}/api/v1/me`)).status).toBe(401);
  // Give the server a moment to write anything the requests would log.
  await new Promise((resolve) => setTimeout(resolve, 1000));
  const lines = server.output().trimEnd().split('\n');
  const top = lines.findLastIndex((line) => line.startsWith('┌'));
  expect(top, server.output().slice(-2000)).toBeGreaterThan(-1);
  const frame = lines.slice(top);
  // The frame is the end of the output: top rule, framed lines, bottom rule, nothing after.
  expect(frame.at(-1)).toMatch(/^└─+$/);
  expect(frame.slice(1, -1).every((line) => line.startsWith('│ '))).toBe(true);
  const link = frame.find((line) => /\/signin\?token=/.test(line));
  expect(link).toBeDefined();
  expect(frame.some((line) => /request lines are logged at debug/.test(line))).toBe(true);
  // Before the frame: JSON log lines only (stdout is a pipe here, not a terminal), and no request line.
  const before = lines.slice(0, top).filter((line) => line.trim() !== '');
  const logLines = before.filter((line) => line.startsWith('{'));
  expect(logLines.length).toBeGreaterThan(0);
  for (const line of logLines) expect(() => JSON.parse(line)).not.toThrow();
  expect(logLines.some((line) => (JSON.parse(line) as { msg?: string }).msg === 'request')).toBe(false);
}, 120_000);
