// `earshot tune` through the real command line: one JSON document on stdout, or one line on
// stderr with exit 2 naming the option (and the file line).
import { execFile } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { touchstone } from './series-rlc.ts';

function earshot(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args], { cwd: process.cwd(), timeout: 60_000 }, (error, stdout, stderr) => {
      resolve({ code: error ? (typeof error.code === 'number' ? error.code : 1) : 0, stdout, stderr });
    });
  });
}

describe('earshot tune', () => {
  const dir = mkdtempSync(join(tmpdir(), 'earshot-tune-'));
  const good = join(dir, 'roof.s1p');
  writeFileSync(good, touchstone({ resonanceMhz: 903.37, resistanceOhm: 42, inductanceNh: 100 }, 'MA', { fromMhz: 850, toMhz: 980, stepMhz: 1 }));
  const bad = join(dir, 'amp.s1p');
  writeFileSync(bad, '# MHz S RI R 50\n900 0.1 0\n900 0.2 0\n');

  it('--s1p FILE --design ID --length-mm L --band ID --json prints the documented fields', async () => {
    const run = await earshot(['tune', '--s1p', good, '--design', 'quarter-wave-ground-plane', '--length-mm', '80', '--band', 'us-902-928', '--json']);
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    const doc = JSON.parse(run.stdout);
    expect(Object.keys(doc)).toEqual(expect.arrayContaining(['resonanceMhz', 'vswrAtResonance', 'vswrAtBandCentre', 'returnLossDbAtBandCentre', 'vswr2BandMhz', 'newLengthMm', 'trimMm', 'advice']));
    expect(Math.abs(doc.resonanceMhz - 903.37) / 903.37).toBeLessThan(0.001);
    expect(doc.newLengthMm).toBeCloseTo((80 * doc.resonanceMhz) / 915, 1);
    expect(doc.chart).toBeUndefined();
  }, 60_000);

  it('a bad file exits 2 with one line naming the option and the line', async () => {
    const run = await earshot(['tune', '--s1p', bad, '--band', 'us-902-928', '--json']);
    expect(run.code).toBe(2);
    expect(run.stdout).toBe('');
    expect(run.stderr.trim().split('\n')).toHaveLength(1);
    expect(run.stderr).toMatch(/--s1p: line 3: frequency 900 MHz repeats line 2/);
  }, 60_000);
});
