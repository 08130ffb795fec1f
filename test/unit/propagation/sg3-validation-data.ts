// Reader for the ITU-R Study Group 3 P.1812 validation examples kept OUTSIDE the
// repository in ../shared/reference/p1812/ (profiles/NAME.csv, results/NAME_K_log.csv).
// The files are read in place and never copied (their layout: shared/reference/README.md).
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { pathCentreLatitudeDeg, type P1812Input } from '../../../server/propagation/p1812/index.ts';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
/** Where the validation examples live: beside the checkout, never inside it. */
/** (EARSHOT_SG3_P1812_DIR points elsewhere, e.g. from a worktree one level deeper.) */
export const SG3_P1812_DIR = process.env.EARSHOT_SG3_P1812_DIR ?? path.resolve(repoRoot, '../shared/reference/p1812');

export interface Sg3Profile {
  distanceKm: number[];
  heightM: number[];
  clutterHeightM: number[];
  zone: number[];
}

export interface Sg3Case {
  name: string;
  profileName: string;
  profile: Sg3Profile;
  /** Row values keyed "Label|Ref" (e.g. "Lbfs|Eq (8)"), plus the bare label for the first occurrence. */
  values: Map<string, number>;
  input: P1812Input;
}

export function sg3DataPresent(): boolean {
  return fs.existsSync(path.join(SG3_P1812_DIR, 'results')) && fs.existsSync(path.join(SG3_P1812_DIR, 'profiles'));
}

export function readSg3Profile(file: string): Sg3Profile {
  const lines = fs.readFileSync(file, 'utf8').split(/\r?\n/);
  const start = lines.findIndex((line) => line.startsWith('{Begin of Profile}'));
  const out: Sg3Profile = { distanceKm: [], heightM: [], clutterHeightM: [], zone: [] };
  for (let i = start + 2; i < lines.length && !lines[i].startsWith('{End of Profile}'); i++) {
    const cells = lines[i].split(',');
    out.distanceKm.push(Number(cells[0]));
    out.heightM.push(Number(cells[1]));
    out.clutterHeightM.push(Number(cells[3]));
    out.zone.push(Number(cells[4]));
  }
  return out;
}

export function readSg3Log(file: string): Map<string, number> {
  const values = new Map<string, number>();
  for (const line of fs.readFileSync(file, 'utf8').split(/\r?\n/)) {
    if (line.startsWith('#') || line.trim() === '') continue;
    const cells = line.split(',');
    if (line.startsWith('Ep (dBuV/m) w.r.t.')) {
      // "Ep (dBuV/m) w.r.t. Ptx, Gtx, Grx,,,VALUE,": the label itself holds commas.
      const value = Number(cells[5]);
      if (Number.isFinite(value)) values.set('Ep w.r.t. Ptx', value);
      continue;
    }
    const label = cells[0].replace(/\s*\(.*\)\s*$/, '').trim();
    const ref = (cells[1] ?? '').trim();
    const value = Number(cells[3]);
    if (label === '' || cells[3] === undefined || cells[3].trim() === '' || !Number.isFinite(value)) continue;
    values.set(`${label}|${ref}`, value);
    if (!values.has(label)) values.set(label, value);
  }
  return values;
}

function need(values: Map<string, number>, key: string, file: string): number {
  const value = values.get(key);
  if (value === undefined) throw new Error(`${file}: no row "${key}"`);
  return value;
}

/** Every provided case: result logs paired with their profile. */
export function readSg3Cases(): Sg3Case[] {
  const resultsDir = path.join(SG3_P1812_DIR, 'results');
  const files = fs.readdirSync(resultsDir).filter((name) => name.endsWith('_log.csv')).sort();
  return files.map((file) => {
    const name = file.replace(/_log\.csv$/, '');
    const profileName = name.replace(/_\d+$/, '');
    const profile = readSg3Profile(path.join(SG3_P1812_DIR, 'profiles', `${profileName}.csv`));
    const values = readSg3Log(path.join(resultsDir, file));
    const v = (key: string) => need(values, key, file);
    const input: P1812Input = {
      frequencyMhz: v('f') * 1000,
      timePercent: v('p'),
      locationPercent: v('pL'),
      locationSigmaDb: v('sigmaL'),
      polarisation: v('pol') === 2 ? 'vertical' : 'horizontal',
      deltaN: v('DN'),
      n0: v('N0'),
      txCoastDistanceKm: v('dct'),
      rxCoastDistanceKm: v('dcr'),
      txHeightAglM: v('htg'),
      rxHeightAglM: v('hrg'),
      pathCentreLatDeg: pathCentreLatitudeDeg(v('phi_t'), v('lam_t'), v('phi_r'), v('lam_r'), profile.distanceKm[profile.distanceKm.length - 1]),
      distanceKm: Float64Array.from(profile.distanceKm),
      heightM: Float64Array.from(profile.heightM),
      clutterHeightM: Float64Array.from(profile.clutterHeightM),
      zone: Uint8Array.from(profile.zone),
      erpDbm: 60 + 10 * Math.log10(v('Ptx')),
    };
    return { name, profileName, profile, values, input };
  });
}
