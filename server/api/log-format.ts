// How the server's log reads. pino writes one JSON document a line; on a terminal that is
// hard to read and buries the sign-in link, so there each line is turned into one short
// human line ("12:04:31 warn  message  key=value"); elsewhere (files, log collectors, CI)
// or when asked (EARSHOT_LOG_FORMAT=json) the JSON stays as it is.
import { Writable } from 'node:stream';

export type LogFormat = 'auto' | 'pretty' | 'json';

const levelNames: Record<number, string> = { 10: 'trace', 20: 'debug', 30: 'info', 40: 'warn', 50: 'error', 60: 'fatal' };
// Fields every line carries that the human line shows in its own way (or not at all).
const shownApart = new Set(['level', 'time', 'msg', 'pid', 'hostname', 'reqId', 'v']);

function describeValue(value: unknown): string {
  if (value === null || typeof value !== 'object') return String(value);
  const request = value as { method?: unknown; url?: unknown; statusCode?: unknown };
  if (typeof request.method === 'string' && typeof request.url === 'string') return `${request.method} ${request.url}`;
  if (typeof request.statusCode === 'number') return String(request.statusCode);
  return JSON.stringify(value);
}

/** One human line for one pino JSON line; a line that is not JSON is passed through. */
export function formatLogLine(line: string): string {
  let entry: Record<string, unknown>;
  try {
    entry = JSON.parse(line) as Record<string, unknown>;
  } catch {
    return line;
  }
  const time = typeof entry.time === 'number' ? new Date(entry.time).toTimeString().slice(0, 8) : '--:--:--';
  const level = (levelNames[Number(entry.level)] ?? String(entry.level)).padEnd(5);
  const parts = [time, level, String(entry.msg ?? '')];
  if (entry.reqId !== undefined) parts.push(`[${String(entry.reqId).slice(0, 8)}]`);
  for (const [key, value] of Object.entries(entry)) {
    if (shownApart.has(key) || value === undefined) continue;
    if (key === 'err' && value && typeof value === 'object') {
      parts.push(`error=${JSON.stringify((value as { message?: unknown }).message ?? value)}`);
      continue;
    }
    parts.push(`${key}=${describeValue(value)}`);
  }
  return parts.join('  ');
}

/** A pino destination that writes human lines to `out`. */
export function humanLogStream(out: NodeJS.WritableStream): Writable {
  let pending = '';
  return new Writable({
    write(chunk: Buffer | string, _encoding, done) {
      pending += String(chunk);
      let newline = pending.indexOf('\n');
      while (newline >= 0) {
        const line = pending.slice(0, newline);
        pending = pending.slice(newline + 1);
        if (line.trim() !== '') out.write(`${formatLogLine(line)}\n`);
        newline = pending.indexOf('\n');
      }
      done();
    },
  });
}

/** Human lines on a terminal (or when asked), JSON otherwise. */
export function wantsHumanLogs(format: LogFormat, out: { isTTY?: boolean }): boolean {
  return format === 'pretty' || (format === 'auto' && out.isTTY === true);
}
