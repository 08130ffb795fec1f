// Reading an antenna sweep: a one-port Touchstone file (.s1p) or a CSV of
// frequency and VSWR / return loss. Pure: text in, points out; every problem is
// a SweepFileError naming the line (1-based) so an installer can fix the file.
//
// Touchstone (the open Touchstone File Format Specification, version 1.1 and the
// keyword lines of 2.0), as implemented here:
//   - `!` starts a comment anywhere on a line;
//   - the option line `# <unit> <parameter> <format> R <n>`: fields in any
//     order, case-insensitive, each optional; defaults GHz, S, MA, R 50
//     (the specification's defaults); only the first option line counts;
//   - one-port data lines: frequency and two numbers (RI: real, imaginary;
//     MA: magnitude, angle in degrees; DB: 20·log10|S11| in dB, angle);
//   - Z and Y one-port data are normalised to R (version 1.x) and converted
//     to Γ = (z − 1)/(z + 1), Γ = (1 − y)/(1 + y); H and G are two-port only;
//   - frequencies must strictly increase (the specification requires
//     ascending order; a repeated frequency is an error too).

import { mismatchFromVswr, reflectionFromReturnLossDb } from '../radio/mismatch.ts';

export class SweepFileError extends Error {
  readonly line: number | null;
  constructor(line: number | null, message: string) {
    super(line === null ? message : `line ${line}: ${message}`);
    this.line = line;
  }
}

export interface SweepPoint {
  frequencyMhz: number;
  /** |Γ| (= |S11|) as measured. */
  gammaMagnitude: number;
  /** Complex Γ where the file carries phase (Touchstone); absent for VSWR/return-loss CSV. */
  gammaRe?: number;
  gammaIm?: number;
  /** 1-based line of the file the point came from. */
  line: number;
}

export interface Sweep {
  source: 'touchstone' | 'csv';
  /** What the file said its data were, e.g. "S MA R 50" or "VSWR". */
  description: string;
  referenceOhm: number;
  points: SweepPoint[];
}

/** Most points a sweep may hold (hand-held analysers give 100–10 000). */
export const MAX_SWEEP_POINTS = 100_000;
/** |Γ| a little above 1 is calibration error on a passive antenna; more than this is not an antenna sweep. */
const MAX_PASSIVE_GAMMA = 1.05;

const UNIT_TO_MHZ: Record<string, number> = { HZ: 1e-6, KHZ: 1e-3, MHZ: 1, GHZ: 1e3 };
const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

function numberAt(token: string, line: number, what: string): number {
  if (!NUMBER.test(token)) throw new SweepFileError(line, `${what} "${token}" is not a number`);
  return Number(token);
}

/** Sweep from file text: CSV when the name ends in .csv or the text has no option line and commas in its data; Touchstone otherwise. */
export function parseSweep(text: string, fileName = ''): Sweep {
  const lower = fileName.toLowerCase();
  if (lower.endsWith('.csv')) return parseSweepCsv(text);
  if (/\.s[2-9]p$/.test(lower) || /\.s\d\dp$/.test(lower)) {
    throw new SweepFileError(null, `"${fileName}" is a multi-port Touchstone file; tune reads one-port sweeps (.s1p, S11 of the antenna)`);
  }
  if (lower.endsWith('.s1p') || /^\s*[#[]/m.test(text.split('\n').find((l) => l.trim() !== '' && !l.trim().startsWith('!')) ?? '')) return parseTouchstone(text);
  const firstData = text.split('\n').find((l) => l.trim() !== '' && !l.trim().startsWith('!') && !l.trim().startsWith('#'));
  if (firstData?.includes(',')) return parseSweepCsv(text);
  return parseTouchstone(text);
}

function gammaFrom(parameter: string, re: number, im: number): { re: number; im: number } {
  if (parameter === 'S') return { re, im };
  // Normalised impedance z = re + j·im → Γ = (z − 1)/(z + 1); admittance y → Γ = (1 − y)/(1 + y).
  const [nr, ni, dr, di] = parameter === 'Z' ? [re - 1, im, re + 1, im] : [1 - re, -im, 1 + re, im];
  const d = dr * dr + di * di;
  return { re: (nr * dr + ni * di) / d, im: (ni * dr - nr * di) / d };
}

/** One-port Touchstone (.s1p) text → sweep. */
export function parseTouchstone(text: string): Sweep {
  const lines = text.split(/\r?\n/);
  let unit = 'GHZ';
  let parameter = 'S';
  let format = 'MA';
  let referenceOhm = 50;
  let optionSeen = false;
  let declaredPoints: number | null = null;
  let inData = true;
  const points: SweepPoint[] = [];
  for (let i = 0; i < lines.length; i++) {
    const lineNo = i + 1;
    const content = lines[i].split('!')[0].trim();
    if (content === '') continue;
    if (content.startsWith('[')) {
      // Touchstone 2.0 keyword lines.
      const match = /^\[([^\]]+)\]\s*(.*)$/.exec(content);
      if (!match) throw new SweepFileError(lineNo, `keyword line "${content}" has no closing ]`);
      const keyword = match[1].trim().toLowerCase();
      const value = match[2].trim();
      if (keyword === 'number of ports') {
        if (value !== '1') throw new SweepFileError(lineNo, `[Number of Ports] ${value}: tune reads one-port sweeps (S11 of the antenna), not ${value}-port data`);
      } else if (keyword === 'number of frequencies') {
        declaredPoints = numberAt(value, lineNo, '[Number of Frequencies]');
      } else if (keyword === 'reference') {
        referenceOhm = numberAt(value.split(/\s+/)[0] ?? '', lineNo, '[Reference]');
      } else if (keyword === 'end') {
        inData = false;
      }
      // [Version], [Network Data] and the rest carry nothing a one-port sweep needs.
      continue;
    }
    if (content.startsWith('#')) {
      if (optionSeen) continue; // The specification: later option lines are ignored.
      optionSeen = true;
      const tokens = content.slice(1).trim().split(/\s+/).filter(Boolean).map((t) => t.toUpperCase());
      for (let t = 0; t < tokens.length; t++) {
        const token = tokens[t];
        if (token in UNIT_TO_MHZ) unit = token;
        else if (token === 'S' || token === 'Y' || token === 'Z') parameter = token;
        else if (token === 'H' || token === 'G') throw new SweepFileError(lineNo, `option line: ${token} parameters describe two-port networks; tune reads one-port S, Z or Y data`);
        else if (token === 'RI' || token === 'MA' || token === 'DB') format = token;
        else if (token === 'R') {
          const value = tokens[t + 1];
          if (value === undefined) throw new SweepFileError(lineNo, 'option line: R must be followed by the reference resistance in ohms');
          referenceOhm = numberAt(value, lineNo, 'reference resistance');
          if (!(referenceOhm > 0)) throw new SweepFileError(lineNo, `option line: reference resistance must be positive (got ${value})`);
          t++;
        } else throw new SweepFileError(lineNo, `option line: "${token}" is not a Touchstone option (expected Hz/kHz/MHz/GHz, S/Y/Z, RI/MA/DB, R <ohms>)`);
      }
      continue;
    }
    if (!inData) continue;
    const tokens = content.split(/[\s,]+/).filter(Boolean);
    if (!optionSeen) {
      throw new SweepFileError(lineNo, 'not a Touchstone file: data before the option line ("# <Hz|kHz|MHz|GHz> S <RI|MA|DB> R <ohms>")');
    }
    if (tokens.length === 9) throw new SweepFileError(lineNo, 'nine values on a data line: this is two-port data (.s2p); tune reads one-port sweeps (.s1p, S11 of the antenna)');
    if (tokens.length !== 3) throw new SweepFileError(lineNo, `one-port data lines hold 3 values (frequency and two parts of S11), found ${tokens.length}`);
    const frequencyMhz = numberAt(tokens[0], lineNo, 'frequency') * UNIT_TO_MHZ[unit];
    const a = numberAt(tokens[1], lineNo, format === 'RI' ? 'real part' : format === 'DB' ? 'magnitude (dB)' : 'magnitude');
    const b = numberAt(tokens[2], lineNo, format === 'RI' ? 'imaginary part' : 'angle');
    let re: number;
    let im: number;
    if (format === 'RI') {
      re = a;
      im = b;
    } else {
      // MA: |S|∠θ; DB: 20·log10|S| dB ∠θ (Touchstone specification), θ in degrees.
      const magnitude = format === 'DB' ? 10 ** (a / 20) : a;
      if (format === 'MA' && magnitude < 0) throw new SweepFileError(lineNo, `magnitude ${tokens[1]} is negative`);
      const angle = (b * Math.PI) / 180;
      re = magnitude * Math.cos(angle);
      im = magnitude * Math.sin(angle);
    }
    const gamma = gammaFrom(parameter, re, im);
    const gammaMagnitude = Math.hypot(gamma.re, gamma.im);
    if (!Number.isFinite(gammaMagnitude)) throw new SweepFileError(lineNo, 'the values give no finite reflection coefficient');
    if (gammaMagnitude > MAX_PASSIVE_GAMMA) throw new SweepFileError(lineNo, `|S11| = ${gammaMagnitude.toFixed(3)} is above 1: not the sweep of a passive antenna (check the format: ${format})`);
    addPoint(points, { frequencyMhz, gammaMagnitude, gammaRe: gamma.re, gammaIm: gamma.im, line: lineNo }, lineNo);
  }
  if (!optionSeen && points.length === 0) throw new SweepFileError(null, 'not a Touchstone file: no option line ("# MHz S RI R 50") and no data');
  if (points.length < 3) throw new SweepFileError(null, `a sweep needs at least 3 points (found ${points.length})`);
  if (declaredPoints !== null && declaredPoints !== points.length) {
    throw new SweepFileError(null, `[Number of Frequencies] says ${declaredPoints} but the file holds ${points.length} data lines`);
  }
  return { source: 'touchstone', description: `${parameter} ${format} R ${referenceOhm}`, referenceOhm, points };
}

function addPoint(points: SweepPoint[], point: SweepPoint, lineNo: number): void {
  if (!(point.frequencyMhz > 0)) throw new SweepFileError(lineNo, `frequency must be positive (got ${point.frequencyMhz} MHz)`);
  const previous = points[points.length - 1];
  if (previous && point.frequencyMhz === previous.frequencyMhz) throw new SweepFileError(lineNo, `frequency ${point.frequencyMhz} MHz repeats line ${previous.line}`);
  if (previous && point.frequencyMhz < previous.frequencyMhz) throw new SweepFileError(lineNo, `frequency ${point.frequencyMhz} MHz is below ${previous.frequencyMhz} MHz on line ${previous.line}: frequencies must increase`);
  if (points.length >= MAX_SWEEP_POINTS) throw new SweepFileError(lineNo, `more than ${MAX_SWEEP_POINTS} points`);
  points.push(point);
}

type CsvColumn = 'vswr' | 'returnLoss' | 's11Db';

/**
 * CSV of frequency and VSWR or return loss. A header row names the columns:
 * the frequency column contains "freq" and may carry its unit ("frequency_mhz",
 * "Freq (Hz)"; MHz when none), the value column "vswr", "return loss"/"rl" (positive dB)
 * or "s11" (dB, negative). With no header: two columns, MHz and VSWR.
 */
export function parseSweepCsv(text: string): Sweep {
  const lines = text.split(/\r?\n/);
  let unit = 'MHZ';
  let column: CsvColumn = 'vswr';
  let frequencyIndex = 0;
  let valueIndex = 1;
  let headerSeen = false;
  const points: SweepPoint[] = [];
  for (let i = 0; i < lines.length; i++) {
    const lineNo = i + 1;
    const content = lines[i].trim();
    if (content === '' || content.startsWith('#') || content.startsWith('!')) continue;
    const cells = content.split(/[,;\t]/).map((c) => c.trim().replace(/^"(.*)"$/, '$1'));
    if (!headerSeen && points.length === 0 && !NUMBER.test(cells[0])) {
      headerSeen = true;
      const names = cells.map((c) => c.toLowerCase());
      frequencyIndex = names.findIndex((n) => n.includes('freq'));
      if (frequencyIndex < 0) throw new SweepFileError(lineNo, `header "${content}" has no frequency column (a name containing "freq")`);
      const unitMatch = /(ghz|mhz|khz|hz)/.exec(names[frequencyIndex]);
      unit = unitMatch ? unitMatch[1].toUpperCase() : 'MHZ';
      valueIndex = names.findIndex((n) => n.includes('vswr') || n.includes('swr'));
      column = 'vswr';
      if (valueIndex < 0) {
        valueIndex = names.findIndex((n) => n.includes('return') || /^rl\b/.test(n));
        column = 'returnLoss';
      }
      if (valueIndex < 0) {
        valueIndex = names.findIndex((n) => n.includes('s11'));
        column = 's11Db';
      }
      if (valueIndex < 0) throw new SweepFileError(lineNo, `header "${content}" has no VSWR, return loss or S11 (dB) column`);
      continue;
    }
    if (cells.length <= Math.max(frequencyIndex, valueIndex)) throw new SweepFileError(lineNo, `expected at least ${Math.max(frequencyIndex, valueIndex) + 1} columns, found ${cells.length}`);
    const frequencyMhz = numberAt(cells[frequencyIndex], lineNo, 'frequency') * UNIT_TO_MHZ[unit];
    const value = numberAt(cells[valueIndex], lineNo, column === 'vswr' ? 'VSWR' : column === 'returnLoss' ? 'return loss' : 'S11');
    let gammaMagnitude: number;
    if (column === 'vswr') {
      if (value < 1) throw new SweepFileError(lineNo, `VSWR ${value} is below 1`);
      gammaMagnitude = mismatchFromVswr(value).reflectionCoefficient;
    } else {
      // Return loss RL = −20·log10|Γ| (positive dB); S11 in dB = −RL.
      const rl = column === 'returnLoss' ? Math.abs(value) : -value;
      if (rl < 0) throw new SweepFileError(lineNo, `S11 of ${value} dB is above 0 dB: not the sweep of a passive antenna`);
      gammaMagnitude = rl === 0 ? 1 : reflectionFromReturnLossDb(rl);
    }
    addPoint(points, { frequencyMhz, gammaMagnitude, line: lineNo }, lineNo);
  }
  if (points.length < 3) throw new SweepFileError(null, `a sweep needs at least 3 points (found ${points.length})`);
  const description = column === 'vswr' ? 'VSWR' : column === 'returnLoss' ? 'return loss (dB)' : 'S11 (dB)';
  return { source: 'csv', description, referenceOhm: 50, points };
}
