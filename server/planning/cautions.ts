// Cautions fitted to what someone is about to do: a 1 m soil probe does not get the mast-work
// list, a 24 m gateway mast does; power and gain bring RF-exposure and legal-limit notes.
// Short, grouped by topic, each said once. The thresholds are common practice (not a code):
// work at height from 2 m above ground, towers from 10 m, RF-exposure care from 30 dBm
// (1 W) EIRP, high gain from 6 dBi. Local codes, regulators and licensed practice win.
import type { LegalCheck } from '../radio/link-budget.ts';

export const WORK_AT_HEIGHT_FROM_M = 2;
export const TOWER_FROM_M = 10;
export const RF_CARE_FROM_EIRP_DBM = 30;
export const HIGH_GAIN_FROM_DBI = 6;

export interface CautionGroup {
  topic: 'Work at height' | 'Lightning and grounding' | 'RF exposure' | 'Legal power' | 'On site';
  items: string[];
}

export interface CautionInput {
  role: 'node' | 'gateway';
  antennaHeightAglM: number;
  /** Peak EIRP, dBm (null when not known). */
  peakEirpDbm: number | null;
  antennaGainDbi: number;
  legal: Pick<LegalCheck, 'withinLimit' | 'excessDb' | 'maxEirpDbm'> | null;
  /** Installed in a meter pit, box or building (electrical codes apply). */
  enclosed?: boolean;
}

export function fittedCautions(input: CautionInput): CautionGroup[] {
  const groups: CautionGroup[] = [];
  const h = input.antennaHeightAglM;
  if (h > WORK_AT_HEIGHT_FROM_M) {
    const items = ['Fall protection and a second person; never climb or raise a mast alone, nor in wind, ice or thunder.', `Stay clear of overhead power lines by more than the mast height (${h.toFixed(1)} m) plus a margin.`];
    if (h >= TOWER_FROM_M) items.push('Above 10 m: trained climbers, a permit and a foundation or structure check are usually needed.');
    groups.push({ topic: 'Work at height', items });
  }
  if (input.role === 'gateway' || h > WORK_AT_HEIGHT_FROM_M + 1) {
    groups.push({ topic: 'Lightning and grounding', items: ['Bond the mast and the coax shield to the site ground; fit a surge arrestor where the feedline enters the building.'] });
  }
  if (input.peakEirpDbm !== null && (input.peakEirpDbm >= RF_CARE_FROM_EIRP_DBM || input.antennaGainDbi >= HIGH_GAIN_FROM_DBI)) {
    groups.push({ topic: 'RF exposure', items: [`Keep people out of the main beam near the antenna while it transmits (${input.peakEirpDbm.toFixed(1)} dBm EIRP${input.antennaGainDbi >= HIGH_GAIN_FROM_DBI ? `, ${input.antennaGainDbi.toFixed(1)} dBi` : ''}); mount it above head height.`] });
  }
  if (input.legal) {
    const items: string[] = [];
    if (!input.legal.withinLimit && input.legal.excessDb !== null) items.push(`Over the band plan's limit by ${input.legal.excessDb.toFixed(1)} dB: lower the transmit power or use a lower-gain antenna before it goes on air.`);
    else if (input.antennaGainDbi >= HIGH_GAIN_FROM_DBI && input.legal.maxEirpDbm !== null && input.peakEirpDbm !== null) items.push(`Antenna gain counts toward the limit: ${(input.legal.maxEirpDbm - input.peakEirpDbm).toFixed(1)} dB left below ${input.legal.maxEirpDbm.toFixed(1)} dBm EIRP.`);
    if (items.length > 0) groups.push({ topic: 'Legal power', items });
  }
  if (input.enclosed) groups.push({ topic: 'On site', items: ['Electrical work in pits, boxes and buildings follows local electrical codes.'] });
  return withoutRepeats(groups);
}

/** Each caution said once: a repeated item (in any group) and an emptied group are dropped. */
export function withoutRepeats(groups: readonly CautionGroup[]): CautionGroup[] {
  const seen = new Set<string>();
  const out: CautionGroup[] = [];
  for (const group of groups) {
    const items = group.items.filter((item) => {
      const key = item.trim().toLowerCase();
      if (seen.has(key)) return false;
      seen.add(key);
      return true;
    });
    if (items.length > 0) out.push({ topic: group.topic, items });
  }
  return out;
}

/** The groups as lines ("Work at height: …"), for plain-text output (CLI). */
export function cautionLines(groups: readonly CautionGroup[]): string[] {
  return groups.map((g) => `${g.topic}: ${g.items.join(' ')}`);
}

/** The one closing line under every caution list. */
export const CAUTIONS_FOOTER = 'Planning figures only: local codes, the radio regulator and licensed practice take precedence.';
