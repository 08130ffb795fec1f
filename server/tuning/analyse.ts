// From a sweep to a tuning instruction. Pure computation.
//
// - Resonance: the frequency of least |Γ|, refined between samples by the
//   vertex of the parabola through the least sample and its two neighbours,
//   fitted to |Γ|² (smooth near a match, where |Γ| itself has a sharp V).
// - VSWR and return loss at a frequency: |Γ| interpolated linearly between the
//   two samples around it, then the standard relations of server/radio/mismatch.ts.
// - The VSWR < 2 band: the run of frequencies around the resonance where
//   |Γ| < 1/3, its edges interpolated (VSWR 2 is the common-practice target).
// - Length: the resonant frequency of a quarter-wave radiator goes as 1/length
//   (common practice; end effects and the feed make it approximate), so the
//   length that moves the resonance f_res to the band centre f_c is
//   L_new = L · f_res / f_c. A half-wave dipole's legs follow the same rule.

import { findBandPlan, type BandPlan } from '../radio/band-plans.ts';
import { builtInAntennaDesigns } from '../radio/antennas.ts';
import { BUILD_SHEET_IDS, buildSheet, RADIAL_LENGTH_RATIO, type BuildSheet, type BuildSheetId } from '../radio/build-sheets.ts';
import { mismatchFromReflection } from '../radio/mismatch.ts';
import { SweepFileError, type Sweep, type SweepPoint } from './sweep-file.ts';

export class TuningInputError extends Error {
  readonly field: string;
  constructor(field: string, message: string) {
    super(`${field}: ${message}`);
    this.field = field;
  }
}

/** VSWR a trim can reach below which the match is fine (common practice target). */
export const TARGET_VSWR = 2;
/** |Γ| at VSWR 2: (2 − 1)/(2 + 1). */
const TARGET_GAMMA = (TARGET_VSWR - 1) / (TARGET_VSWR + 1);
/** Largest |Γ| turned into a VSWR: a few points far off resonance (or calibration error) can reach 1. */
const MAX_REPORTED_GAMMA = 0.999;
/** Resonance this close to the band centre needs no trim (well inside what a 1 mm trim moves at 900 MHz, common practice). */
export const ON_CENTRE_FRACTION = 0.002;
/** Above this a first trim is done in two steps, because each cut cannot be undone (common practice). */
const STEP_TRIM_MM = 3;

export const LENGTH_RULE = 'resonant frequency ∝ 1/length for a quarter-wave radiator (common practice): new length = length × resonance / band centre';

export interface TuneRequest {
  sweep: Sweep;
  bandId: string;
  /** Build sheet id, or a catalog design that carries one. */
  designId?: string;
  /** Present length of the element the design trims (radiator, each dipole leg, PCB arm), mm. */
  lengthMm?: number;
}

export interface Advice {
  code: 'on-centre' | 'trim' | 'lengthen' | 'radials' | 'no-trim-fixes' | 'match-fair' | 'band-edge' | 'sweep-partial' | 'length-missing' | 'estimate';
  message: string;
  /** Build sheet advice this points to (quoted from the sheet). */
  buildSheetNotes?: string[];
}

export interface ChannelFigure {
  frequencyMhz: number;
  vswr: number;
  returnLossDb: number | null;
}

export interface TuneResult {
  bandId: string;
  bandName: string;
  bandFromMhz: number;
  bandToMhz: number;
  bandCentreMhz: number;
  resonanceMhz: number;
  resonanceLine: number;
  vswrAtResonance: number;
  returnLossDbAtResonance: number | null;
  vswrAtBandCentre: number;
  returnLossDbAtBandCentre: number | null;
  /** Frequencies around the resonance where VSWR < 2; null when even the resonance is above 2. */
  vswr2BandMhz: [number, number] | null;
  /** VSWR and return loss at the band plan's LoRaWAN default channels that the sweep covers. */
  channels: ChannelFigure[];
  design: string | null;
  element: string | null;
  lengthMm: number | null;
  newLengthMm: number | null;
  /** Positive: cut this much off; negative: the element is this much short. */
  trimMm: number | null;
  advice: Advice[];
  lengthRule: string;
  cautions: string[];
  sweep: { source: Sweep['source']; description: string; points: number; fromMhz: number; toMhz: number };
  /** The sweep as VSWR for a chart, at most MAX_CHART_POINTS points (min/max kept per bucket). */
  chart: { frequencyMhz: number; vswr: number }[];
}

export const MAX_CHART_POINTS = 600;

const round = (value: number, digits: number) => Math.round(value * 10 ** digits) / 10 ** digits;
/** Millimetres as an installer reads them off a rule: one decimal, always shown. */
const mm = (value: number) => value.toFixed(1);
const clampGamma = (gamma: number) => Math.min(gamma, MAX_REPORTED_GAMMA);

/** |Γ| at a frequency inside the sweep, linear between the samples around it. */
export function gammaAt(points: readonly SweepPoint[], frequencyMhz: number): number {
  let lo = 0;
  let hi = points.length - 1;
  if (frequencyMhz <= points[0].frequencyMhz) return points[0].gammaMagnitude;
  if (frequencyMhz >= points[hi].frequencyMhz) return points[hi].gammaMagnitude;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (points[mid].frequencyMhz <= frequencyMhz) lo = mid;
    else hi = mid;
  }
  const a = points[lo];
  const b = points[hi];
  const t = (frequencyMhz - a.frequencyMhz) / (b.frequencyMhz - a.frequencyMhz);
  return a.gammaMagnitude + t * (b.gammaMagnitude - a.gammaMagnitude);
}

/** Resonance: least |Γ| refined by the parabola through |Γ|² at the least sample and its neighbours. */
export function findResonance(points: readonly SweepPoint[]): { frequencyMhz: number; gamma: number; index: number } {
  let best = 0;
  for (let i = 1; i < points.length; i++) if (points[i].gammaMagnitude < points[best].gammaMagnitude) best = i;
  if (best === 0 || best === points.length - 1) {
    const edge = points[best];
    throw new SweepFileError(
      edge.line,
      `the least |Γ| is at the ${best === 0 ? 'first' : 'last'} point of the sweep (${edge.frequencyMhz} MHz): the resonance lies ${best === 0 ? 'below' : 'above'} the sweep; sweep ${best === 0 ? 'lower' : 'higher'} frequencies as well`,
    );
  }
  const [p0, p1, p2] = [points[best - 1], points[best], points[best + 1]];
  const [x0, x1, x2] = [p0.frequencyMhz, p1.frequencyMhz, p2.frequencyMhz];
  const [y0, y1, y2] = [p0.gammaMagnitude ** 2, p1.gammaMagnitude ** 2, p2.gammaMagnitude ** 2];
  // Vertex of the parabola through three points (Lagrange form, unequal spacing allowed).
  const d01 = (y1 - y0) / (x1 - x0);
  const d12 = (y2 - y1) / (x2 - x1);
  const curvature = (d12 - d01) / (x2 - x0);
  let frequencyMhz = x1;
  let gammaSquared = y1;
  if (curvature > 0) {
    const slope = d01 - curvature * (x0 + x1);
    const vertex = -slope / (2 * curvature);
    if (vertex > x0 && vertex < x2) {
      frequencyMhz = vertex;
      gammaSquared = Math.max(0, y1 + d01 * (vertex - x1) + curvature * (vertex - x0) * (vertex - x1));
    }
  }
  return { frequencyMhz, gamma: Math.min(p1.gammaMagnitude, Math.sqrt(gammaSquared)), index: best };
}

/** The run around sample `index` where |Γ| < 1/3 (VSWR < 2), edges interpolated; null when the sample itself is not below. */
export function vswr2Band(points: readonly SweepPoint[], index: number, gammaAtResonance: number): { band: [number, number]; clippedLow: boolean; clippedHigh: boolean } | null {
  if (!(gammaAtResonance < TARGET_GAMMA)) return null;
  const cross = (a: SweepPoint, b: SweepPoint) => a.frequencyMhz + ((TARGET_GAMMA - a.gammaMagnitude) / (b.gammaMagnitude - a.gammaMagnitude)) * (b.frequencyMhz - a.frequencyMhz);
  let lo = index;
  while (lo > 0 && points[lo - 1].gammaMagnitude < TARGET_GAMMA) lo--;
  let hi = index;
  while (hi < points.length - 1 && points[hi + 1].gammaMagnitude < TARGET_GAMMA) hi++;
  const clippedLow = lo === 0;
  const clippedHigh = hi === points.length - 1;
  // A resonance refined below 1/3 between samples that are all above it: a narrow band around the vertex.
  const low = clippedLow ? points[0].frequencyMhz : points[lo].gammaMagnitude < TARGET_GAMMA ? cross(points[lo - 1], points[lo]) : points[lo].frequencyMhz;
  const high = clippedHigh ? points[hi].frequencyMhz : points[hi].gammaMagnitude < TARGET_GAMMA ? cross(points[hi], points[hi + 1]) : points[hi].frequencyMhz;
  return { band: [low, high], clippedLow, clippedHigh };
}

function chartOf(points: readonly SweepPoint[]): { frequencyMhz: number; vswr: number }[] {
  const vswr = (p: SweepPoint) => round(mismatchFromReflection(clampGamma(p.gammaMagnitude)).vswr, 3);
  if (points.length <= MAX_CHART_POINTS) return points.map((p) => ({ frequencyMhz: round(p.frequencyMhz, 6), vswr: vswr(p) }));
  // Keep the least and the largest |Γ| of each bucket so dips and peaks survive.
  const out: SweepPoint[] = [];
  const buckets = MAX_CHART_POINTS / 2;
  for (let b = 0; b < buckets; b++) {
    const from = Math.floor((b * points.length) / buckets);
    const to = Math.floor(((b + 1) * points.length) / buckets);
    let min = from;
    let max = from;
    for (let i = from; i < to; i++) {
      if (points[i].gammaMagnitude < points[min].gammaMagnitude) min = i;
      if (points[i].gammaMagnitude > points[max].gammaMagnitude) max = i;
    }
    for (const i of min < max ? [min, max] : min === max ? [min] : [max, min]) out.push(points[i]);
  }
  return out.map((p) => ({ frequencyMhz: round(p.frequencyMhz, 6), vswr: vswr(p) }));
}

interface DesignInfo {
  sheetId: BuildSheetId;
  element: string;
  /** "from the radiator tip", "from each leg tip". */
  where: string;
}

function designInfo(designId: string): DesignInfo {
  const sheetId = (BUILD_SHEET_IDS as readonly string[]).includes(designId)
    ? (designId as BuildSheetId)
    : (builtInAntennaDesigns.find((d) => d.id === designId)?.buildSheetId as BuildSheetId | undefined);
  if (!sheetId) {
    const known = builtInAntennaDesigns.find((d) => d.id === designId);
    throw new TuningInputError('design', known
      ? `"${designId}" is bought ready-made and is not trimmed; designs with a build sheet: ${BUILD_SHEET_IDS.join(', ')}`
      : `unknown design "${designId}"; designs with a build sheet: ${BUILD_SHEET_IDS.join(', ')}`);
  }
  if (sheetId === 'half-wave-dipole') return { sheetId, element: 'each leg', where: 'from the tip of each leg (both legs the same)' };
  if (sheetId === 'pcb-inverted-f') return { sheetId, element: 'arm', where: 'from the open end of the arm' };
  return { sheetId, element: 'radiator', where: 'from the radiator tip' };
}

/** The band centre tuning aims at: the middle of the band plan's frequency range. */
export function bandCentreMhz(plan: BandPlan): number {
  return (plan.fromMhz + plan.toMhz) / 2;
}

export function analyseSweep(request: TuneRequest): TuneResult {
  const { sweep } = request;
  let plan: BandPlan;
  try {
    plan = findBandPlan(request.bandId);
  } catch (error) {
    throw new TuningInputError('band', error instanceof Error ? error.message : String(error));
  }
  const design = request.designId === undefined ? null : designInfo(request.designId);
  if (request.lengthMm !== undefined && !(Number.isFinite(request.lengthMm) && request.lengthMm > 0 && request.lengthMm <= 2000)) {
    throw new TuningInputError('lengthMm', `must be a length in mm above 0 and at most 2000 (got ${request.lengthMm})`);
  }
  if (request.lengthMm !== undefined && !design) throw new TuningInputError('design', 'give the design together with the length, so the trim names the element');

  const points = sweep.points;
  const first = points[0];
  const last = points[points.length - 1];
  const centreMhz = bandCentreMhz(plan);
  if (centreMhz < first.frequencyMhz || centreMhz > last.frequencyMhz) {
    throw new SweepFileError(
      centreMhz < first.frequencyMhz ? first.line : last.line,
      `the sweep covers ${round(first.frequencyMhz, 3)}–${round(last.frequencyMhz, 3)} MHz (lines ${first.line}–${last.line}) and misses the centre of ${plan.id} (${round(centreMhz, 3)} MHz, band ${plan.fromMhz}–${plan.toMhz} MHz); sweep across the band`,
    );
  }
  const resonance = findResonance(points);
  const atResonance = mismatchFromReflection(clampGamma(resonance.gamma));
  const atCentre = mismatchFromReflection(clampGamma(gammaAt(points, centreMhz)));
  const band = vswr2Band(points, resonance.index, resonance.gamma);
  const channelFrequencies = [...new Set((plan.lorawan?.defaultChannels ?? []).map((c) => c.frequencyMhz))];
  const channels: ChannelFigure[] = channelFrequencies
    .filter((f) => f >= first.frequencyMhz && f <= last.frequencyMhz)
    .map((frequencyMhz) => {
      const m = mismatchFromReflection(clampGamma(gammaAt(points, frequencyMhz)));
      return { frequencyMhz, vswr: round(m.vswr, 3), returnLossDb: m.returnLossDb === null ? null : round(m.returnLossDb, 2) };
    });

  const advice: Advice[] = [];
  let sheet: BuildSheet | null = null;
  if (design) {
    try {
      sheet = buildSheet(design.sheetId, centreMhz);
    } catch (error) {
      throw new TuningInputError('design', error instanceof Error ? error.message : String(error));
    }
  }
  const offFraction = (resonance.frequencyMhz - centreMhz) / centreMhz;
  let newLengthMm: number | null = null;
  let trimMm: number | null = null;
  const noTrimFixes = atResonance.vswr >= TARGET_VSWR;

  if (design && request.lengthMm !== undefined) {
    // L_new = L · f_res / f_c (resonant frequency ∝ 1/length, common practice).
    newLengthMm = (request.lengthMm * resonance.frequencyMhz) / centreMhz;
    trimMm = request.lengthMm - newLengthMm;
    const trim = Math.abs(trimMm);
    if (Math.abs(offFraction) <= ON_CENTRE_FRACTION) {
      advice.push({ code: 'on-centre', message: `Resonance ${round(resonance.frequencyMhz, 2)} MHz is within ${ON_CENTRE_FRACTION * 100} % of the band centre ${round(centreMhz, 2)} MHz: leave the ${design.element} at ${mm(request.lengthMm)} mm.` });
    } else if (trimMm > 0) {
      const stepped = trim > STEP_TRIM_MM;
      advice.push({
        code: 'trim',
        message: stepped
          ? `Trim ${mm(trim)} mm ${design.where} in two steps: first ${mm(trim / 2)} mm, re-sweep, then the rest toward ${mm(newLengthMm)} mm; re-sweep.`
          : `Trim ${mm(trim)} mm ${design.where} (to ${mm(newLengthMm)} mm); re-sweep.`,
      });
    } else {
      advice.push({
        code: 'lengthen',
        message: `The ${design.element} is ${mm(trim)} mm short: the resonance (${round(resonance.frequencyMhz, 2)} MHz) is above the band centre (${round(centreMhz, 2)} MHz). A cut cannot be undone: make a new ${design.element === 'each leg' ? 'pair of legs' : design.element} about ${mm(newLengthMm * 1.03)} mm long (3 % over ${mm(newLengthMm)} mm), fit it, re-sweep and trim down to the centre.`,
        buildSheetNotes: sheet?.notes.filter((n) => n.startsWith('Trimming raises')),
      });
    }
    if (design.sheetId === 'quarter-wave-ground-plane' || design.sheetId === 'quarter-wave-ground-plane-drooped') {
      if (Math.abs(offFraction) > ON_CENTRE_FRACTION) {
        advice.push({ code: 'radials', message: `Keep the radials ${Math.round((RADIAL_LENGTH_RATIO - 1) * 100)} % longer than the radiator: about ${mm(newLengthMm * RADIAL_LENGTH_RATIO)} mm (common practice); they matter less than the radiator, trim them last if at all.` });
      }
    }
    if (design.sheetId === 'pcb-inverted-f') {
      advice.push({ code: 'estimate', message: 'On a PCB inverted-F the 1/length rule is rougher (the shorting leg, meanders and the enclosure count too): trim the arm in small steps and finish the match with the pi network at the feed.' });
    }
  } else if (design || request.lengthMm === undefined) {
    advice.push({ code: 'length-missing', message: 'Give the design and the present element length (mm) to get the trim: the new length is length × resonance / band centre (common practice).' });
  }

  if (noTrimFixes) {
    const sheetNotes = sheet ? sheet.notes.filter((n) => /radial|droop|feed|impedance|shield|disc|choke|coax|matching|pi /i.test(n)) : [];
    advice.push({
      code: 'no-trim-fixes',
      message: `VSWR at resonance is ${round(atResonance.vswr, 2)} (2 or more): trimming moves the resonance but will not bring the VSWR below 2. Check the feed (connector, solder joint, coax and its shield), the ground plane (radials bonded to the shield, their number and length) and the droop angle (flat radials give about 37 Ω, drooped to 45° about 50 Ω).`,
      buildSheetNotes: sheetNotes,
    });
  } else if (atResonance.vswr >= 1.5) {
    advice.push({ code: 'match-fair', message: `VSWR at resonance is ${round(atResonance.vswr, 2)}: usable (below 2), though a better feed match is possible${design?.sheetId === 'quarter-wave-ground-plane' ? ' (droop the radials toward 45°)' : ''}.` });
  }
  if (band && (band.clippedLow || band.clippedHigh)) {
    advice.push({ code: 'band-edge', message: `The VSWR < 2 band reaches the ${band.clippedLow ? 'low' : 'high'} end of the sweep: it is wider than shown; sweep wider to see its edge.` });
  }
  if (band && !noTrimFixes && (plan.fromMhz < band.band[0] || plan.toMhz > band.band[1]) && !(band.clippedLow || band.clippedHigh)) {
    const missesBand = band.band[1] < plan.fromMhz || band.band[0] > plan.toMhz;
    advice.push({ code: 'band-edge', message: `VSWR is below 2 from ${round(band.band[0], 1)} to ${round(band.band[1], 1)} MHz, which ${missesBand ? 'misses' : 'does not span'} the band ${plan.fromMhz}–${plan.toMhz} MHz${missesBand ? ' entirely: the element must be re-tuned to this band' : Math.abs(offFraction) > ON_CENTRE_FRACTION ? '; centring the resonance will help' : ''}.` });
  }
  if (first.frequencyMhz > plan.fromMhz || last.frequencyMhz < plan.toMhz) {
    advice.push({ code: 'sweep-partial', message: `The sweep (${round(first.frequencyMhz, 2)}–${round(last.frequencyMhz, 2)} MHz) does not cover the whole band ${plan.fromMhz}–${plan.toMhz} MHz; sweep across it to see the band edges.` });
  }

  return {
    bandId: plan.id,
    bandName: plan.name,
    bandFromMhz: plan.fromMhz,
    bandToMhz: plan.toMhz,
    bandCentreMhz: round(centreMhz, 6),
    resonanceMhz: round(resonance.frequencyMhz, 4),
    resonanceLine: points[resonance.index].line,
    vswrAtResonance: round(atResonance.vswr, 3),
    returnLossDbAtResonance: atResonance.returnLossDb === null ? null : round(atResonance.returnLossDb, 2),
    vswrAtBandCentre: round(atCentre.vswr, 3),
    returnLossDbAtBandCentre: atCentre.returnLossDb === null ? null : round(atCentre.returnLossDb, 2),
    vswr2BandMhz: band ? [round(band.band[0], 3), round(band.band[1], 3)] : null,
    channels,
    design: design?.sheetId ?? null,
    element: design?.element ?? null,
    lengthMm: request.lengthMm ?? null,
    newLengthMm: newLengthMm === null ? null : round(newLengthMm, 2),
    trimMm: trimMm === null ? null : round(trimMm, 2),
    advice,
    lengthRule: LENGTH_RULE,
    cautions: sheet ? sheet.cautions : [],
    sweep: { source: sweep.source, description: sweep.description, points: points.length, fromMhz: first.frequencyMhz, toMhz: last.frequencyMhz },
    chart: chartOf(points),
  };
}
