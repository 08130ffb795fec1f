import { describe, expect, it } from 'vitest';
import { analyseSweep, LENGTH_RULE, TuningInputError } from '../../../server/tuning/analyse.ts';
import { parseSweep, parseSweepCsv, parseTouchstone, SweepFileError } from '../../../server/tuning/sweep-file.ts';
import { RADIAL_LENGTH_RATIO } from '../../../server/radio/build-sheets.ts';
import { gammaOf, reactanceOhm, touchstone, type Format, type SeriesRlc } from './series-rlc.ts';

// Touchstone File Format Specification (version 1.1; keyword lines of 2.0): option line
// `# <unit> <parameter> <format> R <n>`, defaults GHz S MA R 50, `!` comments, one-port data
// "f a b" with RI = real/imaginary, MA = magnitude/angle°, DB = 20·log10|S| dB/angle°.

const US_CENTRE_MHZ = 915; // us-902-928: (902 + 928) / 2
const antenna: SeriesRlc = { resonanceMhz: 903.37, resistanceOhm: 42, inductanceNh: 100 };
const sweepRange = { fromMhz: 850, toMhz: 980, stepMhz: 1 };

function expectSweepError(run: () => unknown, line: number | null, pattern: RegExp): void {
  try {
    run();
  } catch (error) {
    expect(error).toBeInstanceOf(SweepFileError);
    expect((error as SweepFileError).line).toBe(line);
    expect((error as Error).message).toMatch(pattern);
    if (line !== null) expect((error as Error).message).toMatch(new RegExp(`^line ${line}: `));
    return;
  }
  throw new Error('expected a SweepFileError');
}

describe('tuning: series-RLC sweeps in RI, MA and DB (Touchstone File Format Specification)', () => {
  for (const format of ['RI', 'MA', 'DB'] as Format[]) {
    it(`${format}: finds the resonance within 0.1 % and gives new length = old × resonance / band centre within 0.5 % (1/length rule: common practice)`, () => {
      const sweep = parseTouchstone(touchstone(antenna, format, sweepRange));
      expect(sweep.points).toHaveLength(131);
      const result = analyseSweep({ sweep, bandId: 'us-902-928', designId: 'quarter-wave-ground-plane', lengthMm: 80 });
      expect(Math.abs(result.resonanceMhz - antenna.resonanceMhz) / antenna.resonanceMhz).toBeLessThan(0.001);
      const expectedLengthMm = (80 * antenna.resonanceMhz) / US_CENTRE_MHZ;
      expect(Math.abs((result.newLengthMm ?? 0) - expectedLengthMm) / expectedLengthMm).toBeLessThan(0.005);
      expect(result.trimMm).toBeCloseTo(80 - (result.newLengthMm ?? 0), 2);
      expect(result.bandCentreMhz).toBe(US_CENTRE_MHZ);
      expect(result.lengthRule).toBe(LENGTH_RULE);
      // Resonance is below the centre, so the element is long: a trim instruction with the figure.
      const trim = result.advice.find((a) => a.code === 'trim');
      expect(trim?.message).toMatch(new RegExp(`^Trim ${Math.abs(result.trimMm ?? 0).toFixed(1)} mm from the radiator tip`));
      expect(trim?.message).toMatch(/re-sweep/);
    });
  }

  it('RI, MA and DB of the same antenna give the same figures; Hz, kHz and GHz units the same resonance', () => {
    const results = (['RI', 'MA', 'DB'] as Format[]).map((f) => analyseSweep({ sweep: parseTouchstone(touchstone(antenna, f, sweepRange)), bandId: 'us-902-928' }));
    for (const r of results.slice(1)) {
      expect(r.resonanceMhz).toBeCloseTo(results[0].resonanceMhz, 3);
      expect(r.vswrAtBandCentre).toBeCloseTo(results[0].vswrAtBandCentre, 3);
    }
    for (const unit of ['Hz', 'kHz', 'GHz'] as const) {
      const r = analyseSweep({ sweep: parseTouchstone(touchstone(antenna, 'RI', { ...sweepRange, unit })), bandId: 'us-902-928' });
      expect(r.resonanceMhz).toBeCloseTo(results[0].resonanceMhz, 3);
    }
  });

  it('VSWR at a point equals (1+|Γ|)/(1−|Γ|) from the file\'s own numbers (standard RF relation)', () => {
    const text = touchstone(antenna, 'MA', sweepRange);
    const line = text.split('\n').find((l) => l.startsWith('915.000000000 '));
    expect(line).toBeDefined();
    const gamma = Number(line!.split(/\s+/)[1]);
    const result = analyseSweep({ sweep: parseTouchstone(text), bandId: 'us-902-928' });
    expect(result.vswrAtBandCentre).toBeCloseTo((1 + gamma) / (1 - gamma), 3);
    expect(result.returnLossDbAtBandCentre).toBeCloseTo(-20 * Math.log10(gamma), 2);
    // A LoRaWAN default channel that falls between samples: linear in |Γ| between its neighbours.
    const ch = result.channels.find((c) => c.frequencyMhz === 902.3);
    const g902 = Math.hypot(gammaOf(antenna, 902).re, gammaOf(antenna, 902).im);
    const g903 = Math.hypot(gammaOf(antenna, 903).re, gammaOf(antenna, 903).im);
    const g = g902 + 0.3 * (g903 - g902);
    expect(ch?.vswr).toBeCloseTo((1 + g) / (1 - g), 2);
  });

  it('VSWR < 2 band matches the model: |Γ| = 1/3 where X² = ((R+Z0)² − 9(R−Z0)²)/8', () => {
    const z0 = 50;
    const r = antenna.resistanceOhm;
    const x = Math.sqrt(((r + z0) ** 2 - 9 * (r - z0) ** 2) / 8);
    // Solve X(f) = ±x by bisection on the model's reactance.
    const solve = (target: number, lo: number, hi: number) => {
      for (let i = 0; i < 80; i++) {
        const mid = (lo + hi) / 2;
        if (reactanceOhm(antenna, mid) < target) lo = mid;
        else hi = mid;
      }
      return (lo + hi) / 2;
    };
    const low = solve(-x, 700, antenna.resonanceMhz);
    const high = solve(x, antenna.resonanceMhz, 1200);
    const result = analyseSweep({ sweep: parseTouchstone(touchstone(antenna, 'RI', sweepRange)), bandId: 'us-902-928' });
    expect(result.vswr2BandMhz).not.toBeNull();
    // Linear interpolation of |Γ| over 1 MHz steps: within 0.2 MHz of the exact edges.
    expect(Math.abs(result.vswr2BandMhz![0] - low)).toBeLessThan(0.2);
    expect(Math.abs(result.vswr2BandMhz![1] - high)).toBeLessThan(0.2);
  });

  it('a short radiator (resonance above the centre) is told to make a new one, with the length to cut', () => {
    const high: SeriesRlc = { ...antenna, resonanceMhz: 931.2 };
    const result = analyseSweep({ sweep: parseTouchstone(touchstone(high, 'RI', { fromMhz: 880, toMhz: 990, stepMhz: 0.5 })), bandId: 'us-902-928', designId: 'quarter-wave-ground-plane', lengthMm: 76 });
    expect(result.trimMm).toBeLessThan(0);
    const advice = result.advice.find((a) => a.code === 'lengthen');
    expect(advice?.message).toMatch(/short/);
    expect(advice?.message).toMatch(/make a new radiator/);
    const radials = result.advice.find((a) => a.code === 'radials');
    expect(radials?.message).toContain(`${((result.newLengthMm ?? 0) * RADIAL_LENGTH_RATIO).toFixed(1)} mm`);
  });

  it('a dipole trims each leg; a resonance within 0.2 % of the centre needs no trim', () => {
    const centred: SeriesRlc = { ...antenna, resonanceMhz: 915.6 };
    const result = analyseSweep({ sweep: parseTouchstone(touchstone(centred, 'DB', sweepRange)), bandId: 'us-902-928', designId: 'half-wave-dipole', lengthMm: 78 });
    expect(result.element).toBe('each leg');
    expect(result.advice.map((a) => a.code)).toContain('on-centre');
  });

  it('a sweep no trim fixes (VSWR ≥ 2 at resonance) is flagged with the build sheet\'s feed and ground-plane advice', () => {
    const poor: SeriesRlc = { ...antenna, resistanceOhm: 160 };
    const result = analyseSweep({ sweep: parseTouchstone(touchstone(poor, 'MA', sweepRange)), bandId: 'us-902-928', designId: 'quarter-wave-ground-plane', lengthMm: 80 });
    expect(result.vswrAtResonance).toBeCloseTo(160 / 50, 2); // resistive load: VSWR = R/Z0
    expect(result.vswr2BandMhz).toBeNull();
    const flag = result.advice.find((a) => a.code === 'no-trim-fixes');
    expect(flag?.message).toMatch(/feed.*ground plane.*droop/s);
    expect(flag?.buildSheetNotes?.some((n) => /radials/i.test(n))).toBe(true);
  });
});

describe('tuning: Touchstone option-line defaults and parameters (Touchstone File Format Specification)', () => {
  it('a bare "#" means GHz, S, MA, R 50; comments are ignored anywhere', () => {
    const sweep = parseTouchstone('! header\n#\n0.9 0.5 0 ! first\n0.91 0.1 10\n0.92 0.6 20\n');
    expect(sweep.description).toBe('S MA R 50');
    expect(sweep.points.map((p) => p.frequencyMhz)).toEqual([900, 910, 920]);
    expect(sweep.points[1].gammaMagnitude).toBeCloseTo(0.1, 12);
  });
  it('Z data normalised to R: z = 1 is a match, z = 2 gives |Γ| = 1/3', () => {
    const sweep = parseTouchstone('# MHz Z RI R 50\n900 2 0\n910 1 0\n920 0.5 0\n');
    expect(sweep.points[0].gammaMagnitude).toBeCloseTo(1 / 3, 12);
    expect(sweep.points[1].gammaMagnitude).toBeCloseTo(0, 12);
    expect(sweep.points[2].gammaMagnitude).toBeCloseTo(1 / 3, 12);
  });
  it('Touchstone 2.0 keyword lines for one port are read', () => {
    const sweep = parseSweep('[Version] 2.0\n# MHz S DB R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n[Network Data]\n900 -3 0\n910 -20 0\n920 -3 0\n[End]\n', 'a.s1p');
    expect(sweep.points[1].gammaMagnitude).toBeCloseTo(0.1, 12);
  });
});

describe('tuning: CSV of frequency and VSWR or return loss', () => {
  it('reads VSWR with a Hz header, and return loss in dB', () => {
    const vswr = parseSweepCsv('Frequency (Hz),VSWR\n900000000,3\n910000000,1.5\n920000000,2\n');
    expect(vswr.points.map((p) => p.frequencyMhz)).toEqual([900, 910, 920]);
    expect(vswr.points[1].gammaMagnitude).toBeCloseTo(0.2, 12);
    const rl = parseSweep('freq_mhz,return_loss_db\n900,6.02\n910,20\n920,9.54\n', 'sweep.csv');
    expect(rl.points[1].gammaMagnitude).toBeCloseTo(0.1, 12);
    const s11 = parseSweep('freq_mhz;s11_db\n900;-6\n910;-20\n920;-6\n', 'x.csv');
    expect(s11.points[1].gammaMagnitude).toBeCloseTo(0.1, 12);
  });
  it('with no header: MHz and VSWR', () => {
    const sweep = parseSweepCsv('900,2\n910,1.2\n920,2\n');
    expect(sweep.description).toBe('VSWR');
    const result = analyseSweep({ sweep, bandId: 'us-902-928' });
    expect(result.resonanceMhz).toBeCloseTo(910, 0);
  });
});

describe('tuning: bad files answer an error naming the line', () => {
  it('not Touchstone', () => expectSweepError(() => parseTouchstone('hello world\nthis is not a sweep\n'), 1, /not a Touchstone file/));
  it('two-port data', () => {
    expectSweepError(() => parseTouchstone('# MHz S RI R 50\n900 0.1 0 0.9 0 0.9 0 0.1 0\n'), 2, /two-port/);
    expectSweepError(() => parseTouchstone('[Version] 2.0\n[Number of Ports] 2\n'), 2, /one-port/);
    expectSweepError(() => parseSweep('x', 'amp.s2p'), null, /multi-port/);
    expectSweepError(() => parseTouchstone('# MHz H RI R 50\n'), 1, /two-port/);
  });
  it('unsorted and duplicate frequencies', () => {
    expectSweepError(() => parseTouchstone('# MHz S RI R 50\n900 0.1 0\n910 0.1 0\n905 0.1 0\n'), 4, /must increase/);
    expectSweepError(() => parseTouchstone('# MHz S RI R 50\n900 0.1 0\n910 0.1 0\n910 0.2 0\n'), 4, /repeats line 3/);
    expectSweepError(() => parseSweepCsv('freq,vswr\n900,1.5\n899,1.4\n'), 3, /must increase/);
  });
  it('non-numeric values', () => {
    expectSweepError(() => parseTouchstone('# MHz S RI R 50\n900 0.1 0\n910 abc 0\n'), 3, /real part "abc" is not a number/);
    expectSweepError(() => parseSweepCsv('freq_mhz,vswr\n900,1.5\n910,n/a\n'), 3, /VSWR "n\/a" is not a number/);
    expectSweepError(() => parseTouchstone('# MHz S RI R fifty\n'), 1, /reference resistance/);
  });
  it('|S11| above 1 and a wrong value count', () => {
    expectSweepError(() => parseTouchstone('# MHz S MA R 50\n900 1.8 0\n'), 2, /above 1/);
    expectSweepError(() => parseTouchstone('# MHz S MA R 50\n900 0.5\n'), 2, /3 values/);
  });
  it('a sweep that misses the band names the first or last line', () => {
    const sweep = parseTouchstone(touchstone(antenna, 'RI', { fromMhz: 840, toMhz: 880, stepMhz: 1 }));
    expectSweepError(() => analyseSweep({ sweep, bandId: 'us-902-928' }), 43, /misses the centre of us-902-928/);
  });
  it('a resonance outside the sweep says which way to sweep', () => {
    const sweep = parseTouchstone(touchstone(antenna, 'RI', { fromMhz: 910, toMhz: 940, stepMhz: 1 }));
    expectSweepError(() => analyseSweep({ sweep, bandId: 'us-902-928' }), 3, /below the sweep/);
  });
  it('unknown band, bought design and a bad length name the field', () => {
    const sweep = parseTouchstone(touchstone(antenna, 'RI', sweepRange));
    expect(() => analyseSweep({ sweep, bandId: 'mars-1' })).toThrow(TuningInputError);
    expect(() => analyseSweep({ sweep, bandId: 'us-902-928', designId: 'collinear-fibreglass-6dbi', lengthMm: 80 })).toThrow(/^design: .*ready-made/);
    expect(() => analyseSweep({ sweep, bandId: 'us-902-928', designId: 'half-wave-dipole', lengthMm: -1 })).toThrow(/^lengthMm: /);
  });
});
