// Mast and mounting options for a kit. Heights are the antenna height above the
// mounting base (ground for ground-mounted masts, the roof or wall for the others).
// Prices are illustrative list prices, not quotes.

export type MastMounting = 'ground' | 'roof' | 'wall';

export interface MastOption {
  id: string;
  name: string;
  mounting: MastMounting;
  /** Antenna height above the mounting base, m. */
  heightM: number;
  costUsd: number;
  priceNote: string;
  /** Needs guy wires at this height. */
  guyed: boolean;
  /** Usually needs a professional installer (height, permits, structural checks). */
  professionalInstall: boolean;
  notes: string[];
  cautions: string[];
}

const PRICE_NOTE = 'illustrative list price, not a quote';

/** Cautions that apply to any work at height on masts, roofs and walls (common practice; local codes win). */
export const WORK_AT_HEIGHT_CAUTIONS: readonly string[] = [
  'Work at height can kill: use fall protection and never climb or raise a mast alone; follow local work-at-height rules.',
  'Look up before raising a mast: keep well clear of overhead power lines (at least the mast height plus a margin in every direction).',
  'Bond the mast and the coax shield to a proper ground and fit a surge arrestor; follow local electrical and lightning-protection codes.',
  'Do not work on masts or roofs in wind, rain, ice or when thunder is heard.',
  'Check local permits, planning rules and the structure\'s capacity (wind load) before fixing to a building.',
];

function mast(spec: Omit<MastOption, 'priceNote' | 'cautions'> & { cautions?: string[] }): MastOption {
  return { ...spec, priceNote: PRICE_NOTE, cautions: [...(spec.cautions ?? []), ...WORK_AT_HEIGHT_CAUTIONS] };
}

export const builtInMastOptions: MastOption[] = [
  mast({ id: 'stake-1-5m', name: 'Field stake, 1.5 m', mounting: 'ground', heightM: 1.5, costUsd: 25, guyed: false, professionalInstall: false, notes: ['Typical soil-probe or meter node; keep clear of machinery paths.'] }),
  mast({ id: 'pole-3m', name: 'Galvanised pole, 3 m', mounting: 'ground', heightM: 3, costUsd: 70, guyed: false, professionalInstall: false, notes: ['Set in concrete or on a fence post.'] }),
  mast({ id: 'wall-bracket-1m', name: 'Wall bracket, 1 m stand-off', mounting: 'wall', heightM: 1, costUsd: 35, guyed: false, professionalInstall: false, notes: ['Keep the antenna clear of the wall by at least a quarter wavelength.'] }),
  mast({ id: 'roof-tripod-2m', name: 'Roof tripod, 2 m', mounting: 'roof', heightM: 2, costUsd: 120, guyed: false, professionalInstall: false, notes: ['Ballasted or bolted; check the roof membrane and load.'] }),
  mast({ id: 'telescopic-6m', name: 'Telescopic push-up mast, 6 m', mounting: 'ground', heightM: 6, costUsd: 180, guyed: true, professionalInstall: false, notes: ['One set of guys at about two thirds of the height.'] }),
  mast({ id: 'telescopic-10m', name: 'Telescopic push-up mast, 10 m', mounting: 'ground', heightM: 10, costUsd: 350, guyed: true, professionalInstall: false, notes: ['Two sets of guys; raise with two people.'] }),
  mast({ id: 'lattice-15m', name: 'Lattice tower, 15 m', mounting: 'ground', heightM: 15, costUsd: 2500, guyed: true, professionalInstall: true, notes: ['Foundation and permit usually needed.'], cautions: ['Climbing a tower needs trained climbers with fall-arrest equipment.'] }),
  mast({ id: 'lattice-24m', name: 'Lattice tower, 24 m', mounting: 'ground', heightM: 24, costUsd: 6000, guyed: true, professionalInstall: true, notes: ['Foundation, permit and possibly aviation marking needed.'], cautions: ['Climbing a tower needs trained climbers with fall-arrest equipment.'] }),
];

export function findMastOption(id: string): MastOption {
  const found = builtInMastOptions.find((m) => m.id === id);
  if (!found) throw new RangeError(`unknown mast option "${id}" (known: ${builtInMastOptions.map((m) => m.id).join(', ')})`);
  return found;
}
