// `earshot siting --max-nodes-per-gateway`: the CLI applies the same range as the API route and the
// siting panel (FIELD_RANGES.maxNodesPerGateway, server/planning/field-ranges.ts), so an out-of-range
// cap is refused on the command line (exit 2, one line naming the option and the limits) before any
// database is opened.
import { execFile } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { FIELD_RANGES } from '../../../server/planning/field-ranges.ts';

function earshot(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args], { cwd: process.cwd(), timeout: 60_000 }, (error, stdout, stderr) => {
      resolve({ code: error ? (typeof error.code === 'number' ? error.code : 1) : 0, stdout, stderr });
    });
  });
}

describe('earshot siting --max-nodes-per-gateway', () => {
  const range = FIELD_RANGES.maxNodesPerGateway;
  it.each([range.min - 1, range.max + 1])('refuses %d with the range the API applies', async (value) => {
    const run = await earshot(['siting', '--plan', 'no-such-plan', '--k', '1', '--max-nodes-per-gateway', String(value)]);
    expect(run.code).toBe(2);
    expect(run.stdout).toBe('');
    expect(run.stderr.trim().split('\n')).toHaveLength(1);
    expect(run.stderr).toContain('max-nodes-per-gateway');
    expect(run.stderr).toContain(`must be ${range.min}–${range.max} ${range.unit}`);
  }, 90_000);
});
