// Airtime of LoRaWAN frames, the uplink channels a band plan offers, and the
// duty-cycle and dwell-time budgets a node's frame leaves it.
// One way to do each thing: time on air is the radio room's timeOnAirMs
// (SX1276 datasheet §4.1.1.6), the framing is lorawanPhyPayloadBytes, the
// duty-cycle arithmetic is messagesPerHour and the governing limit is
// limitForChannel — all from server/radio.
import { limitForChannel, lorawanPhyPayloadBytes, type BandPlan } from '../radio/band-plans.ts';
import { messagesPerHour } from '../radio/link-budget.ts';
import { timeOnAirMs, type CodingRate } from '../radio/lora-phy.ts';

/** LoRaWAN framing on an uplink with a frame port and no FOpts: MHDR 1 + FHDR 7 + FPort 1 + MIC 4 = 13 bytes. */
export const UPLINK_FRAMING_BYTES = lorawanPhyPayloadBytes(0);
/** An empty acknowledgement downlink has no FPort: MHDR 1 + FHDR 7 + MIC 4 = 12 bytes. */
export const ACK_PHY_PAYLOAD_BYTES = UPLINK_FRAMING_BYTES - 1;
/** RECEIVE_DELAY1 of LoRaWAN: the RX1 window opens 1 s after the uplink ends (LoRaWAN 1.0.x, from memory). */
export const RX1_DELAY_S = 1;

export interface FrameSpec {
  sf: number;
  bandwidthKhz: number;
  /** Application payload (FRMPayload), bytes. */
  payloadBytes: number;
  codingRate?: CodingRate;
  /** Preamble symbols (LoRaWAN: 8). */
  preambleSymbols?: number;
  /** Bytes the LoRaWAN frame adds to the application payload (13 by default). */
  framingOverheadBytes?: number;
}

/** Time on air (ms) of an uplink frame: payload + framing, CR 4/5, explicit header, CRC on, preamble 8, LDRO auto. */
export function frameTimeOnAirMs(frame: FrameSpec): number {
  return timeOnAirMs({
    spreadingFactor: frame.sf,
    bandwidthKhz: frame.bandwidthKhz,
    codingRate: frame.codingRate ?? '4/5',
    payloadBytes: frame.payloadBytes + (frame.framingOverheadBytes ?? UPLINK_FRAMING_BYTES),
    preambleSymbols: frame.preambleSymbols ?? 8,
    explicitHeader: true,
    crcOn: true,
  }).timeOnAirMs;
}

/** Time on air (ms) of an empty acknowledgement in RX1 (same SF and bandwidth as the uplink; downlinks carry no payload CRC). */
export function ackTimeOnAirMs(sf: number, bandwidthKhz: number, codingRate: CodingRate = '4/5', preambleSymbols = 8): number {
  return timeOnAirMs({ spreadingFactor: sf, bandwidthKhz, codingRate, payloadBytes: ACK_PHY_PAYLOAD_BYTES, preambleSymbols, explicitHeader: true, crcOn: false }).timeOnAirMs;
}

/**
 * Bandwidth of the RX1 reply to an uplink of `uplinkBandwidthKhz`: plans whose downlinks use
 * 500 kHz channels (US915, AU915: RX1 data rate = the uplink's SF at 500 kHz with the default
 * RX1 offset, from memory of the Regional Parameters) reply at 500 kHz; EU-style plans reply on
 * the uplink channel at the uplink's bandwidth.
 */
export function rx1BandwidthKhz(plan: BandPlan, uplinkBandwidthKhz: number): number {
  const lorawan = plan.lorawan;
  if (!lorawan) return uplinkBandwidthKhz;
  const rx2 = lorawan.dataRates.find((rate) => rate.dr === lorawan.rx2.dr);
  return rx2 && rx2.modulation === 'lora' && rx2.bandwidthKhz === 500 ? 500 : uplinkBandwidthKhz;
}

/** Uplink channels of the band plan's LoRaWAN default list that carry a LoRa data rate of this SF and bandwidth. */
export function uplinkChannelCount(plan: BandPlan, sf: number, bandwidthKhz: number): number {
  const lorawan = plan.lorawan;
  if (!lorawan) return 1;
  const drs = lorawan.dataRates.filter((rate) => rate.modulation === 'lora' && rate.spreadingFactor === sf && Math.abs(rate.bandwidthKhz - bandwidthKhz) < 0.01).map((rate) => rate.dr);
  return lorawan.defaultChannels.filter((channel) => Math.abs(channel.bandwidthKhz - bandwidthKhz) < 0.01 && drs.some((dr) => dr >= channel.minDr && dr <= channel.maxDr)).length;
}

/** The duty-cycle and dwell rules that govern uplinks of a bandwidth on the plan's default channels. */
export interface UplinkRules {
  /** Tightest duty cycle among the channels' sub-bands, percent; null = no duty-cycle rule. */
  dutyCyclePercent: number | null;
  /** Dwell limit per channel, ms, within `dwellWindowS`; null = none. */
  dwellTimeMs: number | null;
  dwellWindowS: number | null;
  /** Where the figures come from (the limit's source text). */
  sources: string[];
}

export function uplinkRules(plan: BandPlan, bandwidthKhz: number): UplinkRules {
  const channels = plan.lorawan?.defaultChannels.filter((c) => Math.abs(c.bandwidthKhz - bandwidthKhz) < 0.01) ?? [];
  const frequencies = channels.length > 0 ? channels.map((c) => c.frequencyMhz) : [(plan.fromMhz + plan.toMhz) / 2];
  let dutyCyclePercent: number | null = null;
  let dwellTimeMs: number | null = null;
  let dwellWindowS: number | null = null;
  const sources = new Set<string>();
  for (const frequencyMhz of frequencies) {
    const limit = limitForChannel(plan, frequencyMhz, bandwidthKhz);
    if (!limit) continue;
    sources.add(limit.source);
    if (limit.dutyCyclePercent !== null) dutyCyclePercent = dutyCyclePercent === null ? limit.dutyCyclePercent : Math.min(dutyCyclePercent, limit.dutyCyclePercent);
    if (limit.dwellTimeMs !== null) {
      dwellTimeMs = dwellTimeMs === null ? limit.dwellTimeMs : Math.min(dwellTimeMs, limit.dwellTimeMs);
      dwellWindowS = limit.dwellWindowS;
    }
  }
  // LoRaWAN plans that impose an uplink dwell limit of their own (AS923, AU915).
  if (dwellTimeMs === null && plan.lorawan?.uplinkDwellTimeMs) {
    dwellTimeMs = plan.lorawan.uplinkDwellTimeMs;
    sources.add(plan.lorawan.source);
  }
  return { dutyCyclePercent, dwellTimeMs, dwellWindowS, sources: [...sources] };
}

export interface AirtimeBudget {
  timeOnAirMs: number;
  /** Messages per hour the duty cycle allows: ⌊3600 s · DC / ToA⌋ (EU868 1 %: ⌊36 s / ToA⌋); null = no duty-cycle rule. */
  maxMessagesPerHourAtDutyCycle: number | null;
  /** Whether one frame fits the dwell limit; null = no dwell rule. */
  dwellOk: boolean | null;
  /**
   * Messages per hour the dwell rule allows when the node hops evenly over `channels`:
   * ⌊dwell / ToA⌋ frames per channel per window (47 CFR §15.247(a)(1)(i): 0.4 s in 20 s); null = no dwell rule.
   */
  maxMessagesPerHourAtDwell: number | null;
  /** Whether `messagesPerHour` exceeds either budget (or a frame exceeds the dwell limit). */
  overBudget: boolean;
  warnings: string[];
}

/** The duty-cycle and dwell budget of a frame at a reporting rate. */
export function airtimeBudget(rules: UplinkRules, timeOnAirMs: number, messagesPerHourWanted: number, channels: number): AirtimeBudget {
  const warnings: string[] = [];
  const dcMax = messagesPerHour(timeOnAirMs, rules.dutyCyclePercent);
  let dwellOk: boolean | null = null;
  let dwellMax: number | null = null;
  if (rules.dwellTimeMs !== null) {
    dwellOk = timeOnAirMs <= rules.dwellTimeMs;
    if (!dwellOk) {
      dwellMax = 0;
      warnings.push(`one frame lasts ${timeOnAirMs.toFixed(0)} ms, over the ${rules.dwellTimeMs} ms dwell time: use a faster SF or a shorter payload`);
    } else if (rules.dwellWindowS !== null) {
      dwellMax = Math.floor(rules.dwellTimeMs / timeOnAirMs + 1e-9) * Math.floor(3600 / rules.dwellWindowS) * Math.max(1, channels);
    }
  }
  if (dcMax !== null && messagesPerHourWanted > dcMax)
    warnings.push(`${messagesPerHourWanted} messages/h exceed the ${rules.dutyCyclePercent} % duty cycle, which allows ${dcMax} messages/h of ${timeOnAirMs.toFixed(0)} ms`);
  if (dwellMax !== null && dwellOk && messagesPerHourWanted > dwellMax)
    warnings.push(`${messagesPerHourWanted} messages/h exceed the dwell rule (${rules.dwellTimeMs} ms per channel in ${rules.dwellWindowS} s), which allows ${dwellMax} messages/h`);
  const overBudget = dwellOk === false || (dcMax !== null && messagesPerHourWanted > dcMax) || (dwellMax !== null && messagesPerHourWanted > dwellMax);
  return { timeOnAirMs, maxMessagesPerHourAtDutyCycle: dcMax, dwellOk, maxMessagesPerHourAtDwell: dwellMax, overBudget, warnings };
}
