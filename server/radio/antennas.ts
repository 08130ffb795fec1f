// Antenna designs: the built-in catalog, the radiation-pattern model, gain
// toward a direction, and import of a pattern from earshot's own CSV/JSON layout.
//
// Pattern model: a pattern is two cuts, each sampled in degrees and given in dB
// relative to the peak gain (≤ 0):
//   - elevation cut: −90° (straight down) … +90° (straight up), 0° = horizon;
//   - azimuth cut (directional antennas only): −180° … +180° off boresight.
// Gain toward (azimuth, elevation) = peak gain + azimuth cut(az − boresight)
// + elevation cut(el), linearly interpolated between samples: the usual
// separable approximation of a 3-D pattern from two principal cuts.
// Omnidirectional antennas have no azimuth cut (same gain all round).
//
// Gains, VSWR and cost are common practice for each generic kind; prices are
// illustrative list prices, not quotes.

export type AntennaKind =
  | 'helical-stub'
  | 'ground-plane'
  | 'dipole'
  | 'disc-ground-plane'
  | 'collinear'
  | 'inverted-f'
  | 'yagi'
  | 'panel'
  | 'custom';

export type Polarization = 'vertical' | 'horizontal' | 'circular' | 'mixed';

export interface PatternCut {
  angleDeg: number[];
  /** Gain relative to the peak, dB (≤ 0 by construction). */
  relativeDb: number[];
}

export interface AntennaPattern {
  kind: 'omni' | 'directional';
  elevation: PatternCut;
  /** Present for directional antennas: relative to boresight, −180…+180. */
  azimuth?: PatternCut;
}

export interface AntennaDesign {
  /** Stable id (kit catalogs and build sheets refer to it). */
  id: string;
  name: string;
  kind: AntennaKind;
  /** Peak gain, dBi. */
  gainDbi: number;
  pattern: AntennaPattern;
  polarization: Polarization;
  /** Usable band. */
  bandMhz: { fromMhz: number; toMhz: number };
  /** Typical VSWR across the usable band (50 Ω feed). */
  typicalVswr: number;
  /** 1 (cheapest) … 5 (dearest). */
  relativeCost: number;
  costUsd: number;
  priceNote: string;
  homemade: boolean;
  /** Build sheet id for buildSheet(), when an installer makes it by hand. */
  buildSheetId?: string;
  /** Where the gain/VSWR figures come from. */
  source: string;
  notes: string[];
}

const PRICE_NOTE = 'illustrative list price, not a quote';
/** Band the bought antennas here are sold for (the common "868/915 MHz" wide-band versions). */
const SUB_GHZ_ISM = { fromMhz: 863, toMhz: 928 };
/** Frequencies the hand-built sheets scale to: 433, 470–510, 863–870 and 902–928 MHz bands. */
const BUILDABLE = { fromMhz: 430, toMhz: 930 };

const DEG = Math.PI / 180;

function sampleCut(fromDeg: number, toDeg: number, stepDeg: number, relativeDbAt: (angleDeg: number) => number): PatternCut {
  const angleDeg: number[] = [];
  const relativeDb: number[] = [];
  for (let a = fromDeg; a <= toDeg + 1e-9; a += stepDeg) {
    angleDeg.push(a);
    relativeDb.push(Math.max(-40, relativeDbAt(a)));
  }
  const peak = Math.max(...relativeDb);
  return { angleDeg, relativeDb: relativeDb.map((v) => Math.round((v - peak) * 100) / 100) };
}

/** Vertical half-wave dipole, elevation cut: E = cos(π/2·sin el)/cos el (standard dipole field pattern). */
function dipoleElevationDb(elevationDeg: number): number {
  const el = elevationDeg * DEG;
  const c = Math.cos(el);
  if (c < 1e-6) return -40;
  const e = Math.cos((Math.PI / 2) * Math.sin(el)) / c;
  return 20 * Math.log10(Math.max(e, 1e-4));
}

/** Parabolic main lobe, −12·(θ/θ3dB)² dB, floored at `floorDb` (common practice approximation). */
function parabolicDb(offsetDeg: number, halfPowerBeamwidthDeg: number, floorDb: number): number {
  return Math.max(-12 * (offsetDeg / halfPowerBeamwidthDeg) ** 2, floorDb);
}

/**
 * Omni elevation cut for a given peak gain: the dipole shape for gains up to a dipole's,
 * a parabolic lobe whose vertical beamwidth halves with each doubling of gain over a dipole
 * (78° for 0 dBd: common practice) for collinears, plus an optional upward tilt (ground planes).
 */
function omniElevation(gainDbi: number, tiltUpDeg = 0): PatternCut {
  const gainDbd = gainDbi - 2.15;
  if (gainDbd <= 0.5) return sampleCut(-90, 90, 1, (el) => dipoleElevationDb(el - tiltUpDeg));
  const beamwidthDeg = 78 / 10 ** (gainDbd / 10);
  return sampleCut(-90, 90, 1, (el) => parabolicDb(el - tiltUpDeg, beamwidthDeg, -25));
}

/** Directional pattern from half-power beamwidths and front-to-back ratio (parabolic lobes, common practice). */
function directionalPattern(azimuthBeamwidthDeg: number, elevationBeamwidthDeg: number, frontToBackDb: number): AntennaPattern {
  return {
    kind: 'directional',
    azimuth: sampleCut(-180, 180, 1, (az) => parabolicDb(az, azimuthBeamwidthDeg, -frontToBackDb)),
    elevation: sampleCut(-90, 90, 1, (el) => parabolicDb(el, elevationBeamwidthDeg, -frontToBackDb)),
  };
}

export const builtInAntennaDesigns: AntennaDesign[] = [
  {
    id: 'helical-stub',
    name: 'Helical stub (module antenna)',
    kind: 'helical-stub',
    gainDbi: -2,
    pattern: { kind: 'omni', elevation: omniElevation(-2) },
    polarization: 'vertical',
    bandMhz: SUB_GHZ_ISM,
    typicalVswr: 2.0,
    relativeCost: 1,
    costUsd: 4,
    priceNote: PRICE_NOTE,
    homemade: false,
    source: 'common practice: electrically short helix, low efficiency, gain about −3 to 0 dBi',
    notes: ['Ships with most radio modules; fine on the bench, weak in the field.', 'Detunes near metal and hands.'],
  },
  {
    id: 'quarter-wave-ground-plane',
    name: 'Quarter-wave ground plane, 4 horizontal radials',
    kind: 'ground-plane',
    gainDbi: 2,
    pattern: { kind: 'omni', elevation: omniElevation(2, 10) },
    polarization: 'vertical',
    bandMhz: BUILDABLE,
    typicalVswr: 1.4,
    relativeCost: 1,
    costUsd: 12,
    priceNote: PRICE_NOTE,
    homemade: true,
    buildSheetId: 'quarter-wave-ground-plane',
    source: 'common practice: about 2 dBi; feed impedance about 37 Ω with horizontal radials (VSWR ≈ 1.35 on 50 Ω)',
    notes: ['Peak tilts slightly above the horizon with a small radial set.'],
  },
  {
    id: 'quarter-wave-ground-plane-drooped',
    name: 'Quarter-wave ground plane, 4 radials drooped 45°',
    kind: 'ground-plane',
    gainDbi: 2,
    pattern: { kind: 'omni', elevation: omniElevation(2, 5) },
    polarization: 'vertical',
    bandMhz: BUILDABLE,
    typicalVswr: 1.2,
    relativeCost: 1,
    costUsd: 12,
    priceNote: PRICE_NOTE,
    homemade: true,
    buildSheetId: 'quarter-wave-ground-plane-drooped',
    source: 'common practice: drooping the radials to about 45° raises the feed impedance from about 37 Ω toward 50 Ω',
    notes: [],
  },
  {
    id: 'half-wave-dipole',
    name: 'Half-wave dipole, vertical',
    kind: 'dipole',
    gainDbi: 2.15,
    pattern: { kind: 'omni', elevation: omniElevation(2.15) },
    polarization: 'vertical',
    bandMhz: BUILDABLE,
    typicalVswr: 1.5,
    relativeCost: 1,
    costUsd: 10,
    priceNote: PRICE_NOTE,
    homemade: true,
    buildSheetId: 'half-wave-dipole',
    source: 'standard antenna theory: 2.15 dBi, about 73 Ω feed impedance in free space',
    notes: ['Use a choke (ferrite or coiled coax) at the feed: the dipole is balanced, coax is not.'],
  },
  {
    id: 'disc-ground-plane',
    name: 'Quarter-wave whip on a metal disc / bowl',
    kind: 'disc-ground-plane',
    gainDbi: 2.5,
    pattern: { kind: 'omni', elevation: omniElevation(2.5, 15) },
    polarization: 'vertical',
    bandMhz: BUILDABLE,
    typicalVswr: 1.6,
    relativeCost: 1,
    costUsd: 15,
    priceNote: PRICE_NOTE,
    homemade: true,
    buildSheetId: 'disc-ground-plane',
    source: 'common practice: a disc at least half a wavelength across acts as the ground plane; peak tilts upward',
    notes: ['A tank lid or a metal bowl works as the disc.'],
  },
  {
    id: 'collinear-fibreglass-6dbi',
    name: 'Fibreglass collinear, 6 dBi',
    kind: 'collinear',
    gainDbi: 6,
    pattern: { kind: 'omni', elevation: omniElevation(6) },
    polarization: 'vertical',
    bandMhz: SUB_GHZ_ISM,
    typicalVswr: 1.5,
    relativeCost: 3,
    costUsd: 90,
    priceNote: PRICE_NOTE,
    homemade: false,
    source: 'common practice: fibreglass collinears are sold at 5–8 dBi; vertical beamwidth ≈ 78°/10^(gain dBd/10)',
    notes: ['Narrower vertical beam: nodes right below a tall gateway may sit in a null.'],
  },
  {
    id: 'collinear-fibreglass-8dbi',
    name: 'Fibreglass collinear, 8 dBi',
    kind: 'collinear',
    gainDbi: 8,
    pattern: { kind: 'omni', elevation: omniElevation(8) },
    polarization: 'vertical',
    bandMhz: SUB_GHZ_ISM,
    typicalVswr: 1.5,
    relativeCost: 4,
    costUsd: 150,
    priceNote: PRICE_NOTE,
    homemade: false,
    source: 'common practice: fibreglass collinears are sold at 5–8 dBi; vertical beamwidth ≈ 78°/10^(gain dBd/10)',
    notes: ['Check the legal EIRP: with 8 dBi a high conducted power can exceed the band limit.'],
  },
  {
    id: 'pcb-inverted-f',
    name: 'PCB inverted-F (printed on the node board)',
    kind: 'inverted-f',
    gainDbi: 0,
    pattern: { kind: 'omni', elevation: omniElevation(0) },
    polarization: 'mixed',
    bandMhz: BUILDABLE,
    typicalVswr: 2.0,
    relativeCost: 1,
    costUsd: 0,
    priceNote: PRICE_NOTE,
    homemade: true,
    buildSheetId: 'pcb-inverted-f',
    source: 'common practice: printed inverted-F at sub-GHz, efficiency 40–70 %, peak gain about −2 to +1 dBi',
    notes: ['Pattern and polarisation depend on the board, enclosure and battery; measure in place.'],
  },
  {
    id: 'yagi-5-element',
    name: 'Yagi, 5 elements',
    kind: 'yagi',
    gainDbi: 9,
    pattern: directionalPattern(60, 55, 15),
    polarization: 'vertical',
    bandMhz: SUB_GHZ_ISM,
    typicalVswr: 1.5,
    relativeCost: 3,
    costUsd: 60,
    priceNote: PRICE_NOTE,
    homemade: false,
    source: 'common practice: a 5-element Yagi gives about 9 dBi, beamwidth about 60°, front-to-back about 15 dB',
    notes: ['Aim at one gateway; mount elements vertical for vertical polarisation.'],
  },
  {
    id: 'panel-8dbi',
    name: 'Flat panel, 8 dBi',
    kind: 'panel',
    gainDbi: 8,
    pattern: directionalPattern(70, 60, 20),
    polarization: 'vertical',
    bandMhz: SUB_GHZ_ISM,
    typicalVswr: 1.5,
    relativeCost: 3,
    costUsd: 80,
    priceNote: PRICE_NOTE,
    homemade: false,
    source: 'common practice: sub-GHz flat panels give about 8 dBi, beamwidth about 70°, front-to-back about 20 dB',
    notes: ['Wall mount, aimed at the gateway.'],
  },
];

/** Raised for an unknown design id or a malformed design or pattern. */
export class AntennaDesignError extends Error {}

export function findAntennaDesign(id: string, designs: readonly AntennaDesign[] = builtInAntennaDesigns): AntennaDesign {
  const found = designs.find((d) => d.id === id);
  if (!found) throw new AntennaDesignError(`unknown antenna design "${id}" (known: ${designs.map((d) => d.id).join(', ')})`);
  return found;
}

/** Linear interpolation in a cut; angles outside the sampled span clamp to its ends. */
export function cutValueDb(cut: PatternCut, angleDeg: number): number {
  const a = cut.angleDeg;
  const v = cut.relativeDb;
  const n = a.length;
  if (n === 0) return 0;
  if (angleDeg <= a[0]) return v[0];
  if (angleDeg >= a[n - 1]) return v[n - 1];
  let lo = 0;
  let hi = n - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (a[mid] <= angleDeg) lo = mid;
    else hi = mid;
  }
  const t = (angleDeg - a[lo]) / (a[hi] - a[lo]);
  return v[lo] + t * (v[hi] - v[lo]);
}

/** Wraps an angle to −180 … +180 degrees. */
export function wrapDeg180(angleDeg: number): number {
  const wrapped = ((((angleDeg + 180) % 360) + 360) % 360) - 180;
  return wrapped === -180 && angleDeg > 0 ? 180 : wrapped;
}

/**
 * Gain (dBi) of a design toward a direction: `azimuthDeg` clockwise from north, `elevationDeg`
 * above the horizon (−90…90); `boresightAzimuthDeg` is where a directional antenna points (default 0).
 */
export function antennaGainDbi(
  design: Pick<AntennaDesign, 'gainDbi' | 'pattern'>,
  azimuthDeg: number,
  elevationDeg: number,
  boresightAzimuthDeg = 0,
): number {
  const elevation = Math.max(-90, Math.min(90, elevationDeg));
  let gain = design.gainDbi + cutValueDb(design.pattern.elevation, elevation);
  if (design.pattern.kind === 'directional' && design.pattern.azimuth) {
    gain += cutValueDb(design.pattern.azimuth, wrapDeg180(azimuthDeg - boresightAzimuthDeg));
  }
  return gain;
}

// ---------------------------------------------------------------------------
// Pattern import, earshot's own layouts (documented in server/radio/README.md).
//
// CSV: optional lines starting with '#', then a header line `cut,angle_deg,gain_dbi`,
// then one row per sample: cut is `elevation` or `azimuth`, angle in degrees
// (elevation −90…90, azimuth −180…180 off boresight), gain in dBi (absolute).
// JSON: { "format": "earshot-pattern-1", "elevation": [{"angleDeg", "gainDbi"}...],
//         "azimuth": [...] (optional) }
// The peak gain is the largest sample; cuts are stored relative to it.
// ---------------------------------------------------------------------------

export interface ImportedPattern {
  gainDbi: number;
  pattern: AntennaPattern;
}

export class PatternFormatError extends Error {}

interface RawSample {
  angleDeg: number;
  gainDbi: number;
}

function buildPattern(elevation: RawSample[], azimuth: RawSample[]): ImportedPattern {
  const check = (name: string, samples: RawSample[], min: number, max: number) => {
    if (samples.length < 2) throw new PatternFormatError(`${name} cut needs at least 2 samples (got ${samples.length})`);
    samples.sort((p, q) => p.angleDeg - q.angleDeg);
    for (let i = 0; i < samples.length; i++) {
      const s = samples[i];
      if (s.angleDeg < min || s.angleDeg > max) throw new PatternFormatError(`${name} angle ${s.angleDeg}° is outside ${min}…${max}°`);
      if (s.gainDbi < -60 || s.gainDbi > 30) throw new PatternFormatError(`${name} gain ${s.gainDbi} dBi at ${s.angleDeg}° is outside −60…30 dBi`);
      if (i > 0 && samples[i - 1].angleDeg === s.angleDeg) throw new PatternFormatError(`${name} angle ${s.angleDeg}° appears twice`);
    }
  };
  check('elevation', elevation, -90, 90);
  if (azimuth.length > 0) check('azimuth', azimuth, -180, 180);
  const all = [...elevation, ...azimuth];
  const peak = Math.max(...all.map((s) => s.gainDbi));
  const toCut = (samples: RawSample[]): PatternCut => ({
    angleDeg: samples.map((s) => s.angleDeg),
    relativeDb: samples.map((s) => s.gainDbi - peak),
  });
  // For a directional antenna both cuts pass through the peak; the azimuth cut is taken
  // relative to its own maximum so the separable model does not count the peak twice.
  if (azimuth.length > 0) {
    const elevationPeak = Math.max(...elevation.map((s) => s.gainDbi));
    const azimuthPeak = Math.max(...azimuth.map((s) => s.gainDbi));
    return {
      gainDbi: peak,
      pattern: {
        kind: 'directional',
        elevation: { angleDeg: elevation.map((s) => s.angleDeg), relativeDb: elevation.map((s) => s.gainDbi - elevationPeak) },
        azimuth: { angleDeg: azimuth.map((s) => s.angleDeg), relativeDb: azimuth.map((s) => s.gainDbi - azimuthPeak) },
      },
    };
  }
  return { gainDbi: peak, pattern: { kind: 'omni', elevation: toCut(elevation) } };
}

/** Parses a pattern in earshot's CSV layout (see above); errors name the line. */
export function parsePatternCsv(text: string): ImportedPattern {
  const lines = text.split(/\r?\n/);
  const elevation: RawSample[] = [];
  const azimuth: RawSample[] = [];
  let headerSeen = false;
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (line === '' || line.startsWith('#')) continue;
    const cells = line.split(',').map((c) => c.trim());
    if (!headerSeen) {
      if (cells.join(',').toLowerCase() !== 'cut,angle_deg,gain_dbi')
        throw new PatternFormatError(`line ${i + 1}: header must be "cut,angle_deg,gain_dbi"`);
      headerSeen = true;
      continue;
    }
    if (cells.length !== 3) throw new PatternFormatError(`line ${i + 1}: expected 3 columns (cut,angle_deg,gain_dbi), got ${cells.length}`);
    const [cut, angleText, gainText] = cells;
    const angleDeg = Number(angleText);
    const gainDbi = Number(gainText);
    if (angleText === '' || !Number.isFinite(angleDeg)) throw new PatternFormatError(`line ${i + 1}: angle_deg "${angleText}" is not a number`);
    if (gainText === '' || !Number.isFinite(gainDbi)) throw new PatternFormatError(`line ${i + 1}: gain_dbi "${gainText}" is not a number`);
    if (cut === 'elevation') elevation.push({ angleDeg, gainDbi });
    else if (cut === 'azimuth') azimuth.push({ angleDeg, gainDbi });
    else throw new PatternFormatError(`line ${i + 1}: cut must be "elevation" or "azimuth" (got "${cut}")`);
  }
  if (!headerSeen) throw new PatternFormatError('empty pattern: header "cut,angle_deg,gain_dbi" missing');
  return buildPattern(elevation, azimuth);
}

/** Parses a pattern in earshot's JSON layout (text or already-parsed value). */
export function parsePatternJson(input: string | unknown): ImportedPattern {
  let value: unknown = input;
  if (typeof input === 'string') {
    try {
      value = JSON.parse(input);
    } catch (error) {
      throw new PatternFormatError(`pattern JSON does not parse: ${(error as Error).message}`);
    }
  }
  if (typeof value !== 'object' || value === null) throw new PatternFormatError('pattern JSON must be an object');
  const record = value as Record<string, unknown>;
  if (record.format !== 'earshot-pattern-1') throw new PatternFormatError('pattern JSON "format" must be "earshot-pattern-1"');
  const readCut = (name: 'elevation' | 'azimuth', required: boolean): RawSample[] => {
    const raw = record[name];
    if (raw === undefined && !required) return [];
    if (!Array.isArray(raw)) throw new PatternFormatError(`pattern JSON "${name}" must be an array of {angleDeg, gainDbi}`);
    return raw.map((entry: unknown, index: number) => {
      const e = entry as Record<string, unknown> | null;
      if (!e || typeof e.angleDeg !== 'number' || !Number.isFinite(e.angleDeg) || typeof e.gainDbi !== 'number' || !Number.isFinite(e.gainDbi))
        throw new PatternFormatError(`pattern JSON ${name}[${index}] needs numeric angleDeg and gainDbi`);
      return { angleDeg: e.angleDeg, gainDbi: e.gainDbi };
    });
  };
  return buildPattern(readCut('elevation', true), readCut('azimuth', false));
}

export interface CustomAntennaInput {
  id: string;
  name: string;
  kind?: AntennaKind;
  imported: ImportedPattern;
  polarization?: Polarization;
  bandMhz: { fromMhz: number; toMhz: number };
  typicalVswr?: number;
  costUsd?: number;
  notes?: string[];
}

/** A user's own design from an imported pattern, validated at the door. */
export function customAntennaDesign(input: CustomAntennaInput): AntennaDesign {
  if (!/^[a-z0-9][a-z0-9-]{1,62}$/.test(input.id)) throw new AntennaDesignError('id must be 2–63 characters of a-z, 0-9 and "-"');
  if (!(input.bandMhz.fromMhz > 0) || !(input.bandMhz.toMhz > input.bandMhz.fromMhz))
    throw new AntennaDesignError('bandMhz needs 0 < fromMhz < toMhz');
  const vswr = input.typicalVswr ?? 1.5;
  if (!(vswr >= 1)) throw new AntennaDesignError('typicalVswr must be at least 1');
  if (builtInAntennaDesigns.some((d) => d.id === input.id)) throw new AntennaDesignError(`id "${input.id}" is a built-in design`);
  const cost = input.costUsd ?? 0;
  return {
    id: input.id,
    name: input.name,
    kind: input.kind ?? 'custom',
    gainDbi: input.imported.gainDbi,
    pattern: input.imported.pattern,
    polarization: input.polarization ?? 'vertical',
    bandMhz: { ...input.bandMhz },
    typicalVswr: vswr,
    relativeCost: cost < 20 ? 1 : cost < 50 ? 2 : cost < 120 ? 3 : cost < 300 ? 4 : 5,
    costUsd: cost,
    priceNote: 'entered by the user',
    homemade: false,
    source: 'user-supplied pattern',
    notes: input.notes ?? [],
  };
}
