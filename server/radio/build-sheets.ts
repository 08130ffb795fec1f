// Antenna build sheets for designs an installer makes by hand.
//
// Element lengths start from the free-space quarter wavelength λ/4 = c/(4f)
// times a velocity/end-effect factor K. The default K = 2832 / 2950.7
// (≈ 0.960) reproduces the trade's rule of 2832/f(MHz) inches for a
// quarter-wave element (common practice): 902 MHz → 3.140 in = 79.7 mm,
// 928 MHz → 3.052 in = 77.5 mm. Every sheet says: cut long, trim for VSWR
// below 2:1. These are starting dimensions, not a substitute for measuring.

import { bandPlans } from './band-plans.ts';
import { builtInAntennaDesigns } from './antennas.ts';
import { vswrOfResistiveLoad } from './mismatch.ts';

const SPEED_OF_LIGHT_M_S = 299_792_458;
const MM_PER_INCH = 25.4;
/** Free-space quarter wavelength in inches for f in MHz: c/(4·1e6·0.0254) ≈ 2950.7 / f. */
const QUARTER_WAVE_INCH_MHZ = SPEED_OF_LIGHT_M_S / 4 / 1e6 / (MM_PER_INCH / 1000);
/** Trade rule for a quarter-wave element: 2832/f(MHz) inches (common practice). */
export const TRADE_RULE_QUARTER_WAVE_INCH_MHZ = 2832;
export const DEFAULT_LENGTH_FACTOR = TRADE_RULE_QUARTER_WAVE_INCH_MHZ / QUARTER_WAVE_INCH_MHZ;
/** Radials are cut this much longer than the radiator (common practice: a few per cent). */
export const RADIAL_LENGTH_RATIO = 1.05;

export const BUILD_SHEET_IDS = [
  'quarter-wave-ground-plane',
  'quarter-wave-ground-plane-drooped',
  'half-wave-dipole',
  'disc-ground-plane',
  'pcb-inverted-f',
] as const;
export type BuildSheetId = (typeof BUILD_SHEET_IDS)[number];

export interface BuildElement {
  name: string;
  count: number;
  lengthMm: number;
  lengthIn: number;
  note?: string;
}

export interface BuildSheet {
  design: string;
  designName: string;
  frequencyMhz: number;
  wavelengthMm: number;
  lengthFactor: number;
  elements: BuildElement[];
  /** Construction and tuning advice. */
  notes: string[];
  cautions: string[];
  /** Estimated feed impedance before trimming (Ω), where the design has a simple estimate. */
  feedImpedanceOhm?: number;
  estimatedVswr?: number;
  radialCount?: number;
  droopDeg?: number;
  sources: string[];
}

export interface BuildSheetOptions {
  /** Velocity/end-effect factor on λ/4 (default reproduces 2832/f inches). */
  lengthFactor?: number;
  radialCount?: number;
  /** Radial droop below horizontal, degrees (ground planes). */
  droopDeg?: number;
  /** Relative permittivity of the board (PCB inverted-F), default 4.4 (FR-4). */
  boardPermittivity?: number;
}

export class BuildSheetError extends Error {}

const round = (value: number, digits: number) => Math.round(value * 10 ** digits) / 10 ** digits;

function element(name: string, count: number, lengthMm: number, note?: string): BuildElement {
  const result: BuildElement = { name, count, lengthMm: round(lengthMm, 2), lengthIn: round(lengthMm / MM_PER_INCH, 4) };
  if (note) result.note = note;
  return result;
}

const TUNING_NOTES = [
  'Cut every element about 5 % long, then trim a little at a time (1 mm at a time near 900 MHz) for VSWR below 2:1 at the working frequency.',
  'Trimming raises the resonant frequency: if the VSWR minimum sits below your frequency, trim; if above, the element is already too short — make a new one.',
  'Measure with the antenna in its final place (height, nearby metal and mast change the tuning), at low power.',
];

const CAUTIONS = [
  'Work at height: mount antennas from a stable platform with fall protection and never alone; keep clear of overhead power lines.',
  'Lightning and grounding: bond the mast and coax shield to ground and fit a surge arrestor; follow local electrical codes.',
  'RF exposure: do not touch or stand next to an antenna while it transmits; observe local exposure limits.',
  'Legal limits: antenna gain counts toward the radiated power limit (EIRP/ERP) of the band.',
];

/** Note on how far apart the element lengths are at the edges of the band plan containing the frequency. */
function bandSpreadNote(frequencyMhz: number, factor: number): string[] {
  const plan = bandPlans.find((p) => frequencyMhz >= p.fromMhz && frequencyMhz <= p.toMhz);
  if (!plan) return [];
  const lengthAt = (f: number) => (factor * SPEED_OF_LIGHT_M_S * 1000) / (4 * f * 1e6);
  const low = lengthAt(plan.fromMhz);
  const high = lengthAt(plan.toMhz);
  return [
    `${plan.name}: a quarter-wave element is ${low.toFixed(1)} mm at ${plan.fromMhz} MHz and ${high.toFixed(1)} mm at ${plan.toMhz} MHz, ${(low - high).toFixed(1)} mm apart, so one cut at mid-band serves the whole band with VSWR below 2:1 (common practice).`,
  ];
}

/** Estimated feed impedance of a quarter-wave ground plane vs radial droop: about 36.5 Ω flat, about 50 Ω at 45° (common practice, linear between). */
export function groundPlaneFeedImpedanceOhm(droopDeg: number): number {
  return 36.5 + ((50 - 36.5) * droopDeg) / 45;
}

/** Build sheet for a design at a frequency; throws BuildSheetError naming the problem. */
export function buildSheet(designId: string, frequencyMhz: number, options: BuildSheetOptions = {}): BuildSheet {
  if (!(BUILD_SHEET_IDS as readonly string[]).includes(designId)) {
    const known = builtInAntennaDesigns.find((d) => d.id === designId);
    if (known) throw new BuildSheetError(`design "${designId}" is bought ready-made, not built; build sheets exist for: ${BUILD_SHEET_IDS.join(', ')}`);
    throw new BuildSheetError(`unknown design "${designId}"; build sheets exist for: ${BUILD_SHEET_IDS.join(', ')}`);
  }
  const id = designId as BuildSheetId;
  const design = builtInAntennaDesigns.find((d) => d.buildSheetId === id);
  if (!design) throw new BuildSheetError(`no catalog design carries build sheet "${id}"`);
  if (!Number.isFinite(frequencyMhz) || frequencyMhz < design.bandMhz.fromMhz || frequencyMhz > design.bandMhz.toMhz)
    throw new BuildSheetError(
      `frequency ${frequencyMhz} MHz is outside the band of ${id}, which covers ${design.bandMhz.fromMhz}–${design.bandMhz.toMhz} MHz`,
    );
  const factor = options.lengthFactor ?? DEFAULT_LENGTH_FACTOR;
  if (!(factor >= 0.8 && factor <= 1.05)) throw new BuildSheetError(`length factor must be from 0.8 to 1.05 (got ${factor})`);

  const wavelengthMm = (SPEED_OF_LIGHT_M_S * 1000) / (frequencyMhz * 1e6);
  const quarterMm = (factor * wavelengthMm) / 4;
  const base = {
    design: id,
    designName: design.name,
    frequencyMhz,
    wavelengthMm: round(wavelengthMm, 2),
    lengthFactor: round(factor, 5),
    cautions: [...CAUTIONS],
  };
  const lengthSource = `element length = K·c/(4f) with K = ${factor.toFixed(4)}${options.lengthFactor === undefined ? ' (reproduces the trade rule 2832/f(MHz) inches: common practice)' : ' (given)'}`;

  if (id === 'quarter-wave-ground-plane' || id === 'quarter-wave-ground-plane-drooped') {
    const radialCount = options.radialCount ?? 4;
    if (!Number.isInteger(radialCount) || radialCount < 3 || radialCount > 16)
      throw new BuildSheetError(`radial count must be a whole number from 3 to 16 (got ${radialCount})`);
    const droopDeg = options.droopDeg ?? (id === 'quarter-wave-ground-plane-drooped' ? 45 : 0);
    if (!(droopDeg >= 0 && droopDeg <= 60)) throw new BuildSheetError(`droop must be from 0° to 60° below horizontal (got ${droopDeg})`);
    const feedOhm = groundPlaneFeedImpedanceOhm(droopDeg);
    return {
      ...base,
      elements: [
        element('radiator', 1, quarterMm, 'vertical element from the connector centre pin'),
        element('radial', radialCount, quarterMm * RADIAL_LENGTH_RATIO, `${droopDeg === 0 ? 'horizontal' : `${droopDeg}° below horizontal`}, evenly spaced (${round(360 / radialCount, 1)}° apart)`),
      ],
      radialCount,
      droopDeg,
      feedImpedanceOhm: round(feedOhm, 1),
      estimatedVswr: round(vswrOfResistiveLoad(feedOhm), 2),
      notes: [
        `Solder or bolt ${radialCount} radials to the connector body (shield side); the radiator goes to the centre pin.`,
        `Radials are cut ${Math.round((RADIAL_LENGTH_RATIO - 1) * 100)} % longer than the radiator (common practice).`,
        droopDeg < 30
          ? 'Horizontal radials give a feed impedance near 37 Ω (VSWR ≈ 1.35 on 50 Ω); drooping them to about 45° brings it toward 50 Ω (common practice).'
          : `With ${droopDeg}° droop the feed impedance is near ${Math.round(feedOhm)} Ω (common practice estimate).`,
        ...bandSpreadNote(frequencyMhz, factor),
        ...TUNING_NOTES,
      ],
      sources: [lengthSource, 'radial ratio, droop and feed impedance: common practice'],
    };
  }

  if (id === 'half-wave-dipole') {
    return {
      ...base,
      elements: [element('leg', 2, quarterMm, 'one leg to the centre pin, one to the shield; small gap (3–5 mm) at the feed')],
      feedImpedanceOhm: 73,
      estimatedVswr: round(vswrOfResistiveLoad(73), 2),
      notes: [
        `Tip to tip about ${round(2 * quarterMm, 1)} mm plus the feed gap.`,
        'Mount vertically for vertical polarisation; run the coax away at right angles for at least a quarter wavelength.',
        'Fit a choke at the feed (a few ferrite beads or turns of coax) so the coax shield does not radiate.',
        ...bandSpreadNote(frequencyMhz, factor),
        ...TUNING_NOTES,
      ],
      sources: [lengthSource, 'feed impedance about 73 Ω: standard antenna theory'],
    };
  }

  if (id === 'disc-ground-plane') {
    const discMm = wavelengthMm / 2;
    return {
      ...base,
      elements: [
        element('radiator', 1, quarterMm, 'vertical, from a bulkhead connector at the disc centre'),
        element('disc', 1, discMm, 'minimum diameter of the metal disc, bowl or tank lid (half a wavelength; larger is fine)'),
      ],
      notes: [
        'Use a bulkhead connector through the centre of the disc; the shield must bond to the disc all round.',
        'A small disc raises the feed impedance and tilts the beam upward; half a wavelength across is a good minimum (common practice).',
        ...bandSpreadNote(frequencyMhz, factor),
        ...TUNING_NOTES,
      ],
      sources: [lengthSource, 'disc diameter of at least λ/2: common practice'],
    };
  }

  // pcb-inverted-f
  const permittivity = options.boardPermittivity ?? 4.4;
  if (!(permittivity >= 1 && permittivity <= 12)) throw new BuildSheetError(`board permittivity must be from 1 to 12 (got ${permittivity})`);
  // Trace half on board, half in air: ε_eff ≈ (εr + 1)/2 (common microstrip starting value).
  const effective = (permittivity + 1) / 2;
  const totalMm = wavelengthMm / 4 / Math.sqrt(effective);
  const heightMm = Math.max(4, wavelengthMm / 50);
  return {
    ...base,
    elements: [
      element('arm', 1, totalMm - heightMm, 'top arm parallel to the ground-plane edge, from the shorting leg to the open end'),
      element('short-leg', 1, heightMm, 'height of the arm above the ground-plane edge; shorted to ground at one end'),
      element('feed-offset', 1, heightMm / 2, 'feed point distance from the shorting leg along the arm (closer = lower resistance)'),
      element('ground-length', 1, wavelengthMm / 4, 'minimum ground-plane length along the arm edge'),
      element('keep-out', 1, heightMm + 2, 'copper-free clearance under and around the arm'),
    ],
    notes: [
      `Starting dimensions for a board of εr ${permittivity} (ε_eff ≈ ${round(effective, 2)}): rule-of-thumb starting point (common practice), then tune.`,
      'Lay out a pi matching network (three 0402/0603 pads) at the feed so the antenna can be matched without a respin.',
      'If the arm does not fit, meander it; meanders detune the antenna, so plan a tuning pass on the real board in its enclosure.',
      'Battery, enclosure and hand all detune a PCB antenna: tune it assembled.',
      ...TUNING_NOTES,
    ],
    sources: [
      'arm length λ/(4·√ε_eff), ε_eff = (εr + 1)/2, height about λ/50: common practice starting point',
    ],
  };
}
