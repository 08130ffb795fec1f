import { describe, expect, it } from 'vitest';
import {
  ldroEnabled,
  matchLoraBandwidthKhz,
  noiseFloorDbm,
  receptionPerSf,
  sensitivityDbm,
  snrFloorDb,
  symbolTimeMs,
  timeOnAirMs,
  RadioParameterError,
} from '../../../server/radio/lora-phy.ts';

// Expected values below are worked by hand from the SX1276/77/78/79 datasheet §4.1.1.6
// time-on-air formula (Ts = 2^SF/BW; Tpreamble = (n + 4.25)·Ts;
// payloadSymbNb = 8 + max(ceil((8PL − 4SF + 28 + 16CRC − 20IH)/(4(SF − 2DE)))·(CR + 4), 0)).
describe('time on air, SX1276 datasheet §4.1.1.6 (values computed by hand from the formula)', () => {
  const frame = { bandwidthKhz: 125, codingRate: '4/5' as const, payloadBytes: 20 };

  it('SF7/125 kHz/CR 4/5/20 B/8-symbol preamble/explicit header/CRC → 56.58 ms (Ts 1.024 ms, 43 payload symbols)', () => {
    const t = timeOnAirMs({ ...frame, spreadingFactor: 7 });
    expect(t.symbolMs).toBeCloseTo(1.024, 9);
    expect(t.preambleMs).toBeCloseTo(12.544, 9);
    expect(t.payloadSymbols).toBe(43); // ceil(176/28) = 7 blocks × 5 + 8
    expect(t.timeOnAirMs).toBeCloseTo(56.576, 6);
    expect(t.ldroOn).toBe(false);
  });

  it('SF12 with the same frame → 1318.9 ms (Ts 32.768 ms, LDRO auto on, 28 payload symbols)', () => {
    const t = timeOnAirMs({ ...frame, spreadingFactor: 12 });
    expect(t.ldroOn).toBe(true);
    expect(t.payloadSymbols).toBe(28); // ceil(156/40) = 4 blocks × 5 + 8
    expect(t.timeOnAirMs).toBeCloseTo(1318.912, 6);
  });

  it('SF11/125 kHz: LDRO auto turns on at Ts = 16.384 ms ≥ 16 ms → 741.376 ms; forced off → 659.456 ms', () => {
    expect(timeOnAirMs({ ...frame, spreadingFactor: 11 }).timeOnAirMs).toBeCloseTo(741.376, 6); // ceil(160/36)=5 → 33 symbols
    expect(timeOnAirMs({ ...frame, spreadingFactor: 11, ldro: 'off' }).timeOnAirMs).toBeCloseTo(659.456, 6); // ceil(160/44)=4 → 28
  });

  it('LDRO auto rule (LoRaWAN practice: on when Ts ≥ 16 ms): SF10/125 off, SF10/62.5 on, SF12/250 on, SF11/250 off', () => {
    expect(ldroEnabled('auto', 10, 125)).toBe(false);
    expect(ldroEnabled('auto', 10, 62.5)).toBe(true);
    expect(ldroEnabled('auto', 12, 250)).toBe(true);
    expect(ldroEnabled('auto', 11, 250)).toBe(false);
    expect(ldroEnabled('on', 7, 500)).toBe(true);
    expect(ldroEnabled('off', 12, 125)).toBe(false);
  });

  it('SF9/125, CR 4/8, 10 B, implicit header, no CRC → 148.48 ms (ceil(52/36) = 2 blocks × 8 + 8 = 24 symbols)', () => {
    const t = timeOnAirMs({ spreadingFactor: 9, bandwidthKhz: 125, codingRate: '4/8', payloadBytes: 10, explicitHeader: false, crcOn: false });
    expect(t.payloadSymbols).toBe(24);
    expect(t.timeOnAirMs).toBeCloseTo(148.48, 6);
  });

  it('coding rates 4/5..4/8 change the block length (CR + 4): SF7/125, 20 B → 43, 50, 57, 64 symbols', () => {
    const symbols = (['4/5', '4/6', '4/7', '4/8'] as const).map((cr) => timeOnAirMs({ ...frame, codingRate: cr, spreadingFactor: 7 }).payloadSymbols);
    expect(symbols).toEqual([43, 50, 57, 64]);
  });

  it('a longer preamble adds whole symbols: 16 symbols instead of 8 at SF7/125 adds 8 × 1.024 ms', () => {
    const a = timeOnAirMs({ ...frame, spreadingFactor: 7 }).timeOnAirMs;
    const b = timeOnAirMs({ ...frame, spreadingFactor: 7, preambleSymbols: 16 }).timeOnAirMs;
    expect(b - a).toBeCloseTo(8.192, 9);
  });

  it('empty implicit frame without CRC at SF12: the max(…, 0) clause leaves exactly 8 payload symbols', () => {
    const t = timeOnAirMs({ spreadingFactor: 12, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: 0, explicitHeader: false, crcOn: false });
    expect(t.payloadSymbols).toBe(8);
  });

  it('SF7/500 kHz, 20 B → 14.144 ms (Ts 0.256 ms), a quarter of the 125 kHz figure', () => {
    expect(timeOnAirMs({ ...frame, bandwidthKhz: 500, spreadingFactor: 7 }).timeOnAirMs).toBeCloseTo(14.144, 6);
  });

  it('narrow bandwidth as typed: SF7/7.8 kHz has Ts = 16.41 ms, so LDRO auto is on: ceil(176/20) = 9 → 53 symbols, (12.25 + 53)·128/7.8 = 1070.77 ms', () => {
    const t = timeOnAirMs({ ...frame, bandwidthKhz: 7.8, spreadingFactor: 7 });
    expect(t.ldroOn).toBe(true);
    expect(t.payloadSymbols).toBe(53);
    expect(t.timeOnAirMs).toBeCloseTo((65.25 * 128) / 7.8, 6);
  });

  it('SF5 (SX1261/62 datasheet §6.1.4, from memory: preamble + 6.25 symbols, no +8 in the numerator): 10 B → 12.096 ms', () => {
    // Ts = 32/125 = 0.256 ms; preamble 14.25 Ts = 3.648 ms; ceil((80 + 16 − 20 + 20)/20) = 5 → 25 + 8 = 33 symbols = 8.448 ms.
    const t = timeOnAirMs({ spreadingFactor: 5, bandwidthKhz: 125, codingRate: '4/5', payloadBytes: 10 });
    expect(t.payloadSymbols).toBe(33);
    expect(t.timeOnAirMs).toBeCloseTo(12.096, 6);
  });

  it('SX127x at SF6 uses the SX1276 form and needs implicit header: 20 B → 28.288 ms (ceil(160/24) = 7 → 43 symbols, Ts 0.512 ms)', () => {
    const t = timeOnAirMs({ ...frame, spreadingFactor: 6, explicitHeader: false, chip: 'sx127x' });
    expect(t.payloadSymbols).toBe(43);
    expect(t.timeOnAirMs).toBeCloseTo(28.288, 6);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 6, chip: 'sx127x' })).toThrow(/implicit header/);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 5, chip: 'sx127x' })).toThrow(/not available on the SX127x/);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 7, preambleSymbols: 4, chip: 'sx127x' })).toThrow(/6 symbols or more/);
    // For SF ≥ 7 the two chip families give the same figure.
    expect(timeOnAirMs({ ...frame, spreadingFactor: 9, chip: 'sx127x' }).timeOnAirMs).toBe(timeOnAirMs({ ...frame, spreadingFactor: 9 }).timeOnAirMs);
  });

  it('rejects what the chips cannot do, naming the field: SF 13, SF 4, negative or 256-byte payload, preamble 0', () => {
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 13 })).toThrow(/spreading factor/);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 4 })).toThrow(RadioParameterError);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 7, payloadBytes: -1 })).toThrow(/payload/);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 7, payloadBytes: 256 })).toThrow(/payload/);
    expect(() => timeOnAirMs({ ...frame, spreadingFactor: 7, preambleSymbols: 0 })).toThrow(/preamble/);
  });

  it('symbol time 2^SF/BW: SF12/125 kHz = 32.768 ms', () => {
    expect(symbolTimeMs(12, 125)).toBeCloseTo(32.768, 9);
  });

  it('bandwidth labels of the datasheets map to the chip bandwidths (7.8 → 7.8125 kHz, 41.7 → 41.667 kHz), others do not', () => {
    expect(matchLoraBandwidthKhz(7.8)).toBeCloseTo(7.8125, 6);
    expect(matchLoraBandwidthKhz(41.7)).toBeCloseTo(41.6667, 3);
    expect(matchLoraBandwidthKhz(125)).toBe(125);
    expect(matchLoraBandwidthKhz(100)).toBeUndefined();
  });
});

describe('sensitivity = −174 dBm/Hz + 10·log10(BW) + NF + SNR floor (thermal noise relation; SNR floors: datasheet values from memory)', () => {
  it('SNR floors −7.5 dB at SF7 down to −20 dB at SF12, 2.5 dB a step (SX1276 datasheet, from memory)', () => {
    expect([7, 8, 9, 10, 11, 12].map(snrFloorDb)).toEqual([-7.5, -10, -12.5, -15, -17.5, -20]);
    expect(snrFloorDb(6)).toBe(-5); // SX1261/62 datasheet, from memory
    expect(snrFloorDb(5)).toBe(-2.5);
  });

  it('SF12/125 kHz/NF 6 dB ≈ −137 dBm', () => {
    expect(sensitivityDbm(12, 125, 6)).toBeCloseTo(-137.03, 2);
  });

  it('SF7/125 kHz/NF 6 dB ≈ −124.5 dBm, within 2 dB of the −123 dBm the SX1276 datasheet lists (from memory)', () => {
    expect(sensitivityDbm(7, 125, 6)).toBeCloseTo(-124.53, 2);
    expect(Math.abs(sensitivityDbm(7, 125, 6) - -123)).toBeLessThan(2);
  });

  it('noise floor at 125 kHz with NF 6 dB = −174 + 50.97 + 6 = −117.03 dBm; 4× the bandwidth costs 6.02 dB', () => {
    expect(noiseFloorDbm(125, 6)).toBeCloseTo(-117.03, 2);
    expect(noiseFloorDbm(500, 6) - noiseFloorDbm(125, 6)).toBeCloseTo(6.0206, 4);
  });

  it('SNR and margin per SF from a received power: −120 dBm at 125 kHz/NF 6 → SNR −2.97 dB, margin 4.53 dB at SF7, 17.03 dB at SF12', () => {
    const r = receptionPerSf(-120, 125, 6);
    expect(r.map((x) => x.spreadingFactor)).toEqual([7, 8, 9, 10, 11, 12]);
    expect(r[0].snrDb).toBeCloseTo(-2.97, 2);
    expect(r[0].marginDb).toBeCloseTo(4.53, 2);
    expect(r[5].marginDb).toBeCloseTo(17.03, 2);
  });
});
