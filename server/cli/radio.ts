// Radio commands: airtime, sensitivity, mismatch, build-sheet, bands, battery.
// Thin: each parses its options, calls server/radio and returns one document.
import { z } from 'zod';
import { CliUsageError, defineCommand, integerOption, numberOption, stringOption, type CommandDefinition } from './framework.ts';
import {
  CODING_RATES,
  LORA_BANDWIDTH_LABELS_KHZ,
  matchLoraBandwidthKhz,
  noiseFloorDbm,
  sensitivityDbm,
  snrFloorDb,
  timeOnAirMs,
  RadioParameterError,
  type CodingRate,
} from '../radio/lora-phy.ts';
import { mismatchFromVswr } from '../radio/mismatch.ts';
import { BUILD_SHEET_IDS, BuildSheetError, buildSheet, type BuildSheet } from '../radio/build-sheets.ts';
import { bandPlans, type BandPlan } from '../radio/band-plans.ts';
import { BatteryInputError, estimateBattery } from '../radio/battery.ts';

/** Options object that rejects unknown options by name instead of ignoring a typo. */
function options<T extends z.ZodRawShape>(shape: T) {
  return z.strictObject(shape, {
    error: (issue) => (issue.code === 'unrecognized_keys' ? `unknown option --${(issue.keys as string[])[0]}` : undefined),
  });
}

/** A required option: a missing one is reported as "is required" rather than a type error. */
function required<T extends z.ZodType>(schema: T): z.ZodType<z.output<T>> {
  return z
    .unknown()
    .refine((value) => value !== undefined, { message: 'is required', abort: true })
    .pipe(schema as unknown as z.ZodType<z.output<T>, NonNullable<unknown> | null>);
}

/** Runs a radio computation, turning its parameter errors into one-line usage errors. */
function parameters<T>(compute: () => T): T {
  try {
    return compute();
  } catch (error) {
    if (error instanceof RadioParameterError) throw new CliUsageError(error.message);
    throw error;
  }
}

const clean = (value: number) => Math.round(value * 1e6) / 1e6;

const spreadingFactorOption = () =>
  integerOption().refine((sf) => sf >= 5 && sf <= 12, { message: 'spreading factor must be from 5 to 12 (SF5/6 as on the SX126x)' });

const bandwidthOption = () =>
  numberOption().refine((bw) => matchLoraBandwidthKhz(bw) !== undefined, {
    message: `must be a LoRa bandwidth in kHz: ${LORA_BANDWIDTH_LABELS_KHZ.join(', ')}`,
  });

const onOffOption = (fallback: 'on' | 'off') =>
  z
    .union([z.literal(true), z.enum(['on', 'off', 'true', 'false'], { error: 'must be on or off' })])
    .optional()
    .transform((value) => (value === undefined ? fallback === 'on' : value === true || value === 'on' || value === 'true'));

const airtime = defineCommand({
  words: 'airtime',
  options: options({
    sf: required(spreadingFactorOption()),
    'bw-khz': required(bandwidthOption()),
    cr: z.enum(CODING_RATES as [CodingRate, ...CodingRate[]], { error: `must be one of ${CODING_RATES.join(', ')}` }).default('4/5'),
    'payload-bytes': required(integerOption().refine((n) => n >= 0 && n <= 255, { message: 'must be from 0 to 255 bytes' })),
    'preamble-symbols': integerOption()
      .refine((n) => n >= 1 && n <= 65535, { message: 'must be from 1 to 65535 symbols' })
      .optional(),
    header: z.enum(['explicit', 'implicit'], { error: 'must be explicit or implicit' }).default('explicit'),
    crc: onOffOption('on'),
    ldro: z.enum(['auto', 'on', 'off'], { error: 'must be auto, on or off' }).default('auto'),
    chip: z.enum(['sx126x', 'sx127x'], { error: 'must be sx126x or sx127x' }).default('sx126x'),
  }),
  run: (o) => {
    const preambleSymbols = o['preamble-symbols'] ?? 8;
    const result = parameters(() => timeOnAirMs({
      spreadingFactor: o.sf,
      bandwidthKhz: o['bw-khz'],
      codingRate: o.cr,
      payloadBytes: o['payload-bytes'],
      preambleSymbols,
      explicitHeader: o.header === 'explicit',
      crcOn: o.crc,
      ldro: o.ldro,
      chip: o.chip,
    }));
    return {
      timeOnAirMs: clean(result.timeOnAirMs),
      symbolMs: clean(result.symbolMs),
      preambleMs: clean(result.preambleMs),
      payloadSymbols: result.payloadSymbols,
      payloadMs: clean(result.payloadMs),
      ldro: result.ldroOn ? 'on' : 'off',
      spreadingFactor: o.sf,
      bandwidthKhz: o['bw-khz'],
      codingRate: o.cr,
      payloadBytes: o['payload-bytes'],
      preambleSymbols,
      header: o.header,
      crc: o.crc ? 'on' : 'off',
      chip: o.chip,
      formula: o.sf >= 7 || o.chip === 'sx127x' ? 'SX1276 datasheet §4.1.1.6' : 'SX1261/62 datasheet §6.1.4 (SF5/6)',
    };
  },
  formatText: (r) => {
    const x = r as { timeOnAirMs: number; symbolMs: number; preambleMs: number; payloadSymbols: number; ldro: string };
    return `time on air ${x.timeOnAirMs.toFixed(2)} ms (symbol ${x.symbolMs.toFixed(3)} ms, preamble ${x.preambleMs.toFixed(2)} ms, ${x.payloadSymbols} symbols after the preamble, LDRO ${x.ldro})`;
  },
});

const sensitivity = defineCommand({
  words: 'sensitivity',
  options: options({
    sf: required(spreadingFactorOption()),
    'bw-khz': required(bandwidthOption()),
    'noise-figure-db': numberOption()
      .refine((nf) => nf >= 0 && nf <= 30, { message: 'must be from 0 to 30 dB' })
      .optional(),
  }),
  run: (o) => {
    const nf = o['noise-figure-db'] ?? 6;
    return {
      sensitivityDbm: clean(sensitivityDbm(o.sf, o['bw-khz'], nf)),
      snrFloorDb: snrFloorDb(o.sf),
      noiseFloorDbm: clean(noiseFloorDbm(o['bw-khz'], nf)),
      spreadingFactor: o.sf,
      bandwidthKhz: o['bw-khz'],
      noiseFigureDb: nf,
      formula: '−174 dBm/Hz + 10·log10(BW) + NF + SNR floor (SNR floors: SX127x/SX126x datasheet values, from memory)',
    };
  },
  formatText: (r) => {
    const x = r as { sensitivityDbm: number; snrFloorDb: number; noiseFloorDbm: number };
    return `sensitivity ${x.sensitivityDbm.toFixed(1)} dBm (noise floor ${x.noiseFloorDbm.toFixed(1)} dBm, SNR floor ${x.snrFloorDb} dB)`;
  },
});

const mismatch = defineCommand({
  words: 'mismatch',
  options: options({
    vswr: required(numberOption().refine((v) => v >= 1, { message: 'VSWR must be at least 1' })),
  }),
  run: (o) => {
    const m = mismatchFromVswr(o.vswr);
    return {
      reflectionCoefficient: clean(m.reflectionCoefficient),
      returnLossDb: m.returnLossDb === null ? null : clean(m.returnLossDb),
      mismatchLossDb: clean(m.mismatchLossDb),
      vswr: o.vswr,
      reflectedPowerPercent: clean(m.reflectedPowerPercent),
      note: m.returnLossDb === null ? 'VSWR 1: perfect match, return loss is infinite' : undefined,
    };
  },
  formatText: (r) => {
    const x = r as { reflectionCoefficient: number; returnLossDb: number | null; mismatchLossDb: number };
    return `|Γ| ${x.reflectionCoefficient.toFixed(3)}, return loss ${x.returnLossDb === null ? '∞' : x.returnLossDb.toFixed(2)} dB, mismatch loss ${x.mismatchLossDb.toFixed(2)} dB`;
  },
});

const buildSheetCommand = defineCommand({
  words: 'build-sheet',
  options: options({
    design: required(stringOption()).describe(`antenna design: ${BUILD_SHEET_IDS.join(', ')}`),
    'frequency-mhz': required(numberOption().refine((f) => f > 0, { message: 'must be a positive frequency in MHz' })),
    radials: integerOption().optional(),
    'droop-deg': numberOption().optional(),
    'length-factor': numberOption().optional(),
    'board-permittivity': numberOption().optional(),
  }),
  run: (o) => {
    try {
      return buildSheet(o.design, o['frequency-mhz'], {
        radialCount: o.radials,
        droopDeg: o['droop-deg'],
        lengthFactor: o['length-factor'],
        boardPermittivity: o['board-permittivity'],
      });
    } catch (error) {
      if (error instanceof BuildSheetError) throw new CliUsageError(error.message);
      throw error;
    }
  },
  formatText: (r) => {
    const sheet = r as BuildSheet;
    const lines = [`${sheet.designName} for ${sheet.frequencyMhz} MHz`];
    for (const e of sheet.elements) lines.push(`  ${e.count} × ${e.name}: ${e.lengthMm.toFixed(1)} mm (${e.lengthIn.toFixed(3)} in)${e.note ? ` — ${e.note}` : ''}`);
    lines.push('', ...sheet.notes.map((n) => `- ${n}`), '', 'Cautions:', ...sheet.cautions.map((c) => `! ${c}`));
    return lines.join('\n');
  },
});

function bandDocument(plan: BandPlan) {
  return {
    id: plan.id,
    name: plan.name,
    region: plan.region,
    fromMhz: plan.fromMhz,
    toMhz: plan.toMhz,
    limits: plan.limits.map((l) => ({
      id: l.id,
      name: l.name,
      fromMhz: l.fromMhz,
      toMhz: l.toMhz,
      ...(l.maxEirpDbm !== undefined ? { maxEirpDbm: l.maxEirpDbm } : { maxErpDbm: l.maxErpDbm }),
      ...(l.maxConductedDbm !== undefined ? { maxConductedDbm: l.maxConductedDbm } : {}),
      dutyCyclePercent: l.dutyCyclePercent,
      dwellTimeMs: l.dwellTimeMs,
      dwellWindowS: l.dwellWindowS,
      ...(l.minBandwidthKhz !== undefined ? { minBandwidthKhz: l.minBandwidthKhz } : {}),
      ...(l.maxBandwidthKhz !== undefined ? { maxBandwidthKhz: l.maxBandwidthKhz } : {}),
      listenBeforeTalk: l.listenBeforeTalk === true,
      source: l.source,
      notes: l.notes,
    })),
    lorawan: plan.lorawan ?? null,
    cautions: plan.cautions,
  };
}

const bands = defineCommand({
  words: 'bands',
  options: options({
    band: stringOption().optional(),
  }),
  run: (o) => {
    if (o.band === undefined) return bandPlans.map(bandDocument);
    const plan = bandPlans.find((p) => p.id === o.band);
    if (!plan) throw new CliUsageError(`--band: unknown band plan "${o.band}" (known: ${bandPlans.map((p) => p.id).join(', ')})`);
    return [bandDocument(plan)];
  },
  formatText: (r) => {
    const docs = r as ReturnType<typeof bandDocument>[];
    const lines: string[] = [];
    for (const d of docs) {
      lines.push(`${d.id}  ${d.name}  ${d.fromMhz}–${d.toMhz} MHz`);
      for (const l of d.limits) {
        const power = 'maxEirpDbm' in l ? `${l.maxEirpDbm} dBm EIRP` : `${l.maxErpDbm} dBm ERP`;
        const duty = l.dutyCyclePercent === null ? 'no duty-cycle limit' : `${l.dutyCyclePercent} % duty cycle`;
        const dwell = l.dwellTimeMs === null ? '' : `, ${l.dwellTimeMs} ms dwell`;
        lines.push(`  ${l.id.padEnd(14)} ${l.fromMhz}–${l.toMhz} MHz  ${power}, ${duty}${dwell}`);
      }
    }
    lines.push('', 'Planning figures only, not legal advice: check the regulator of the country of use.');
    return lines.join('\n');
  },
});

const positiveOption = (rule = 'must be positive') => numberOption().refine((v) => v > 0, { message: rule });
const nonNegativeOption = () => numberOption().refine((v) => v >= 0, { message: 'must be 0 or more' });

const battery = defineCommand({
  words: 'battery',
  options: options({
    'capacity-mah': required(positiveOption()),
    'messages-per-day': required(nonNegativeOption()),
    'time-on-air-ms': positiveOption().optional(),
    sf: spreadingFactorOption().optional(),
    'bw-khz': bandwidthOption().optional(),
    cr: z.enum(CODING_RATES as [CodingRate, ...CodingRate[]], { error: `must be one of ${CODING_RATES.join(', ')}` }).default('4/5'),
    'payload-bytes': integerOption().refine((n) => n >= 0 && n <= 255, { message: 'must be from 0 to 255 bytes' }).optional(),
    'tx-power-dbm': numberOption().refine((p) => p >= -9 && p <= 30, { message: 'must be from −9 to 30 dBm' }).optional(),
    'tx-current-ma': positiveOption().optional(),
    'sleep-current-ua': nonNegativeOption().optional(),
    'usable-fraction': numberOption().optional(),
  }),
  run: (o) => {
    let toaMs = o['time-on-air-ms'];
    if (toaMs === undefined) {
      if (o.sf === undefined || o['bw-khz'] === undefined || o['payload-bytes'] === undefined)
        throw new CliUsageError('--time-on-air-ms: is required unless --sf, --bw-khz and --payload-bytes are given');
      toaMs = timeOnAirMs({ spreadingFactor: o.sf, bandwidthKhz: o['bw-khz'], codingRate: o.cr, payloadBytes: o['payload-bytes'] }).timeOnAirMs;
    }
    try {
      const e = estimateBattery({
        capacityMah: o['capacity-mah'],
        messagesPerDay: o['messages-per-day'],
        timeOnAirMs: toaMs,
        txPowerDbm: o['tx-power-dbm'],
        txCurrentMa: o['tx-current-ma'],
        sleepCurrentUa: o['sleep-current-ua'],
        usableFraction: o['usable-fraction'],
      });
      return { ...e, timeOnAirMs: clean(toaMs), lifeDays: clean(e.lifeDays), lifeYears: clean(e.lifeYears) };
    } catch (error) {
      if (error instanceof BatteryInputError) throw new CliUsageError(error.message);
      throw error;
    }
  },
  formatText: (r) => {
    const x = r as { lifeYears: number; averageCurrentUa: number; assumptions: string[] };
    return [`about ${x.lifeYears.toFixed(1)} years (average ${x.averageCurrentUa.toFixed(1)} µA)`, 'assumptions:', ...x.assumptions.map((a) => `- ${a}`)].join('\n');
  },
});

export const radioCommands: CommandDefinition[] = [airtime, sensitivity, mismatch, buildSheetCommand, bands, battery];
