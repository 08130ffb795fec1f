// Band plans as data: the regulatory limits of each sub-GHz band earshot plans
// for, each with its source beside it, and the LoRaWAN channel plan that goes
// with the band (LoRa Alliance "LoRaWAN Regional Parameters", an open
// specification; the tables below are from memory of RP002-1.0.x and say so).
//
// Regulations change and differ by country: these are planning figures, not
// legal advice. The plan's `cautions` say so to the user.

/** ERP (relative to a half-wave dipole) = EIRP − 2.15 dB. */
export const DIPOLE_GAIN_DBI = 2.15;
export const erpFromEirpDbm = (eirpDbm: number): number => eirpDbm - DIPOLE_GAIN_DBI;
export const eirpFromErpDbm = (erpDbm: number): number => erpDbm + DIPOLE_GAIN_DBI;

export interface BandLimit {
  /** Stable id of the limit within its plan (sub-band letter where the rule has one). */
  id: string;
  name: string;
  fromMhz: number;
  toMhz: number;
  /** Radiated power limit, given as the rule gives it: EIRP or ERP (never both). */
  maxEirpDbm?: number;
  maxErpDbm?: number;
  /** Conducted (transmitter output) power limit where the rule sets one. */
  maxConductedDbm?: number;
  /** Antenna gain above which the conducted limit comes down dB for dB (47 CFR §15.247(b)(4)). */
  antennaGainAllowanceDbi?: number;
  /** Duty-cycle limit in percent of any hour; null = no duty-cycle limit. */
  dutyCyclePercent: number | null;
  /** Longest occupancy of one channel, ms, within `dwellWindowS`; null = no dwell limit. */
  dwellTimeMs: number | null;
  dwellWindowS: number | null;
  /** Limit applies only to emissions at least / at most this wide (kHz). */
  minBandwidthKhz?: number;
  maxBandwidthKhz?: number;
  listenBeforeTalk?: boolean;
  source: string;
  notes: string[];
}

export type DataRateModulation = 'lora' | 'fsk' | 'lr-fhss';

export interface LorawanDataRate {
  dr: number;
  modulation: DataRateModulation;
  spreadingFactor?: number;
  bandwidthKhz: number;
  /** FSK or LR-FHSS bit rate, bit/s. */
  bitRateBps?: number;
  /** Maximum MACPayload (M) and application payload (N = FRMPayload) in bytes; null = DR not allowed. */
  maxMacPayloadBytes: number | null;
  maxAppPayloadBytes: number | null;
  /** Same, when the uplink dwell-time limit (400 ms) is in force (AS923, AU915). */
  dwellLimited?: { maxMacPayloadBytes: number | null; maxAppPayloadBytes: number | null };
}

export interface LorawanChannel {
  frequencyMhz: number;
  bandwidthKhz: number;
  minDr: number;
  maxDr: number;
}

export interface LorawanPlan {
  id: string;
  name: string;
  /** Channels every device knows at join (EU-style plans) or the fixed uplink grid (US-style plans). */
  defaultChannels: LorawanChannel[];
  /** Fixed uplink/downlink channel grids of US-style plans, described. */
  channelGrid?: string[];
  dataRates: LorawanDataRate[];
  defaultMaxEirpDbm: number;
  rx2: { frequencyMhz: number; dr: number };
  /** Uplink dwell-time limit, ms (null = none). */
  uplinkDwellTimeMs: number | null;
  source: string;
}

export interface BandPlan {
  id: string;
  name: string;
  region: string;
  fromMhz: number;
  toMhz: number;
  limits: BandLimit[];
  lorawan?: LorawanPlan;
  cautions: string[];
}

const RP_SOURCE = 'LoRa Alliance LoRaWAN Regional Parameters RP002-1.0.x (open specification), from memory';

/**
 * EU868 / EU433 maximum MAC payload M per DR0..DR7: the repeater-compatible table of the
 * LoRaWAN Regional Parameters (from memory): 59/59/59/123/230/230/230/230 bytes; the
 * application payload N = M − 8 (FHDR 7 + FPort 1 with no FOpts) gives 51/51/51/115/222/222.
 */
const EU_REPEATER_COMPATIBLE_MAC_PAYLOADS = [59, 59, 59, 123, 230, 230, 230, 230];

const COMMON_CAUTIONS = [
  'Planning figures only, not legal advice: the regulator of the country of use has the last word; rules change and national variants exist.',
  'The power limit counts what leaves the antenna (EIRP/ERP): antenna gain and feedline loss both matter.',
  'RF exposure: keep people out of the main beam close to gateway antennas; observe local exposure limits.',
];

/** LoRa 125 kHz data rates DR0..DR5 = SF12..SF7 with one payload table (EU-style plans). */
function euStyleRates(macPayloads: (number | null)[], withDr6Sf7Bw250: boolean, withFskDr7: boolean): LorawanDataRate[] {
  const rates: LorawanDataRate[] = [];
  for (let dr = 0; dr <= 5; dr++) {
    const m = macPayloads[dr];
    rates.push({ dr, modulation: 'lora', spreadingFactor: 12 - dr, bandwidthKhz: 125, maxMacPayloadBytes: m, maxAppPayloadBytes: m === null ? null : m - 8 });
  }
  if (withDr6Sf7Bw250) rates.push({ dr: 6, modulation: 'lora', spreadingFactor: 7, bandwidthKhz: 250, maxMacPayloadBytes: macPayloads[6], maxAppPayloadBytes: (macPayloads[6] ?? 8) - 8 });
  if (withFskDr7) rates.push({ dr: 7, modulation: 'fsk', bandwidthKhz: 156, bitRateBps: 50_000, maxMacPayloadBytes: macPayloads[7], maxAppPayloadBytes: (macPayloads[7] ?? 8) - 8 });
  return rates;
}

function channels(frequenciesMhz: number[], maxDr = 5): LorawanChannel[] {
  return frequenciesMhz.map((frequencyMhz) => ({ frequencyMhz, bandwidthKhz: 125, minDr: 0, maxDr }));
}

const ERC = 'ERC Recommendation 70-03 Annex 1 (non-specific short range devices), harmonised standard ETSI EN 300 220-2';

export const bandPlans: BandPlan[] = [
  {
    id: 'us-902-928',
    name: 'US 902–928 MHz ISM',
    region: 'United States',
    fromMhz: 902,
    toMhz: 928,
    limits: [
      {
        id: 'fhss',
        name: 'Frequency hopping, 20 dB bandwidth below 250 kHz, at least 50 channels',
        fromMhz: 902,
        toMhz: 928,
        maxEirpDbm: 36,
        maxConductedDbm: 30,
        antennaGainAllowanceDbi: 6,
        dutyCyclePercent: null,
        dwellTimeMs: 400,
        dwellWindowS: 20,
        maxBandwidthKhz: 250,
        source:
          '47 CFR §15.247(b)(2) 1 W conducted for ≥ 50 hopping channels; §15.247(b)(4) antenna gain above 6 dBi reduces the power dB for dB, hence 36 dBm EIRP; §15.247(a)(1)(i) average occupancy ≤ 0.4 s per channel within 20 s',
        notes: ['LoRaWAN US915 125 kHz uplinks fall here.'],
      },
      {
        id: 'fhss-wide',
        name: 'Frequency hopping, 20 dB bandwidth 250 kHz or more, 25–49 channels',
        fromMhz: 902,
        toMhz: 928,
        maxEirpDbm: 30,
        maxConductedDbm: 24,
        antennaGainAllowanceDbi: 6,
        dutyCyclePercent: null,
        dwellTimeMs: 400,
        dwellWindowS: 10,
        minBandwidthKhz: 250,
        maxBandwidthKhz: 500,
        source:
          '47 CFR §15.247(b)(2) 0.25 W conducted for 25–49 hopping channels; §15.247(b)(4) antenna gain above 6 dBi reduces the power, hence 30 dBm EIRP; §15.247(a)(1)(i) occupancy ≤ 0.4 s per channel within 10 s when the 20 dB bandwidth is 250 kHz or more',
        notes: ['LoRa at 250 kHz is too narrow for the digital-modulation rule (6 dB bandwidth ≥ 500 kHz) and hops under this one.'],
      },
      {
        id: 'dts',
        name: 'Digital modulation, 6 dB bandwidth at least 500 kHz',
        fromMhz: 902,
        toMhz: 928,
        maxEirpDbm: 36,
        maxConductedDbm: 30,
        antennaGainAllowanceDbi: 6,
        dutyCyclePercent: null,
        dwellTimeMs: null,
        dwellWindowS: null,
        minBandwidthKhz: 500,
        source:
          '47 CFR §15.247(a)(2) 6 dB bandwidth ≥ 500 kHz; §15.247(b)(3) 1 W conducted; §15.247(b)(4) antenna gain above 6 dBi reduces the power, hence 36 dBm EIRP; §15.247(e) PSD ≤ 8 dBm in any 3 kHz',
        notes: ['LoRa at 500 kHz qualifies as digital modulation: no dwell-time limit.'],
      },
    ],
    lorawan: {
      id: 'US915',
      name: 'LoRaWAN US902-928',
      defaultChannels: Array.from({ length: 8 }, (_, n) => ({ frequencyMhz: Math.round((902.3 + 0.2 * n) * 10) / 10, bandwidthKhz: 125, minDr: 0, maxDr: 3 })),
      channelGrid: [
        'uplink 125 kHz: 64 channels at 902.3 + 0.2·n MHz (n = 0…63), DR0–DR3',
        'uplink 500 kHz: 8 channels at 903.0 + 1.6·n MHz (n = 0…7), DR4',
        'downlink 500 kHz: 8 channels at 923.3 + 0.6·n MHz (n = 0…7), DR8–DR13',
        'defaultChannels lists sub-band 1 (channels 0–7); most networks use sub-band 2 (903.9–905.3 MHz)',
      ],
      dataRates: [
        { dr: 0, modulation: 'lora', spreadingFactor: 10, bandwidthKhz: 125, maxMacPayloadBytes: 19, maxAppPayloadBytes: 11 },
        { dr: 1, modulation: 'lora', spreadingFactor: 9, bandwidthKhz: 125, maxMacPayloadBytes: 61, maxAppPayloadBytes: 53 },
        { dr: 2, modulation: 'lora', spreadingFactor: 8, bandwidthKhz: 125, maxMacPayloadBytes: 133, maxAppPayloadBytes: 125 },
        { dr: 3, modulation: 'lora', spreadingFactor: 7, bandwidthKhz: 125, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 4, modulation: 'lora', spreadingFactor: 8, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 5, modulation: 'lr-fhss', bandwidthKhz: 1523, bitRateBps: 162, maxMacPayloadBytes: 58, maxAppPayloadBytes: 50 },
        { dr: 6, modulation: 'lr-fhss', bandwidthKhz: 1523, bitRateBps: 325, maxMacPayloadBytes: 133, maxAppPayloadBytes: 125 },
        { dr: 8, modulation: 'lora', spreadingFactor: 12, bandwidthKhz: 500, maxMacPayloadBytes: 61, maxAppPayloadBytes: 53 },
        { dr: 9, modulation: 'lora', spreadingFactor: 11, bandwidthKhz: 500, maxMacPayloadBytes: 137, maxAppPayloadBytes: 129 },
        { dr: 10, modulation: 'lora', spreadingFactor: 10, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 11, modulation: 'lora', spreadingFactor: 9, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 12, modulation: 'lora', spreadingFactor: 8, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 13, modulation: 'lora', spreadingFactor: 7, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
      ],
      defaultMaxEirpDbm: 30,
      rx2: { frequencyMhz: 923.3, dr: 8 },
      uplinkDwellTimeMs: 400,
      source: `${RP_SOURCE}; payload limits follow from the 400 ms dwell time at DR0`,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'eu-863-870',
    name: 'EU 863–870 MHz SRD',
    region: 'European Union / CEPT',
    fromMhz: 863,
    toMhz: 870,
    limits: [
      { id: 'h1.3', name: '863.0–865.0 MHz', fromMhz: 863, toMhz: 865, maxErpDbm: 14, dutyCyclePercent: 0.1, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.3: 25 mW ERP, 0.1 % duty cycle or LBT+AFA (sub-band letters and limits from memory)`, notes: [] },
      { id: 'h1.4', name: '865.0–868.0 MHz', fromMhz: 865, toMhz: 868, maxErpDbm: 14, dutyCyclePercent: 1, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.4: 25 mW ERP, 1 % duty cycle or LBT+AFA (from memory)`, notes: [] },
      { id: 'h1.5', name: '868.0–868.6 MHz', fromMhz: 868, toMhz: 868.6, maxErpDbm: 14, dutyCyclePercent: 1, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.5: 25 mW ERP, 1 % duty cycle (from memory)`, notes: ['LoRaWAN EU868 default channels 868.1/868.3/868.5 MHz.'] },
      { id: 'h1.6', name: '868.7–869.2 MHz', fromMhz: 868.7, toMhz: 869.2, maxErpDbm: 14, dutyCyclePercent: 0.1, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.6: 25 mW ERP, 0.1 % duty cycle (from memory)`, notes: [] },
      { id: 'h1.7', name: '869.4–869.65 MHz', fromMhz: 869.4, toMhz: 869.65, maxErpDbm: 27, dutyCyclePercent: 10, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.7: 500 mW ERP, 10 % duty cycle (from memory)`, notes: ['LoRaWAN EU868 RX2 869.525 MHz.'] },
      { id: 'h1.8', name: '869.7–870.0 MHz', fromMhz: 869.7, toMhz: 870, maxErpDbm: 14, dutyCyclePercent: 1, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, sub-band h1.8: 25 mW ERP, 1 % duty cycle (5 mW ERP without duty-cycle limit) (from memory)`, notes: [] },
    ],
    lorawan: {
      id: 'EU868',
      name: 'LoRaWAN EU863-870',
      defaultChannels: channels([868.1, 868.3, 868.5]),
      dataRates: euStyleRates(EU_REPEATER_COMPATIBLE_MAC_PAYLOADS, true, true),
      defaultMaxEirpDbm: 16,
      rx2: { frequencyMhz: 869.525, dr: 0 },
      uplinkDwellTimeMs: null,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'eu-433',
    name: 'EU 433.05–434.79 MHz SRD',
    region: 'European Union / CEPT',
    fromMhz: 433.05,
    toMhz: 434.79,
    limits: [
      { id: '433', name: '433.05–434.79 MHz', fromMhz: 433.05, toMhz: 434.79, maxErpDbm: 10, dutyCyclePercent: 10, dwellTimeMs: null, dwellWindowS: null, source: `${ERC}, 433.050–434.790 MHz entry: 10 mW ERP, 10 % duty cycle (from memory)`, notes: [] },
    ],
    lorawan: {
      id: 'EU433',
      name: 'LoRaWAN EU433',
      defaultChannels: channels([433.175, 433.375, 433.575]),
      dataRates: euStyleRates(EU_REPEATER_COMPATIBLE_MAC_PAYLOADS, true, true),
      defaultMaxEirpDbm: 12.15,
      rx2: { frequencyMhz: 434.665, dr: 0 },
      uplinkDwellTimeMs: null,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'au-915-928',
    name: 'AU 915–928 MHz',
    region: 'Australia',
    fromMhz: 915,
    toMhz: 928,
    limits: [
      {
        id: 'lipd-915',
        name: '915–928 MHz, digital modulation or frequency hopping',
        fromMhz: 915,
        toMhz: 928,
        maxEirpDbm: 30,
        dutyCyclePercent: null,
        dwellTimeMs: 400,
        dwellWindowS: 20,
        source:
          'ACMA Radiocommunications (Low Interference Potential Devices) Class Licence 2015, 915–928 MHz item: 1 W EIRP for digital modulation or hopping transmitters (from memory); 400 ms dwell for hopping transmitters (from memory)',
        notes: ['LoRaWAN AU915 devices may be told to respect the 400 ms uplink dwell time.'],
      },
    ],
    lorawan: {
      id: 'AU915',
      name: 'LoRaWAN AU915-928',
      defaultChannels: Array.from({ length: 8 }, (_, n) => ({ frequencyMhz: Math.round((915.2 + 0.2 * n) * 10) / 10, bandwidthKhz: 125, minDr: 0, maxDr: 5 })),
      channelGrid: [
        'uplink 125 kHz: 64 channels at 915.2 + 0.2·n MHz (n = 0…63), DR0–DR5',
        'uplink 500 kHz: 8 channels at 915.9 + 1.6·n MHz (n = 0…7), DR6',
        'downlink 500 kHz: 8 channels at 923.3 + 0.6·n MHz (n = 0…7), DR8–DR13',
      ],
      dataRates: [
        ...[59, 59, 59, 123, 250, 250].map((m, dr) => ({
          dr,
          modulation: 'lora' as const,
          spreadingFactor: 12 - dr,
          bandwidthKhz: 125,
          maxMacPayloadBytes: m,
          maxAppPayloadBytes: m - 8,
          dwellLimited: [null, null, { m: 19 }, { m: 61 }, { m: 133 }, { m: 250 }].map((x) => ({ maxMacPayloadBytes: x ? x.m : null, maxAppPayloadBytes: x ? x.m - 8 : null }))[dr],
        })),
        { dr: 6, modulation: 'lora', spreadingFactor: 8, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242, dwellLimited: { maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 } },
        { dr: 8, modulation: 'lora', spreadingFactor: 12, bandwidthKhz: 500, maxMacPayloadBytes: 61, maxAppPayloadBytes: 53 },
        { dr: 9, modulation: 'lora', spreadingFactor: 11, bandwidthKhz: 500, maxMacPayloadBytes: 137, maxAppPayloadBytes: 129 },
        { dr: 10, modulation: 'lora', spreadingFactor: 10, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 11, modulation: 'lora', spreadingFactor: 9, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 12, modulation: 'lora', spreadingFactor: 8, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
        { dr: 13, modulation: 'lora', spreadingFactor: 7, bandwidthKhz: 500, maxMacPayloadBytes: 250, maxAppPayloadBytes: 242 },
      ],
      defaultMaxEirpDbm: 30,
      rx2: { frequencyMhz: 923.3, dr: 8 },
      uplinkDwellTimeMs: 400,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'as-923',
    name: 'AS 923 MHz (915–928 MHz, country variants)',
    region: 'Asia-Pacific countries using AS923',
    fromMhz: 915,
    toMhz: 928,
    limits: [
      {
        id: 'as923-typical',
        name: 'Typical national rule for 920–925 MHz',
        fromMhz: 915,
        toMhz: 928,
        maxEirpDbm: 16,
        dutyCyclePercent: null,
        dwellTimeMs: 400,
        dwellWindowS: null,
        source:
          'varies by country (national rules not sourced here); 16 dBm EIRP is the AS923 default maximum and 400 ms the uplink dwell time where a country requires it, both from the LoRaWAN Regional Parameters (from memory)',
        notes: ['Some countries require listen-before-talk or a duty cycle; check the national regulator.'],
      },
    ],
    lorawan: {
      id: 'AS923-1',
      name: 'LoRaWAN AS923-1',
      defaultChannels: channels([923.2, 923.4]),
      channelGrid: ['AS923-1 923.2/923.4 MHz, AS923-2 921.4/921.6 MHz, AS923-3 916.6/916.8 MHz, AS923-4 917.3/917.5 MHz'],
      dataRates: euStyleRates([59, 59, 59, 123, 250, 250, 250, 250], true, true).map((rate) => {
        const limited = [null, null, 19, 61, 133, 250, 250, 250][rate.dr];
        return { ...rate, dwellLimited: { maxMacPayloadBytes: limited, maxAppPayloadBytes: limited === null ? null : limited - 8 } };
      }),
      defaultMaxEirpDbm: 16,
      rx2: { frequencyMhz: 923.2, dr: 2 },
      uplinkDwellTimeMs: 400,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'in-865-867',
    name: 'IN 865–867 MHz',
    region: 'India',
    fromMhz: 865,
    toMhz: 867,
    limits: [
      {
        id: 'in-865',
        name: '865–867 MHz, licence-exempt',
        fromMhz: 865,
        toMhz: 867,
        maxErpDbm: 36,
        maxConductedDbm: 30,
        dutyCyclePercent: null,
        dwellTimeMs: null,
        dwellWindowS: null,
        source: 'Government of India notification G.S.R. 564(E) (2005) as amended: 1 W transmitter power, 4 W ERP, 200 kHz carrier bandwidth (from memory)',
        notes: [],
      },
    ],
    lorawan: {
      id: 'IN865',
      name: 'LoRaWAN IN865-867',
      defaultChannels: channels([865.0625, 865.4025, 865.985]),
      dataRates: euStyleRates([59, 59, 59, 123, 250, 250, null, 250], false, true),
      defaultMaxEirpDbm: 30,
      rx2: { frequencyMhz: 866.55, dr: 2 },
      uplinkDwellTimeMs: null,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
  {
    id: 'kr-920-923',
    name: 'KR 920.9–923.3 MHz',
    region: 'Republic of Korea',
    fromMhz: 920.9,
    toMhz: 923.3,
    limits: [
      {
        id: 'kr-920',
        name: '920.9–923.3 MHz, listen-before-talk',
        fromMhz: 920.9,
        toMhz: 923.3,
        maxEirpDbm: 14,
        dutyCyclePercent: null,
        dwellTimeMs: null,
        dwellWindowS: null,
        listenBeforeTalk: true,
        source: 'Korean technical rules for radio equipment without licence (not sourced here); 14 dBm EIRP is the KR920 default maximum for end devices in the LoRaWAN Regional Parameters, LBT required (from memory)',
        notes: ['Listen-before-talk is mandatory; a maximum continuous transmission time also applies (not sourced here).'],
      },
    ],
    lorawan: {
      id: 'KR920',
      name: 'LoRaWAN KR920-923',
      defaultChannels: channels([922.1, 922.3, 922.5]),
      dataRates: euStyleRates([59, 59, 59, 123, 250, 250], false, false),
      defaultMaxEirpDbm: 14,
      rx2: { frequencyMhz: 921.9, dr: 0 },
      uplinkDwellTimeMs: null,
      source: RP_SOURCE,
    },
    cautions: COMMON_CAUTIONS,
  },
];

export class UnknownBandPlanError extends Error {}

export function findBandPlan(id: string): BandPlan {
  const found = bandPlans.find((p) => p.id === id);
  if (!found) throw new UnknownBandPlanError(`unknown band plan "${id}" (known: ${bandPlans.map((p) => p.id).join(', ')})`);
  return found;
}

/** Radiated power limit of a band limit as EIRP (dBm), converting ERP limits (+2.15 dB). */
export function limitEirpDbm(limit: BandLimit): number | null {
  if (limit.maxEirpDbm !== undefined) return limit.maxEirpDbm;
  if (limit.maxErpDbm !== undefined) return eirpFromErpDbm(limit.maxErpDbm);
  return null;
}

/**
 * The limit that governs a channel: its whole occupied band (centre ± BW/2) must lie in the
 * sub-band, and the emission width must suit the limit (e.g. hopping below 250 kHz vs.
 * digital modulation from 500 kHz in the US). Returns undefined when no limit covers it.
 */
export function limitForChannel(plan: BandPlan, frequencyMhz: number, bandwidthKhz: number): BandLimit | undefined {
  const halfMhz = bandwidthKhz / 2000;
  const eps = 1e-9;
  return plan.limits.find(
    (limit) =>
      frequencyMhz - halfMhz >= limit.fromMhz - eps &&
      frequencyMhz + halfMhz <= limit.toMhz + eps &&
      (limit.minBandwidthKhz === undefined || bandwidthKhz >= limit.minBandwidthKhz) &&
      (limit.maxBandwidthKhz === undefined || bandwidthKhz < limit.maxBandwidthKhz),
  );
}

/** LoRaWAN PHYPayload bytes for an application payload: MHDR 1 + FHDR 7 + FOpts + FPort 1 + FRMPayload + MIC 4 (LoRaWAN 1.0.x frame layout). */
export function lorawanPhyPayloadBytes(appPayloadBytes: number, fOptsBytes = 0): number {
  if (!Number.isInteger(appPayloadBytes) || appPayloadBytes < 0) throw new RangeError(`application payload must be a whole number of bytes ≥ 0 (got ${appPayloadBytes})`);
  if (!Number.isInteger(fOptsBytes) || fOptsBytes < 0 || fOptsBytes > 15) throw new RangeError(`FOpts must be 0–15 bytes (got ${fOptsBytes})`);
  return 1 + 7 + fOptsBytes + 1 + appPayloadBytes + 4;
}

/** The data-rate entry of a plan, or undefined when the plan has no such DR. */
export function lorawanDataRate(plan: BandPlan, dr: number): LorawanDataRate | undefined {
  return plan.lorawan?.dataRates.find((rate) => rate.dr === dr);
}

/** Largest application payload (bytes) at a DR; with `dwellLimited` the 400 ms table where the plan has one. Null = DR not allowed. */
export function maxAppPayloadBytes(plan: BandPlan, dr: number, dwellLimited = false): number | null {
  const rate = lorawanDataRate(plan, dr);
  if (!rate) throw new UnknownBandPlanError(`${plan.id} has no data rate DR${dr}`);
  if (dwellLimited && rate.dwellLimited) return rate.dwellLimited.maxAppPayloadBytes;
  return rate.maxAppPayloadBytes;
}
