// The server log on a terminal: one human line per pino entry, request lines at debug by default.
import { Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { formatLogLine, humanLogStream, wantsHumanLogs } from '../../../server/api/log-format.ts';
import { loadConfig } from '../../../server/config.ts';

describe('log format', () => {
  it('turns a pino JSON line into one short human line with level, message, request id and fields', () => {
    const time = new Date(2026, 11, 2, 12, 4, 31).getTime();
    const line = JSON.stringify({ level: 30, time, pid: 1, hostname: 'h', reqId: 'trace-42abcdef99', req: { method: 'GET', url: '/api/v1/plans' }, res: { statusCode: 200 }, responseTimeMs: 7, msg: 'request' });
    expect(formatLogLine(line)).toBe('12:04:31  info   request  [trace-42]  req=GET /api/v1/plans  res=200  responseTimeMs=7');
    expect(formatLogLine(JSON.stringify({ level: 50, time, msg: 'job failed', err: { message: 'disk full', stack: 'x' } }))).toBe('12:04:31  error  job failed  error="disk full"');
    expect(formatLogLine('not json')).toBe('not json');
  });

  it('the stream writes whole lines only, however the chunks are cut', async () => {
    const out: string[] = [];
    const sink = new Writable({ write(chunk, _e, done) { out.push(String(chunk)); done(); } });
    const stream = humanLogStream(sink);
    const line = JSON.stringify({ level: 40, time: 0, msg: 'careful' });
    stream.write(line.slice(0, 10));
    expect(out).toEqual([]);
    stream.write(`${line.slice(10)}\n`);
    expect(out).toHaveLength(1);
    expect(out[0]).toMatch(/warn\s+careful\n$/);
  });

  it('human lines on a terminal or when asked; JSON when piped or asked', () => {
    expect(wantsHumanLogs('auto', { isTTY: true })).toBe(true);
    expect(wantsHumanLogs('auto', { isTTY: false })).toBe(false);
    expect(wantsHumanLogs('json', { isTTY: true })).toBe(false);
    expect(wantsHumanLogs('pretty', {})).toBe(true);
  });

  it('request lines default to debug; the level and format are configurable and checked', () => {
    const config = loadConfig({ EARSHOT_DATA_DIR: '/tmp/x' });
    expect(config.requestLogLevel).toBe('debug');
    expect(config.logFormat).toBe('auto');
    expect(loadConfig({ EARSHOT_DATA_DIR: '/tmp/x', EARSHOT_REQUEST_LOG_LEVEL: 'info', EARSHOT_LOG_FORMAT: 'json' })).toMatchObject({ requestLogLevel: 'info', logFormat: 'json' });
    expect(() => loadConfig({ EARSHOT_DATA_DIR: '/tmp/x', EARSHOT_LOG_FORMAT: 'fancy' })).toThrow(/EARSHOT_LOG_FORMAT: must be one of auto, pretty, json/);
  });
});
