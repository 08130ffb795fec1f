// LoRa physical layer: symbol time, time on air, sensitivity, noise floor and
// the demodulation SNR floor of each spreading factor.
//
// Time on air follows the Semtech SX1276/77/78/79 datasheet §4.1.1.6
// ("Time on air") for SF 7–12, which the SX1261/62 datasheet §6.1.4 repeats in
// another notation; SF 5 and 6 use the SX1261/62 form (preamble + 6.25 symbols
// and no "+8" term in the payload numerator; from memory of that datasheet).
// Sensitivity is the thermal-noise relation −174 dBm/Hz + 10·log10(BW) + NF + SNRfloor.

/** Spreading factors the SX126x offers (the SX127x offers 6–12, SF6 only with implicit header). */
export const SPREADING_FACTORS = [5, 6, 7, 8, 9, 10, 11, 12] as const;
export type SpreadingFactor = (typeof SPREADING_FACTORS)[number];

/** Coding rate 4/(4+n): the datasheets' CR = 1..4 stands for 4/5..4/8. */
export type CodingRate = '4/5' | '4/6' | '4/7' | '4/8';
export const CODING_RATES: readonly CodingRate[] = ['4/5', '4/6', '4/7', '4/8'];

/**
 * LoRa bandwidths of the SX127x/SX126x (kHz): 7.8, 10.4, 15.6, 20.8, 31.25, 41.7,
 * 62.5, 125, 250, 500. The chips derive them from a 32 MHz crystal, so the exact
 * values are 500/64, 500/48, 500/32, 500/24, 500/16, 500/12, 500/8, 500/4, 500/2, 500.
 */
export const LORA_BANDWIDTHS_KHZ: readonly number[] = [500 / 64, 500 / 48, 500 / 32, 500 / 24, 31.25, 500 / 12, 62.5, 125, 250, 500];

/** Datasheet labels of the bandwidths above, as users type them. */
export const LORA_BANDWIDTH_LABELS_KHZ: readonly string[] = ['7.8', '10.4', '15.6', '20.8', '31.25', '41.7', '62.5', '125', '250', '500'];

/**
 * Returns the chip bandwidth (kHz) a typed value stands for, or undefined when it is none of them.
 * Accepts the datasheet labels (7.8, 10.4 …) and the exact values (7.8125, 10.4167 …) within 0.06 kHz.
 */
export function matchLoraBandwidthKhz(bandwidthKhz: number): number | undefined {
  return LORA_BANDWIDTHS_KHZ.find((exact) => Math.abs(exact - bandwidthKhz) <= 0.06);
}

/** Low-data-rate optimisation switch: `auto` turns it on when the symbol lasts 16 ms or more (as LoRaWAN does). */
export type LdroMode = 'auto' | 'on' | 'off';

/** Symbol duration in ms: Ts = 2^SF / BW (SX1276 datasheet §4.1.1.6). */
export function symbolTimeMs(spreadingFactor: number, bandwidthKhz: number): number {
  return 2 ** spreadingFactor / bandwidthKhz;
}

/** Whether low-data-rate optimisation is in force for a mode, SF and BW (auto: Ts ≥ 16 ms). */
export function ldroEnabled(mode: LdroMode, spreadingFactor: number, bandwidthKhz: number): boolean {
  if (mode === 'on') return true;
  if (mode === 'off') return false;
  return symbolTimeMs(spreadingFactor, bandwidthKhz) >= 16;
}

/** Numeric CR of the datasheets (1..4) from "4/5".."4/8". */
export function codingRateIndex(codingRate: CodingRate): number {
  return Number(codingRate.slice(2)) - 4;
}

export interface TimeOnAirParams {
  spreadingFactor: number;
  bandwidthKhz: number;
  codingRate: CodingRate;
  payloadBytes: number;
  /** Programmed preamble length in symbols (LoRaWAN uses 8). */
  preambleSymbols?: number;
  /** Explicit header (default) or implicit header. */
  explicitHeader?: boolean;
  /** Payload CRC on (default) or off. */
  crcOn?: boolean;
  ldro?: LdroMode;
  /**
   * Chip family. Only matters at SF 5/6: `sx126x` (default) uses the SX1261/62 form;
   * `sx127x` uses the SX1276 form, has no SF5 and needs implicit header at SF6.
   */
  chip?: LoraChip;
}

export type LoraChip = 'sx126x' | 'sx127x';

export interface TimeOnAir {
  timeOnAirMs: number;
  symbolMs: number;
  /** Preamble duration: (preamble + 4.25)·Ts, or (preamble + 6.25)·Ts at SF 5/6. */
  preambleMs: number;
  /** Symbols after the preamble (header included), SX1276 §4.1.1.6 "payloadSymbNb". */
  payloadSymbols: number;
  payloadMs: number;
  ldroOn: boolean;
}

/** Raised when a PHY parameter is outside what the chips offer; the message names the field and the rule. */
export class RadioParameterError extends Error {}

/** Checks the PHY parameters and throws RadioParameterError naming the field. */
export function validateTimeOnAirParams(params: TimeOnAirParams): void {
  const { spreadingFactor, bandwidthKhz, codingRate, payloadBytes } = params;
  if (!Number.isInteger(spreadingFactor) || spreadingFactor < 5 || spreadingFactor > 12)
    throw new RadioParameterError(`spreading factor must be a whole number from 5 to 12 (got ${spreadingFactor})`);
  if (!Number.isFinite(bandwidthKhz) || bandwidthKhz <= 0)
    throw new RadioParameterError(`bandwidth must be a positive number of kHz (got ${bandwidthKhz})`);
  if (!CODING_RATES.includes(codingRate))
    throw new RadioParameterError(`coding rate must be one of ${CODING_RATES.join(', ')} (got ${String(codingRate)})`);
  if (!Number.isInteger(payloadBytes) || payloadBytes < 0 || payloadBytes > 255)
    throw new RadioParameterError(`payload must be a whole number of bytes from 0 to 255 (got ${payloadBytes})`);
  const preamble = params.preambleSymbols ?? 8;
  if (!Number.isInteger(preamble) || preamble < 1 || preamble > 65535)
    throw new RadioParameterError(`preamble must be a whole number of symbols from 1 to 65535 (got ${preamble})`);
  if (params.chip === 'sx127x') {
    if (spreadingFactor === 5) throw new RadioParameterError('spreading factor 5 is not available on the SX127x (SF 6–12)');
    if (spreadingFactor === 6 && params.explicitHeader !== false)
      throw new RadioParameterError('SF6 on the SX127x works only with implicit header (SX1276 datasheet)');
    if (preamble < 6) throw new RadioParameterError(`preamble on the SX127x must be 6 symbols or more (got ${preamble})`);
  }
}

/**
 * Time on air of one LoRa frame (SX1276 datasheet §4.1.1.6):
 *   Tpreamble = (npreamble + 4.25)·Ts
 *   payloadSymbNb = 8 + max(ceil((8PL − 4SF + 28 + 16CRC − 20IH) / (4(SF − 2DE)))·(CR + 4), 0)
 * and for SF 5/6 on the SX126x (SX1261/62 datasheet §6.1.4; SX127x at SF6 uses the form above):
 *   Tpreamble = (npreamble + 6.25)·Ts
 *   payloadSymbNb = 8 + ceil(max(8PL + 16CRC − 4SF + 20(1 − IH), 0) / (4(SF − 2DE)))·(CR + 4)
 */
export function timeOnAirMs(params: TimeOnAirParams): TimeOnAir {
  validateTimeOnAirParams(params);
  const sf = params.spreadingFactor;
  const symbolMs = symbolTimeMs(sf, params.bandwidthKhz);
  const preamble = params.preambleSymbols ?? 8;
  const ih = params.explicitHeader === false ? 1 : 0;
  const crc = params.crcOn === false ? 0 : 1;
  const ldroOn = ldroEnabled(params.ldro ?? 'auto', sf, params.bandwidthKhz);
  const de = ldroOn ? 1 : 0;
  const cr = codingRateIndex(params.codingRate);
  const pl = params.payloadBytes;

  let preambleMs: number;
  let numerator: number;
  if (sf >= 7 || params.chip === 'sx127x') {
    preambleMs = (preamble + 4.25) * symbolMs;
    numerator = 8 * pl - 4 * sf + 28 + 16 * crc - 20 * ih;
  } else {
    preambleMs = (preamble + 6.25) * symbolMs;
    numerator = 8 * pl + 16 * crc - 4 * sf + 20 * (1 - ih);
  }
  const blocks = Math.max(Math.ceil(numerator / (4 * (sf - 2 * de))), 0);
  const payloadSymbols = 8 + blocks * (cr + 4);
  const payloadMs = payloadSymbols * symbolMs;
  return { timeOnAirMs: preambleMs + payloadMs, symbolMs, preambleMs, payloadSymbols, payloadMs, ldroOn };
}

/** Thermal noise density at 290 K, dBm/Hz (kT: 10·log10(1.380649e-23·290·1000) ≈ −173.98, rounded as the datasheets do). */
export const THERMAL_NOISE_DBM_PER_HZ = -174;

/**
 * Demodulation SNR floor (dB) per SF: −7.5 dB at SF7 down to −20 dB at SF12, 2.5 dB a step
 * (SX1276 datasheet table of SNR per SF, from memory); SF6 −5 dB and SF5 −2.5 dB continue the
 * same steps as the SX1261/62 datasheet lists them (from memory).
 */
export function snrFloorDb(spreadingFactor: number): number {
  if (!Number.isInteger(spreadingFactor) || spreadingFactor < 5 || spreadingFactor > 12)
    throw new RadioParameterError(`spreading factor must be a whole number from 5 to 12 (got ${spreadingFactor})`);
  return -7.5 - 2.5 * (spreadingFactor - 7);
}

/** Receiver noise floor (dBm): −174 dBm/Hz + 10·log10(BW Hz) + NF. */
export function noiseFloorDbm(bandwidthKhz: number, noiseFigureDb = 6): number {
  if (!Number.isFinite(bandwidthKhz) || bandwidthKhz <= 0)
    throw new RadioParameterError(`bandwidth must be a positive number of kHz (got ${bandwidthKhz})`);
  return THERMAL_NOISE_DBM_PER_HZ + 10 * Math.log10(bandwidthKhz * 1000) + noiseFigureDb;
}

/** Sensitivity (dBm) = noise floor + SNR floor of the SF (SX1276 datasheet §5.5 relation). */
export function sensitivityDbm(spreadingFactor: number, bandwidthKhz: number, noiseFigureDb = 6): number {
  return noiseFloorDbm(bandwidthKhz, noiseFigureDb) + snrFloorDb(spreadingFactor);
}

export interface SfReception {
  spreadingFactor: number;
  snrFloorDb: number;
  sensitivityDbm: number;
  /** SNR of the received power over the noise floor (dB). */
  snrDb: number;
  /** How far the signal is above the sensitivity (dB); negative = not decoded. */
  marginDb: number;
}

/** SNR and margin at each SF for a received power (dBm). */
export function receptionPerSf(
  receivedPowerDbm: number,
  bandwidthKhz: number,
  noiseFigureDb = 6,
  spreadingFactors: readonly number[] = [7, 8, 9, 10, 11, 12],
): SfReception[] {
  const floorDbm = noiseFloorDbm(bandwidthKhz, noiseFigureDb);
  const snrDb = receivedPowerDbm - floorDbm;
  return spreadingFactors.map((sf) => {
    const floor = snrFloorDb(sf);
    return { spreadingFactor: sf, snrFloorDb: floor, sensitivityDbm: floorDbm + floor, snrDb, marginDb: snrDb - floor };
  });
}
