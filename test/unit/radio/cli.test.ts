// Spawns the real command line (`earshot <command> … --json`) for each radio command,
// including the error exits (one line on stderr, non-zero exit, nothing on stdout).
// Further option cases go through the same dispatcher (runCli) in-process, to keep
// the suite fast on two shared cores.
import { execFile } from 'node:child_process';
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { runCli } from '../../../server/cli.ts';

interface CliRun {
  code: number;
  stdout: string;
  stderr: string;
}

function earshot(args: string[]): Promise<CliRun> {
  return new Promise((resolve) => {
    execFile(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', ...args], { cwd: process.cwd(), timeout: 60_000 }, (error, stdout, stderr) => {
      const code = error ? (typeof error.code === 'number' ? error.code : 1) : 0;
      resolve({ code, stdout, stderr });
    });
  });
}

const cases: Record<string, string[]> = {
  sf7: ['airtime', '--sf', '7', '--bw-khz', '125', '--cr', '4/5', '--payload-bytes', '20', '--json'],
  sf12: ['airtime', '--sf', '12', '--bw-khz', '125', '--cr', '4/5', '--payload-bytes', '20', '--json'],
  options: ['airtime', '--sf', '9', '--bw-khz', '125', '--cr', '4/8', '--payload-bytes', '10', '--header', 'implicit', '--crc', 'off', '--preamble-symbols', '8', '--ldro', 'auto', '--json'],
  ldroOff: ['airtime', '--sf', '11', '--bw-khz', '125', '--cr', '4/5', '--payload-bytes', '20', '--ldro', 'off', '--json'],
  sf13: ['airtime', '--sf', '13', '--bw-khz', '125', '--cr', '4/5', '--payload-bytes', '20', '--json'],
  negativePayload: ['airtime', '--sf', '7', '--bw-khz', '125', '--cr', '4/5', '--payload-bytes', '-3', '--json'],
  badBw: ['airtime', '--sf', '7', '--bw-khz', '100', '--cr', '4/5', '--payload-bytes', '3', '--json'],
  badCr: ['airtime', '--sf', '7', '--bw-khz', '125', '--cr', '4/9', '--payload-bytes', '3', '--json'],
  unknownOption: ['airtime', '--sf', '7', '--bw-khz', '125', '--payload-bytes', '3', '--spreading', '7', '--json'],
  sx127xSf6: ['airtime', '--sf', '6', '--bw-khz', '125', '--payload-bytes', '20', '--chip', 'sx127x', '--header', 'implicit', '--json'],
  sx127xSf6Explicit: ['airtime', '--sf', '6', '--bw-khz', '125', '--payload-bytes', '20', '--chip', 'sx127x', '--json'],
  missingSf: ['airtime', '--bw-khz', '125', '--payload-bytes', '3', '--json'],
  sheetDrooped: ['build-sheet', '--design', 'quarter-wave-ground-plane-drooped', '--frequency-mhz', '868', '--radials', '6', '--json'],
  sensitivity: ['sensitivity', '--sf', '12', '--bw-khz', '125', '--json'],
  sensitivityNf: ['sensitivity', '--sf', '7', '--bw-khz', '500', '--noise-figure-db', '3', '--json'],
  mismatch: ['mismatch', '--vswr', '2', '--json'],
  mismatchBad: ['mismatch', '--vswr', '0.8', '--json'],
  sheet: ['build-sheet', '--design', 'quarter-wave-ground-plane', '--frequency-mhz', '902', '--json'],
  sheetOutside: ['build-sheet', '--design', 'quarter-wave-ground-plane', '--frequency-mhz', '2400', '--json'],
  sheetUnknown: ['build-sheet', '--design', 'rubber-duck', '--frequency-mhz', '915', '--json'],
  bands: ['bands', '--json'],
  battery: ['battery', '--capacity-mah', '2600', '--messages-per-day', '24', '--time-on-air-ms', '100', '--tx-current-ma', '45', '--json'],
  batteryFromFrame: ['battery', '--capacity-mah', '1000', '--messages-per-day', '96', '--sf', '12', '--bw-khz', '125', '--payload-bytes', '20', '--json'],
  batteryMissing: ['battery', '--capacity-mah', '2600', '--messages-per-day', '24', '--json'],
  bandsText: ['bands'],
};

/** The same dispatcher without a process: captures stdout/stderr writes. */
async function earshotInProcess(args: string[]): Promise<CliRun> {
  let stdout = '';
  let stderr = '';
  const out = vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => ((stdout += String(chunk)), true));
  const err = vi.spyOn(process.stderr, 'write').mockImplementation((chunk: string | Uint8Array) => ((stderr += String(chunk)), true));
  try {
    const code = await runCli(args);
    return { code, stdout, stderr };
  } finally {
    out.mockRestore();
    err.mockRestore();
  }
}

// One spawned run per contract command plus one error exit; the rest in-process.
const spawned = new Set(['sf7', 'sensitivity', 'mismatchBad', 'sheet', 'bands']);
const results: Record<string, CliRun> = {};

beforeAll(async () => {
  const names = Object.keys(cases);
  for (const name of names.filter((n) => !spawned.has(n))) results[name] = await earshotInProcess(cases[name]);
  // Spawned runs two at a time: the machine has two cores.
  const toSpawn = names.filter((n) => spawned.has(n));
  for (let i = 0; i < toSpawn.length; i += 2) {
    await Promise.all(toSpawn.slice(i, i + 2).map(async (name) => (results[name] = await earshot(cases[name]))));
  }
}, 300_000);

const json = (name: string) => {
  const r = results[name];
  expect(r.code, r.stderr).toBe(0);
  return JSON.parse(r.stdout);
};

const failsWith = (name: string, pattern: RegExp) => {
  const r = results[name];
  expect(r.code).not.toBe(0);
  expect(r.stdout).toBe('');
  expect(r.stderr.trim().split('\n')).toHaveLength(1);
  expect(r.stderr).toMatch(pattern);
};

describe('earshot airtime (SX1276 datasheet §4.1.1.6 formula)', () => {
  it('SF7/125/4/5/20 B → 56.58 ms and SF12 → 1318.9 ms, exactly one JSON document with the contract fields', () => {
    const a = json('sf7');
    expect(a.timeOnAirMs).toBeCloseTo(56.58, 2);
    expect(a).toMatchObject({ symbolMs: 1.024, preambleMs: 12.544, payloadSymbols: 43 });
    expect(json('sf12').timeOnAirMs).toBeCloseTo(1318.9, 1);
    expect(results.sf7.stdout.trim().split('\n')).toHaveLength(1);
  });
  it('honours header, CRC, CR, preamble and LDRO options (hand-computed: 148.48 ms; SF11 LDRO off 659.456 ms)', () => {
    expect(json('options').timeOnAirMs).toBeCloseTo(148.48, 6);
    expect(json('ldroOff').timeOnAirMs).toBeCloseTo(659.456, 6);
  });
  it('invalid options exit non-zero with one line naming the option', () => {
    failsWith('sf13', /--sf: .*5 to 12/);
    failsWith('negativePayload', /--payload-bytes/);
    failsWith('badBw', /--bw-khz: .*7\.8/);
    failsWith('badCr', /--cr: .*4\/5/);
    failsWith('unknownOption', /unknown option --spreading/);
    failsWith('missingSf', /--sf: is required/);
    failsWith('sx127xSf6Explicit', /SF6 on the SX127x works only with implicit header/);
  });
  it('--chip sx127x at SF6 implicit → 28.288 ms (SX1276 form, hand-computed)', () => {
    expect(json('sx127xSf6').timeOnAirMs).toBeCloseTo(28.288, 6);
  });
});

describe('earshot sensitivity / mismatch', () => {
  it('SF12/125 kHz/NF 6 → ≈ −137 dBm (thermal noise relation; SNR floors from memory)', () => {
    expect(json('sensitivity')).toMatchObject({ snrFloorDb: -20 });
    expect(json('sensitivity').sensitivityDbm).toBeCloseTo(-137.03, 2);
    expect(json('sensitivity').noiseFloorDbm).toBeCloseTo(-117.03, 2);
    // SF7/500 kHz/NF 3: −174 + 56.99 + 3 − 7.5 = −121.51 dBm
    expect(json('sensitivityNf').sensitivityDbm).toBeCloseTo(-121.51, 2);
  });
  it('VSWR 2.0 → Γ 0.333, RL 9.54 dB, ML 0.51 dB (standard RF relations); VSWR below 1 is refused', () => {
    const m = json('mismatch');
    expect(m.reflectionCoefficient).toBeCloseTo(0.333, 3);
    expect(m.returnLossDb).toBeCloseTo(9.54, 2);
    expect(m.mismatchLossDb).toBeCloseTo(0.51, 2);
    failsWith('mismatchBad', /--vswr: VSWR must be at least 1/);
  });
});

describe('earshot build-sheet (trade rule 2832/f inches, common practice)', () => {
  it('902 MHz quarter-wave ground plane: radiator 79.7 mm / 3.140 in, 4 radials, notes', () => {
    const s = json('sheet');
    expect(s.design).toBe('quarter-wave-ground-plane');
    expect(s.frequencyMhz).toBe(902);
    const radiator = s.elements.find((e: { name: string }) => e.name === 'radiator');
    expect(radiator.lengthMm / 10).toBeCloseTo(7.97, 2);
    expect(radiator.lengthIn).toBeCloseTo(3.14, 2);
    expect(s.elements.find((e: { name: string }) => e.name === 'radial').count).toBe(4);
    expect(s.notes.length).toBeGreaterThan(2);
  });
  it('frequency outside the design band says which band the design covers; unknown design lists the known ones', () => {
    failsWith('sheetOutside', /covers 430–930 MHz/);
    failsWith('sheetUnknown', /build sheets exist for: quarter-wave-ground-plane/);
  });
  it('drooped variant honours --radials; 868 MHz radiator = 2832/868 in = 82.9 mm', () => {
    const s = json('sheetDrooped');
    expect(s.droopDeg).toBe(45);
    expect(s.elements.find((e: { name: string }) => e.name === 'radial').count).toBe(6);
    expect(s.elements.find((e: { name: string }) => e.name === 'radiator').lengthMm).toBeCloseTo(82.87, 1);
  });
});

describe('earshot battery', () => {
  it('estimates life with its assumptions (hand-computed 0.2312 mAh/day → 24.6 years) and derives airtime from a frame', () => {
    const b = json('battery');
    expect(b.chargePerDayMah).toBeCloseTo(0.23117, 4);
    expect(b.lifeYears).toBeCloseTo(24.63, 1);
    expect(b.assumptions.length).toBeGreaterThan(5);
    expect(json('batteryFromFrame').timeOnAirMs).toBeCloseTo(1318.912, 6);
    failsWith('batteryMissing', /--time-on-air-ms: is required unless/);
  });
});

describe('earshot bands', () => {
  it('lists band plans with limits carrying EIRP or ERP, duty cycle, dwell time and source', () => {
    const bands = json('bands');
    expect(bands.map((b: { id: string }) => b.id)).toContain('us-902-928');
    const eu = bands.find((b: { id: string }) => b.id === 'eu-863-870');
    const h17 = eu.limits.find((l: { fromMhz: number }) => l.fromMhz === 869.4);
    expect(h17).toMatchObject({ toMhz: 869.65, maxErpDbm: 27, dutyCyclePercent: 10 });
    const us = bands.find((b: { id: string }) => b.id === 'us-902-928');
    expect(us.limits[0]).toMatchObject({ maxEirpDbm: 36, dwellTimeMs: 400 });
    for (const b of bands) for (const l of b.limits) expect(typeof l.source).toBe('string');
    expect(results.bandsText.code).toBe(0);
    expect(results.bandsText.stdout).toMatch(/not legal advice/);
  });

  it('EU868 DR0–5 payload tables: maxMacPayloadBytes 59/59/59/123/230/230, maxAppPayloadBytes 51/51/51/115/222/222 (LoRaWAN Regional Parameters, repeater-compatible table, from memory)', () => {
    const eu = json('bands').find((b: { id: string }) => b.id === 'eu-863-870');
    const rates = eu.lorawan.dataRates.filter((r: { dr: number }) => r.dr <= 5);
    expect(rates.map((r: { maxMacPayloadBytes: number }) => r.maxMacPayloadBytes)).toEqual([59, 59, 59, 123, 230, 230]);
    expect(rates.map((r: { maxAppPayloadBytes: number }) => r.maxAppPayloadBytes)).toEqual([51, 51, 51, 115, 222, 222]);
  });
});
