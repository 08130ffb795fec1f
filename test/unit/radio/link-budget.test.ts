import { describe, expect, it } from 'vitest';
import { findAntennaDesign } from '../../../server/radio/antennas.ts';
import { findConnector, findFeedline, feedlineLossDb } from '../../../server/radio/feedlines.ts';
import { computeLinkBudget, dwellTimeOk, messagesPerHour, minimumIntervalS } from '../../../server/radio/link-budget.ts';

const dipole = findAntennaDesign('half-wave-dipole');

describe('link budget: EIRP = P − losses + G; P_rx = EIRP − L + G_rx − losses; margin = P_rx − sensitivity', () => {
  it('14 dBm, matched dipoles both ends, 120 dB path → EIRP 16.15 dBm, ERP 14 dBm, P_rx −101.7 dBm, SF7 margin 22.83 dB (hand-computed)', () => {
    const b = computeLinkBudget({
      frequencyMhz: 868.1,
      bandwidthKhz: 125,
      pathLossDb: 120,
      transmitter: { powerDbm: 14, antenna: dipole, vswr: 1 },
      receiver: { antenna: dipole, vswr: 1, noiseFigureDb: 6 },
    });
    expect(b.transmitter.eirpDbm).toBeCloseTo(16.15, 9);
    expect(b.transmitter.erpDbm).toBeCloseTo(14, 9);
    expect(b.receivedPowerDbm).toBeCloseTo(-101.7, 9);
    // sensitivity SF7/125/NF6 = −174 + 50.969 + 6 − 7.5 = −124.531 dBm
    expect(b.perSf[0].marginDb).toBeCloseTo(22.831, 3);
    expect(b.perSf[5].marginDb).toBeCloseTo(35.331, 3);
    expect(b.bestSf).toBe(7);
  });

  it('feedline, connectors and mismatch come off each side: 20 m of 10 mm foam + 2 N pairs + VSWR 2 at the gateway', () => {
    const feed = findFeedline('low-loss-10mm');
    const base = {
      frequencyMhz: 915, bandwidthKhz: 125, pathLossDb: 130,
      transmitter: { powerDbm: 20, antenna: dipole, vswr: 1 },
    };
    const plain = computeLinkBudget({ ...base, receiver: { antenna: dipole, vswr: 1 } });
    const lossy = computeLinkBudget({
      ...base,
      receiver: { antenna: dipole, vswr: 2, feedline: { feedline: feed, lengthM: 20 }, connectors: [{ connector: findConnector('n-type'), count: 2 }] },
    });
    const expected = feedlineLossDb(feed, 915, 20) + 0.2 + 0.5115;
    expect(plain.receivedPowerDbm - lossy.receivedPowerDbm).toBeCloseTo(expected, 3);
    expect(lossy.receiver.mismatchLossDb).toBeCloseTo(0.5115, 3);
  });

  it('the gain toward the other end follows the pattern: a Yagi aimed 180° away loses its 15 dB front-to-back', () => {
    const yagi = findAntennaDesign('yagi-5-element');
    const common = { frequencyMhz: 915, bandwidthKhz: 125, pathLossDb: 130, receiver: { antenna: dipole, vswr: 1 } };
    const aimed = computeLinkBudget({ ...common, transmitter: { powerDbm: 14, antenna: yagi, vswr: 1, towardAzimuthDeg: 40 } });
    const away = computeLinkBudget({ ...common, transmitter: { powerDbm: 14, antenna: yagi, vswr: 1, towardAzimuthDeg: 40, boresightAzimuthDeg: 220 } });
    expect(aimed.transmitter.antennaGainDbi).toBeCloseTo(9, 9);
    expect(aimed.receivedPowerDbm - away.receivedPowerDbm).toBeCloseTo(15, 9);
  });

  it('best SF is the fastest meeting the target margin; null with a warning when none does', () => {
    const at = (pathLossDb: number) =>
      computeLinkBudget({ frequencyMhz: 868.1, bandwidthKhz: 125, pathLossDb, targetMarginDb: 10, transmitter: { powerDbm: 14, antenna: dipole, vswr: 1 }, receiver: { antenna: dipole, vswr: 1 } });
    // P_rx = 18.3 − L; needs P_rx ≥ sensitivity + 10.  SF7: −114.53 → L ≤ 132.83; SF12: −127.03 → L ≤ 145.33.
    expect(at(132).bestSf).toBe(7);
    expect(at(134).bestSf).toBe(8);
    expect(at(145).bestSf).toBe(12);
    const none = at(146);
    expect(none.bestSf).toBeNull();
    expect(none.warnings.join(' ')).toMatch(/no spreading factor reaches the 10 dB target margin/);
  });
});

describe('legal check against the band plan of the channel', () => {
  it('US: 30 dBm into an 8 dBi collinear is 38 dBm EIRP, 2 dB over 36 dBm, and over the conducted limit reduced to 28 dBm (47 CFR §15.247(b)(4))', () => {
    const b = computeLinkBudget({
      frequencyMhz: 915, bandwidthKhz: 125, pathLossDb: 120, bandPlan: 'us-902-928',
      transmitter: { powerDbm: 30, antenna: findAntennaDesign('collinear-fibreglass-8dbi'), vswr: 1 },
      receiver: { antenna: dipole, vswr: 1 },
    });
    const legal = b.legal!;
    expect(legal.limitId).toBe('fhss');
    expect(legal.peakEirpDbm).toBeCloseTo(38, 9);
    expect(legal.maxConductedDbm).toBeCloseTo(28, 9);
    expect(legal.withinLimit).toBe(false);
    expect(legal.excessDb).toBeCloseTo(2, 9);
    expect(b.warnings.join(' ')).toMatch(/exceeds the 36 dBm EIRP limit/);
  });

  it('US: 30 dBm into a 6 dBi antenna is exactly at 36 dBm EIRP and legal', () => {
    const b = computeLinkBudget({
      frequencyMhz: 915, bandwidthKhz: 500, pathLossDb: 120, bandPlan: 'us-902-928',
      transmitter: { powerDbm: 30, antenna: findAntennaDesign('collinear-fibreglass-6dbi'), vswr: 1 },
      receiver: { antenna: dipole, vswr: 1 },
    });
    expect(b.legal?.limitId).toBe('dts');
    expect(b.legal?.withinLimit).toBe(true);
  });

  it('EU h1.5: 14 dBm into a matched dipole = 14 dBm ERP, legal; into a 6 dBi collinear = 17.85 dBm ERP, 3.85 dB over', () => {
    const run = (antennaId: string) =>
      computeLinkBudget({
        frequencyMhz: 868.1, bandwidthKhz: 125, pathLossDb: 120, bandPlan: 'eu-863-870',
        transmitter: { powerDbm: 14, antenna: findAntennaDesign(antennaId), vswr: 1 },
        receiver: { antenna: dipole, vswr: 1 },
      });
    expect(run('half-wave-dipole').legal?.withinLimit).toBe(true);
    const over = run('collinear-fibreglass-6dbi').legal!;
    expect(over.peakErpDbm).toBeCloseTo(17.85, 9);
    expect(over.excessDb).toBeCloseTo(3.85, 9);
    expect(over.warnings[0]).toMatch(/ERP exceeds the 14 dBm ERP limit/);
  });

  it('a channel outside every sub-band is flagged (EU 870.5 MHz)', () => {
    const b = computeLinkBudget({
      frequencyMhz: 870.5, bandwidthKhz: 125, pathLossDb: 120, bandPlan: 'eu-863-870',
      transmitter: { powerDbm: 10, antenna: dipole }, receiver: { antenna: dipole },
    });
    expect(b.legal?.withinLimit).toBe(false);
    expect(b.legal?.limitId).toBeNull();
    expect(b.warnings[0]).toMatch(/lies in no sub-band/);
  });

  it('duty cycle: at 1 % an SF12 20-byte frame (1318.912 ms) may go 27 times an hour, an SF7 one (56.576 ms) 636 times', () => {
    const b = computeLinkBudget({
      frequencyMhz: 868.1, bandwidthKhz: 125, pathLossDb: 120, bandPlan: 'eu-863-870',
      frame: { codingRate: '4/5', payloadBytes: 20 },
      transmitter: { powerDbm: 14, antenna: dipole, vswr: 1 }, receiver: { antenna: dipole, vswr: 1 },
    });
    expect(b.perSf[0].messagesPerHour).toBe(636); // ⌊36000/56.576⌋
    expect(b.perSf[5].messagesPerHour).toBe(27); // ⌊36000/1318.912⌋
    expect(messagesPerHour(100, 10)).toBe(3600);
    expect(messagesPerHour(100, null)).toBeNull();
    expect(minimumIntervalS(1318.912, 1)).toBeCloseTo(131.8912, 9);
  });

  it('dwell time: in the US a 25-byte frame fits 400 ms at SF9 but not at SF10 (411.6 ms), so SF10+ are not offered as best SF', () => {
    const b = computeLinkBudget({
      frequencyMhz: 902.3, bandwidthKhz: 125, pathLossDb: 152.3, bandPlan: 'us-902-928', targetMarginDb: 0,
      frame: { codingRate: '4/5', payloadBytes: 25 },
      transmitter: { powerDbm: 20, antenna: dipole, vswr: 1 }, receiver: { antenna: dipole, vswr: 1 },
    });
    const sf = (n: number) => b.perSf.find((s) => s.spreadingFactor === n)!;
    expect(sf(9).dwellOk).toBe(true);
    expect(sf(10).timeOnAirMs).toBeCloseTo(411.648, 6);
    expect(sf(10).dwellOk).toBe(false);
    // P_rx = 24.3 − 152.3 = −128 dBm: SF7 (−124.53) and SF8 (−127.03) fail the 0 dB margin, SF9 (−129.53) passes.
    expect(b.bestSf).toBe(9);
    expect(b.warnings.join(' ')).toMatch(/exceeds the 400 ms dwell time at SF10, SF11, SF12/);
    expect(dwellTimeOk(400, 400)).toBe(true);
    expect(dwellTimeOk(10, null)).toBeNull();
  });

  it('rejects nonsense inputs with a message naming the field', () => {
    expect(() => computeLinkBudget({ frequencyMhz: 0, bandwidthKhz: 125, pathLossDb: 100, transmitter: { powerDbm: 14, antenna: dipole }, receiver: { antenna: dipole } })).toThrow(/frequencyMhz/);
    expect(() => computeLinkBudget({ frequencyMhz: 868, bandwidthKhz: 125, pathLossDb: Number.NaN, transmitter: { powerDbm: 14, antenna: dipole }, receiver: { antenna: dipole } })).toThrow(/pathLossDb/);
    expect(() => computeLinkBudget({ frequencyMhz: 868, bandwidthKhz: 125, pathLossDb: 100, bandPlan: 'mars', transmitter: { powerDbm: 14, antenna: dipole }, receiver: { antenna: dipole } })).toThrow(/unknown band plan/);
  });
});
