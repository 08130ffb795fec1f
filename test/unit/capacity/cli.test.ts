// `earshot capacity --input - --json`: the real command line once for an answer and once for an
// error (one line on stderr, exit 2, nothing on stdout); further input cases in-process through
// capacityScenario, the function the command calls.
import { execFile } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { capacityScenario } from '../../../server/app/capacity.ts';

function earshot(args: string[], stdin: string): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = execFile(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args], { cwd: process.cwd(), timeout: 60_000 }, (error, stdout, stderr) => {
      resolve({ code: error ? (typeof error.code === 'number' ? error.code : 1) : 0, stdout, stderr });
    });
    child.stdin?.end(stdin);
  });
}

/** SX1276 datasheet §4.1.1.6 time on air, written out here (PL = payload + 13 bytes, CR 4/5, CRC, explicit header). */
function datasheetToaMs(sf: number, payloadBytes: number): number {
  const ts = 2 ** sf / 125;
  const de = ts >= 16 ? 1 : 0;
  return (12.25 + 8 + Math.max(Math.ceil((8 * (payloadBytes + 13) - 4 * sf + 44) / (4 * (sf - 2 * de))) * 5, 0)) * ts;
}

const scenario = {
  bandPlan: 'eu-863-870',
  channels: 3,
  model: 'aloha',
  groups: [
    { sf: 7, bandwidthKhz: 125, payloadBytes: 12, messagesPerHour: 6, nodes: 3000 },
    { sf: 12, bandwidthKhz: 125, payloadBytes: 12, messagesPerHour: 2, nodes: 500 },
  ],
};

describe('earshot capacity (spawned)', () => {
  it('answers one JSON document: time on air, load, success exp(−2G) (Abramson 1970) and the EU868 budget floor(36 s / ToA)', async () => {
    const run = await earshot(['capacity', '--input', '-', '--json'], JSON.stringify(scenario));
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    const answer = JSON.parse(run.stdout);
    expect(answer.groups).toHaveLength(2);
    for (const [k, group] of (answer.groups as Array<Record<string, number>>).entries()) {
      const input = scenario.groups[k];
      const toa = datasheetToaMs(input.sf, input.payloadBytes);
      expect(group.timeOnAirMs).toBeCloseTo(toa, 6);
      const g = (input.nodes * (input.messagesPerHour / 3600) * (toa / 1000)) / 3;
      expect(group.offeredLoadErlang).toBeCloseTo(g, 9);
      expect(Math.abs(group.successProbability - Math.exp(-2 * g))).toBeLessThan(0.005);
      expect(group.maxMessagesPerHourAtDutyCycle).toBe(Math.floor(36_000 / toa));
    }
  });

  it('bad input: exit 2, one line on stderr naming the field', async () => {
    const run = await earshot(['capacity', '--input', '-', '--json'], JSON.stringify({ ...scenario, groups: [{ ...scenario.groups[0], messagesPerHour: -1 }] }));
    expect(run.code).toBe(2);
    expect(run.stdout).toBe('');
    expect(run.stderr.trim().split('\n')).toHaveLength(1);
    expect(run.stderr).toMatch(/^earshot: groups\[0\]\.messagesPerHour: must be ≥ 0/);
  });
});

describe('capacity scenario input (in-process)', () => {
  it.each([
    [{ ...scenario, bandPlan: 'xx-123' }, /^bandPlan: unknown band plan "xx-123"/],
    [{ ...scenario, bandPlan: 'us-902-928' }, /^groups\[1\]\.sf: SF12 is not an uplink SF of us-902-928 at 125 kHz \(allowed: 7, 8, 9, 10\)/],
    [{ ...scenario, model: 'guess' }, /^model: must be one of aloha, capture, simulate/],
    [{ ...scenario, channels: 0 }, /^channels: must be ≥ 1/],
    [{ ...scenario, groups: [{ ...scenario.groups[0], nodes: 0 }] }, /^groups\[0\]\.nodes: must be ≥ 1/],
    [{ ...scenario, groups: [{ ...scenario.groups[0], sf: 12, payloadBytes: 60 }] }, /^groups\[0\]\.payloadBytes: 60 bytes exceed the 51-byte LoRaWAN maximum at SF12/],
    [{ ...scenario, durationS: -5, model: 'simulate' }, /^durationS: must be > 0/],
    [{ ...scenario, groups: [] }, /^groups: must list at least one group/],
    [{ ...scenario, extra: 1 }, /extra|Unrecognized/i],
  ])('rejects %#', (input, message) => {
    expect(() => capacityScenario(input)).toThrow(message);
  });

  it('channels default to the band plan (EU868: 3), and US915 SF10 frames over 400 ms are flagged by the dwell rule', () => {
    const eu = capacityScenario({ bandPlan: 'eu868', model: 'capture', groups: [{ sf: 9, bandwidthKhz: 125, payloadBytes: 10, messagesPerHour: 1, nodes: 10 }] });
    expect(eu.channels).toBe(3);
    const us = capacityScenario({ bandPlan: 'us915', model: 'aloha', groups: [{ sf: 10, bandwidthKhz: 125, payloadBytes: 11, messagesPerHour: 1, nodes: 10 }] });
    expect(us.channels).toBe(8);
    expect(us.groups[0].maxMessagesPerHourAtDutyCycle).toBeNull();
    expect(us.groups[0].dwellOk).toBe(true);
  });

  it('simulate: reproducible for a seed, near the ALOHA figure for co-SF traffic at one RSSI', () => {
    const input = { bandPlan: 'eu868', channels: 3, model: 'simulate', seed: 11, groups: [{ sf: 8, bandwidthKhz: 125, payloadBytes: 12, messagesPerHour: 20, nodes: 2000 }] };
    const a = capacityScenario(input);
    expect(capacityScenario(input)).toEqual(a);
    const aloha = capacityScenario({ ...input, model: 'aloha' });
    expect(a.durationS).toBe(3600);
    expect(a.totals.transmissions).toBeGreaterThan(30_000);
    expect(Math.abs(a.groups[0].successProbability - aloha.groups[0].successProbability)).toBeLessThan(0.02);
  });
});
