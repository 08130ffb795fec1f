// How a command reaches the server that holds an embedded data folder: the server
// writes <dataDir>/admin.json (port, pid, local secret; mode 0600) and answers
// loopback-only /_admin/<operation> routes that check that secret. Used by the
// admin commands (server/cli/admin.ts) and the link commands (server/cli/links.ts).
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config.ts';
import { CliUsageError } from './framework.ts';

export interface RunningServer {
  port: number;
  host?: string;
  pid?: number;
  secret: string;
}

/** The server recorded in <dataDir>/admin.json, or null when there is none (or it is unreadable). */
export function readRunningServer(config: Config): RunningServer | null {
  const path = join(config.dataDir, 'admin.json');
  if (!existsSync(path)) return null;
  try {
    const parsed = JSON.parse(readFileSync(path, 'utf8')) as Partial<RunningServer>;
    if (typeof parsed.port !== 'number' || typeof parsed.secret !== 'string') return null;
    return { port: parsed.port, secret: parsed.secret, host: parsed.host, pid: typeof parsed.pid === 'number' ? parsed.pid : undefined };
  } catch {
    return null;
  }
}

/**
 * Posts `body` to the running server's /_admin/<operation> route with the local secret.
 * Returns its JSON answer; null when nothing answers on that port; a 4xx/5xx answer
 * becomes a CliUsageError carrying the server's one-line message.
 */
export async function callRunningServer(server: RunningServer, operation: string, body: unknown, timeoutMs: number): Promise<unknown | null> {
  let response: Response;
  try {
    response = await fetch(`http://127.0.0.1:${server.port}/_admin/${operation}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-earshot-admin': server.secret },
      body: JSON.stringify(body),
      signal: AbortSignal.timeout(timeoutMs),
    });
  } catch {
    return null;
  }
  const payload = (await response.json().catch(() => ({}))) as { error?: { message?: string } };
  if (!response.ok) throw new CliUsageError(payload.error?.message ?? `the running server answered ${response.status}`);
  return payload;
}

/**
 * Streams a file to the running server's /_admin/<operation>?<query> route as the raw body
 * (never read whole into memory). Returns the JSON answer; null when nothing answers.
 */
export async function sendFileToRunningServer(server: RunningServer, operation: string, query: Record<string, string>, filePath: string, contentType: string, timeoutMs: number): Promise<unknown | null> {
  const { createReadStream, statSync } = await import('node:fs');
  const { Readable } = await import('node:stream');
  const search = new URLSearchParams(query).toString();
  let response: Response;
  try {
    response = await fetch(`http://127.0.0.1:${server.port}/_admin/${operation}?${search}`, {
      method: 'POST',
      headers: { 'content-type': contentType, 'content-length': String(statSync(filePath).size), 'x-earshot-admin': server.secret },
      body: Readable.toWeb(createReadStream(filePath)) as ReadableStream<Uint8Array>,
      duplex: 'half',
      signal: AbortSignal.timeout(timeoutMs),
    } as RequestInit & { duplex: 'half' });
  } catch (error) {
    // Refused connection: no server. An answer cut short (e.g. a refused oversize upload) is the server's.
    if ((error as { cause?: { code?: string } }).cause?.code === 'ECONNREFUSED') return null;
    throw new CliUsageError(`the running server did not finish the upload: ${error instanceof Error ? error.message : String(error)}`);
  }
  const payload = (await response.json().catch(() => ({}))) as { error?: { message?: string } };
  if (!response.ok) throw new CliUsageError(payload.error?.message ?? `the running server answered ${response.status}`);
  return payload;
}
