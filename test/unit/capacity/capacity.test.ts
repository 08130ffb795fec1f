import { describe, expect, it } from 'vitest';
import { findBandPlan } from '../../../server/radio/band-plans.ts';
import { airtimeBudget, ackTimeOnAirMs, frameTimeOnAirMs, rx1BandwidthKhz, uplinkChannelCount, uplinkRules } from '../../../server/capacity/airtime.ts';
import { assessCapacity, type CapacityNodeInput, type CapacityScenario } from '../../../server/capacity/assess.ts';
import { sirThresholdDb } from '../../../server/capacity/interference.ts';
import { SeededRandom } from '../../../server/capacity/random.ts';

/**
 * Time on air written out independently of the radio room, from the Semtech
 * SX1276/77/78/79 datasheet §4.1.1.6: Ts = 2^SF / BW; Tpreamble = (npreamble + 4.25)·Ts;
 * payloadSymbNb = 8 + max(ceil((8PL − 4SF + 28 + 16CRC − 20IH) / (4(SF − 2DE)))·(CR + 4), 0),
 * with PL = application payload + 13 bytes of LoRaWAN framing, CR = 1 (4/5), CRC on, explicit
 * header (IH = 0), DE = 1 when Ts ≥ 16 ms (SF11/12 at 125 kHz).
 */
function datasheetToaMs(sf: number, payloadBytes: number, bandwidthKhz = 125): number {
  const ts = 2 ** sf / bandwidthKhz;
  const de = ts >= 16 ? 1 : 0;
  const pl = payloadBytes + 13;
  const symbols = 8 + Math.max(Math.ceil((8 * pl - 4 * sf + 28 + 16) / (4 * (sf - 2 * de))) * 5, 0);
  return (8 + 4.25) * ts + symbols * ts;
}

const eu868 = findBandPlan('eu-863-870');
const us915 = findBandPlan('us-902-928');

/** N identical nodes all heard by gateway 0 at the same RSSI, at a rate giving per-channel load G. */
function uniformScenario(sf: number, channels: number, nodes: number, g: number, payloadBytes = 12): { scenario: CapacityScenario; toaMs: number; messagesPerHour: number } {
  const toaMs = datasheetToaMs(sf, payloadBytes);
  // G = N · λ · T / C  ⇒  λ = G · C / (N · T)
  const messagesPerHour = (g * channels * 3600) / (nodes * (toaMs / 1000));
  const list: CapacityNodeInput[] = Array.from({ length: nodes }, () => ({
    sf,
    bandwidthKhz: 125,
    timeOnAirMs: frameTimeOnAirMs({ sf, bandwidthKhz: 125, payloadBytes }),
    messagesPerHour,
    links: [{ gateway: 0, rssiDbm: -100, linkProbability: 1 }],
  }));
  return { scenario: { bandPlan: eu868, channels, gatewayCount: 1, nodes: list }, toaMs, messagesPerHour };
}

describe('frame time on air reuses the radio room (SX1276 datasheet §4.1.1.6)', () => {
  it('equals the datasheet formula written out here for SF7–12 and several payloads', () => {
    for (let sf = 7; sf <= 12; sf++)
      for (const payload of [0, 5, 12, 24, 51]) expect(frameTimeOnAirMs({ sf, bandwidthKhz: 125, payloadBytes: payload })).toBeCloseTo(datasheetToaMs(sf, payload), 9);
  });

  it('an empty acknowledgement (12 bytes, no payload CRC) is shorter than an uplink with an empty payload', () => {
    expect(ackTimeOnAirMs(9, 125)).toBeLessThan(frameTimeOnAirMs({ sf: 9, bandwidthKhz: 125, payloadBytes: 0 }));
  });

  it('RX1 replies: EU868 on the uplink bandwidth, US915 at 500 kHz (a quarter of the symbol time)', () => {
    expect(rx1BandwidthKhz(eu868, 125)).toBe(125);
    expect(rx1BandwidthKhz(us915, 125)).toBe(500);
    expect(ackTimeOnAirMs(10, 500)).toBeCloseTo(ackTimeOnAirMs(10, 125) / 4, 9);
  });
});

describe('aloha: pure ALOHA survival exp(−2G) (Abramson 1970)', () => {
  for (const channels of [1, 8]) {
    for (let sf = 7; sf <= 12; sf++) {
      it(`SF${sf}, ${channels} channel(s), G = 0.25 from the datasheet time on air: success within 0.005 of exp(−2G)`, () => {
        const g = 0.25;
        const { scenario } = uniformScenario(sf, channels, 1000, g);
        const result = assessCapacity(scenario, { model: 'aloha' });
        const expected = Math.exp(-2 * g);
        for (const node of [result.nodes[0], result.nodes[999]]) expect(Math.abs((node.successProbability as number) - expected)).toBeLessThan(0.005);
        expect(Math.abs(result.gateways[0].offeredLoadErlangPerChannel[0] - g)).toBeLessThan(1e-6);
        expect(result.gateways[0].offeredLoadErlang).toBeCloseTo(g * channels, 6);
        expect(Math.abs(result.gateways[0].perSf[0].collisionProbability - (1 - expected))).toBeLessThan(0.005);
      });
    }
  }

  it('SFs are orthogonal: adding SF12 traffic does not change the survival of SF7 frames', () => {
    const a = uniformScenario(7, 1, 200, 0.2).scenario;
    const b = uniformScenario(12, 1, 200, 0.3).scenario;
    const mixed = assessCapacity({ ...a, nodes: [...a.nodes, ...b.nodes] }, { model: 'aloha' });
    const alone = assessCapacity(a, { model: 'aloha' });
    expect(mixed.nodes[0].successProbability).toBeCloseTo(alone.nodes[0].successProbability as number, 12);
    expect(mixed.nodes[200].successProbability).toBeCloseTo(Math.exp(-0.6), 2);
  });
});

describe('simulate: seeded discrete-event simulation', () => {
  const cases: Array<[number, number, number]> = [
    [7, 1, 0.3],
    [7, 8, 0.5],
    [9, 8, 0.25],
    [12, 8, 0.2],
  ];
  for (const [sf, channels, g] of cases) {
    it(`ALOHA rule, SF${sf}, ${channels} channel(s), G = ${g}: 1 h of traffic agrees with the aloha model within 0.02`, () => {
      const { scenario } = uniformScenario(sf, channels, 1000, g);
      const aloha = assessCapacity(scenario, { model: 'aloha' });
      const sim = assessCapacity(scenario, { model: 'simulate', durationS: 3600, seed: 7, simulateRule: 'aloha', dutyCycleBackoff: false });
      const a = aloha.gateways[0].perSf[0].collisionProbability;
      const s = sim.gateways[0].perSf[0].collisionProbability;
      expect(sim.totals.transmissions).toBeGreaterThan(1000);
      expect(Math.abs(a - s)).toBeLessThan(0.02);
      // The simulated channel load is near the offered G on every channel.
      for (const load of sim.gateways[0].offeredLoadErlangPerChannel) expect(Math.abs(load - g) / g).toBeLessThan(0.15);
    });
  }

  it('ALOHA rule with the default duty-cycle back-off (10,000 nodes well within their 1 % budget, SF7, 1 channel, G = 0.3): within 0.02 of aloha', () => {
    const { scenario } = uniformScenario(7, 1, 10_000, 0.3);
    const aloha = assessCapacity(scenario, { model: 'aloha' });
    const sim = assessCapacity(scenario, { model: 'simulate', seed: 3, simulateRule: 'aloha' });
    expect(Math.abs(aloha.gateways[0].perSf[0].collisionProbability - sim.gateways[0].perSf[0].collisionProbability)).toBeLessThan(0.02);
    expect(sim.totals.overBudgetNodes).toBe(0);
  });

  it('is reproducible for a seed and differs for another seed', () => {
    const { scenario } = uniformScenario(9, 3, 300, 0.3);
    const one = assessCapacity(scenario, { model: 'simulate', seed: 42 });
    const again = assessCapacity(scenario, { model: 'simulate', seed: 42 });
    const other = assessCapacity(scenario, { model: 'simulate', seed: 43 });
    expect(again).toEqual(one);
    expect(other.totals.transmissions).not.toBe(one.totals.transmissions);
    expect(one.seed).toBe(42);
    expect(one.durationS).toBe(3600);
  });

  it('capture rule: simulation agrees with the analytic capture model for nodes at spread RSSI within 0.02', () => {
    const rng = new SeededRandom(5);
    const nodes: CapacityNodeInput[] = [];
    for (let i = 0; i < 1500; i++) {
      const sf = 7 + (i % 3);
      nodes.push({ sf, bandwidthKhz: 125, timeOnAirMs: frameTimeOnAirMs({ sf, bandwidthKhz: 125, payloadBytes: 10 }), messagesPerHour: 6, links: [{ gateway: 0, rssiDbm: -130 + 40 * rng.next(), linkProbability: 0.9 }] });
    }
    const scenario: CapacityScenario = { bandPlan: eu868, channels: 1, gatewayCount: 1, nodes };
    const capture = assessCapacity(scenario, { model: 'capture' });
    const aloha = assessCapacity(scenario, { model: 'aloha' });
    const sim = assessCapacity(scenario, { model: 'simulate', seed: 3, dutyCycleBackoff: false });
    for (let k = 0; k < 3; k++) expect(Math.abs(capture.gateways[0].perSf[k].collisionProbability - sim.gateways[0].perSf[k].collisionProbability)).toBeLessThan(0.02);
    // Different SFs are not perfectly orthogonal: a much stronger SF8/9 frame destroys an SF7 one,
    // so with a 40 dB spread of RSSI the capture model loses more SF7 frames than ALOHA says.
    expect(capture.gateways[0].perSf[0].collisionProbability).toBeGreaterThan(aloha.gateways[0].perSf[0].collisionProbability);
    // With one SF only, capture saves frames ALOHA would lose.
    const sf7 = { ...scenario, nodes: nodes.filter((node) => node.sf === 7) };
    expect(assessCapacity(sf7, { model: 'capture' }).gateways[0].perSf[0].collisionProbability).toBeLessThan(assessCapacity(sf7, { model: 'aloha' }).gateways[0].perSf[0].collisionProbability);
  });

  it('duty-cycle back-off: a node asked for more than its budget sends no more than the budget, and its delivery ratio says so', () => {
    const toa = frameTimeOnAirMs({ sf: 12, bandwidthKhz: 125, payloadBytes: 20 });
    const budget = Math.floor(36_000 / toa);
    const nodes: CapacityNodeInput[] = [{ sf: 12, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: budget * 4, links: [{ gateway: 0, rssiDbm: -110, linkProbability: 1 }] }];
    const sim = assessCapacity({ bandPlan: eu868, channels: 3, gatewayCount: 1, nodes }, { model: 'simulate', seed: 9 });
    expect(sim.totals.transmissions).toBeLessThanOrEqual(budget + 1);
    expect(sim.nodes[0].overBudget).toBe(true);
    expect(sim.nodes[0].deliveryRatio).toBeGreaterThan(0.15);
    expect(sim.nodes[0].deliveryRatio).toBeLessThan(0.35);
    const analytic = assessCapacity({ bandPlan: eu868, channels: 3, gatewayCount: 1, nodes }, { model: 'aloha' });
    expect(analytic.nodes[0].deliveryRatio).toBeCloseTo(0.25, 2);
  });

  it('acknowledgements make the gateway deaf: confirmed uplinks lose more frames, and the simulated downlink airtime matches the analytic one', () => {
    const { scenario } = uniformScenario(8, 3, 500, 0.05);
    const quiet = assessCapacity({ ...scenario, confirmedShare: 0 }, { model: 'simulate', seed: 2, dutyCycleBackoff: false });
    const acked = assessCapacity({ ...scenario, confirmedShare: 1 }, { model: 'simulate', seed: 2, dutyCycleBackoff: false });
    const analytic = assessCapacity({ ...scenario, confirmedShare: 1 }, { model: 'capture' });
    expect(quiet.gateways[0].downlink.airtimeShare).toBe(0);
    expect(acked.gateways[0].downlink.airtimeShare).toBeGreaterThan(0);
    expect(acked.gateways[0].perSf[0].collisionProbability).toBeGreaterThan(quiet.gateways[0].perSf[0].collisionProbability + 0.02);
    // The gateway's 1 % duty cycle caps its replies below the demand: replies are dropped.
    expect(acked.gateways[0].downlink.repliesDroppedPerHour).toBeGreaterThan(0);
    expect(acked.gateways[0].downlink.airtimeShare).toBeLessThanOrEqual(0.0101);
    expect(analytic.gateways[0].downlink.overDutyCycle).toBe(true);
    expect(analytic.gateways[0].downlink.airtimeShare).toBeCloseTo(0.01, 9);
    expect(analytic.gateways[0].downlink.demandedMessagesPerHour).toBeCloseTo(500 * scenario.nodes[0].messagesPerHour, 6);
  });
});

describe('capture and inter-SF rejection (Croce et al. 2018 Table I, from memory)', () => {
  it('at equal RSSI the capture model equals ALOHA (co-SF below the 6 dB threshold, inter-SF rejection holds)', () => {
    const { scenario } = uniformScenario(10, 3, 400, 0.2);
    const a = assessCapacity(scenario, { model: 'aloha' });
    const c = assessCapacity(scenario, { model: 'capture' });
    expect(c.nodes[0].successProbability).toBeCloseTo(a.nodes[0].successProbability as number, 12);
  });

  it('a co-SF frame 10 dB stronger survives a weaker one; the weaker one does not', () => {
    const toa = frameTimeOnAirMs({ sf: 9, bandwidthKhz: 125, payloadBytes: 10 });
    const nodes: CapacityNodeInput[] = [
      { sf: 9, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: 300, links: [{ gateway: 0, rssiDbm: -90, linkProbability: 1 }] },
      { sf: 9, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: 300, links: [{ gateway: 0, rssiDbm: -100, linkProbability: 1 }] },
    ];
    const c = assessCapacity({ bandPlan: eu868, channels: 1, gatewayCount: 1, nodes }, { model: 'capture' });
    expect(c.nodes[0].successProbability).toBe(1);
    const lambda = 300 / 3600;
    expect(c.nodes[1].successProbability).toBeCloseTo(Math.exp(-lambda * 2 * (toa / 1000)), 9);
  });

  it('an SF12 frame is lost to a 30 dB stronger SF7 frame (threshold −25 dB) but not to a 20 dB stronger one', () => {
    expect(sirThresholdDb(12, 7)).toBe(-25);
    expect(sirThresholdDb(7, 12)).toBe(-9);
    expect(sirThresholdDb(9, 9)).toBe(6);
    const slow = frameTimeOnAirMs({ sf: 12, bandwidthKhz: 125, payloadBytes: 10 });
    const fast = frameTimeOnAirMs({ sf: 7, bandwidthKhz: 125, payloadBytes: 10 });
    const make = (strongDbm: number): CapacityNodeInput[] => [
      { sf: 12, bandwidthKhz: 125, timeOnAirMs: slow, messagesPerHour: 10, links: [{ gateway: 0, rssiDbm: -120, linkProbability: 1 }] },
      { sf: 7, bandwidthKhz: 125, timeOnAirMs: fast, messagesPerHour: 600, links: [{ gateway: 0, rssiDbm: strongDbm, linkProbability: 1 }] },
    ];
    const lost = assessCapacity({ bandPlan: eu868, channels: 1, gatewayCount: 1, nodes: make(-90) }, { model: 'capture' });
    const kept = assessCapacity({ bandPlan: eu868, channels: 1, gatewayCount: 1, nodes: make(-100) }, { model: 'capture' });
    expect(lost.nodes[0].successProbability).toBeCloseTo(Math.exp(-(600 / 3600) * ((slow + fast) / 1000)), 9);
    expect(kept.nodes[0].successProbability).toBe(1);
  });
});

describe('duty cycle and dwell time', () => {
  it('EU868 1 %: the most messages per hour = floor(36 s / time on air) for SF7–12 (ERC Rec. 70-03 sub-band h1.5, time on air from the SX1276 datasheet)', () => {
    const rules = uplinkRules(eu868, 125);
    expect(rules.dutyCyclePercent).toBe(1);
    for (let sf = 7; sf <= 12; sf++) {
      const toa = datasheetToaMs(sf, 20);
      const budget = airtimeBudget(rules, frameTimeOnAirMs({ sf, bandwidthKhz: 125, payloadBytes: 20 }), 1, 3);
      expect(budget.maxMessagesPerHourAtDutyCycle).toBe(Math.floor(36_000 / toa));
    }
    const over = airtimeBudget(rules, datasheetToaMs(12, 20), 40, 3);
    expect(over.overBudget).toBe(true);
    expect(over.warnings[0]).toMatch(/1 % duty cycle/);
  });

  it('US915: no duty cycle; a frame over 400 ms breaks the dwell rule of 47 CFR §15.247(a)(1)(i); within it, ⌊400 ms / ToA⌋ frames per channel per 20 s', () => {
    const rules = uplinkRules(us915, 125);
    expect(rules.dutyCyclePercent).toBeNull();
    expect(rules.dwellTimeMs).toBe(400);
    const short = datasheetToaMs(10, 11);
    const ok = airtimeBudget(rules, short, 10, 8);
    expect(ok.dwellOk).toBe(true);
    expect(ok.maxMessagesPerHourAtDutyCycle).toBeNull();
    expect(ok.maxMessagesPerHourAtDwell).toBe(Math.floor(400 / short) * 180 * 8);
    const long = airtimeBudget(rules, datasheetToaMs(10, 50), 1, 8);
    expect(long.dwellOk).toBe(false);
    expect(long.overBudget).toBe(true);
  });

  it('uplink channels come from the band plan: EU868 3 default channels, US915 8 (sub-band of 125 kHz channels, SF7–10 only)', () => {
    expect(uplinkChannelCount(eu868, 12, 125)).toBe(3);
    expect(uplinkChannelCount(us915, 10, 125)).toBe(8);
    expect(uplinkChannelCount(us915, 12, 125)).toBe(0);
  });
});

describe('delivery ratio', () => {
  it('combines link probability and collision survival over gateways: 1 − Π(1 − p·s)', () => {
    const toa = frameTimeOnAirMs({ sf: 8, bandwidthKhz: 125, payloadBytes: 10 });
    const nodes: CapacityNodeInput[] = [
      { sf: 8, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: 1, links: [{ gateway: 0, rssiDbm: -110, linkProbability: 0.8 }, { gateway: 1, rssiDbm: -115, linkProbability: 0.6 }] },
    ];
    for (let i = 0; i < 300; i++) nodes.push({ sf: 8, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: 60, links: [{ gateway: 0, rssiDbm: -100, linkProbability: 1 }] });
    const r = assessCapacity({ bandPlan: eu868, channels: 1, gatewayCount: 2, nodes }, { model: 'aloha' });
    const [g0, g1] = r.nodes[0].gateways;
    expect(g1.survival).toBe(1);
    expect(g0.survival).toBeLessThan(1);
    expect(r.nodes[0].deliveryRatio).toBeCloseTo(1 - (1 - 0.8 * g0.survival) * (1 - 0.6), 12);
    expect(r.nodes[0].linkDeliveryProbability).toBeCloseTo(1 - 0.2 * 0.4, 12);
    expect(r.gateways[0].nodes).toBe(301);
    expect(r.gateways[1].nodes).toBe(1);
  });

  it('bad input names the field', () => {
    const base = uniformScenario(7, 1, 2, 0.1).scenario;
    expect(() => assessCapacity({ ...base, nodes: [{ ...base.nodes[0], messagesPerHour: -1 }] }, { model: 'aloha' })).toThrow(/nodes\[0\]\.messagesPerHour: must be ≥ 0/);
    expect(() => assessCapacity({ ...base, channels: 0 }, { model: 'aloha' })).toThrow(/channels:/);
    expect(() => assessCapacity({ ...base, nodes: [{ ...base.nodes[0], links: [{ gateway: 3, rssiDbm: -90, linkProbability: 1 }] }] }, { model: 'aloha' })).toThrow(/links\[0\]\.gateway/);
  });
});

describe('capacity caps for planners (pure ALOHA, Abramson 1970)', () => {
  it('G_cap = −ln(s)/2; the node cap from it keeps the aloha survival at the target', async () => {
    const { alohaLoadCapErlang, alohaNodeCap, nodeLoadErlang } = await import('../../../server/capacity/cap.ts');
    expect(alohaLoadCapErlang(Math.exp(-1))).toBeCloseTo(0.5, 12);
    const toa = datasheetToaMs(12, 12);
    expect(nodeLoadErlang(1, toa)).toBeCloseTo(toa / 3.6e6, 15);
    const cap = alohaNodeCap(0.9, 3, 1, toa);
    expect(cap).toBe(Math.floor(((-Math.log(0.9) / 2) * 3 * 3600) / (toa / 1000)));
    const fleet = (n: number): CapacityScenario => ({ bandPlan: eu868, channels: 3, gatewayCount: 1, nodes: Array.from({ length: n }, () => ({ sf: 12, bandwidthKhz: 125, timeOnAirMs: toa, messagesPerHour: 1, links: [{ gateway: 0, rssiDbm: -110, linkProbability: 1 }] })) });
    expect(assessCapacity(fleet(cap), { model: 'aloha' }).nodes[0].successProbability).toBeGreaterThanOrEqual(0.9);
    expect(assessCapacity(fleet(Math.ceil(cap * 1.1)), { model: 'aloha' }).nodes[0].successProbability).toBeLessThan(0.9);
  });

  it('an empty scenario answers zeros, not an error', () => {
    const r = assessCapacity({ bandPlan: eu868, channels: 3, gatewayCount: 0, nodes: [] }, { model: 'simulate' });
    expect(r.nodes).toEqual([]);
    expect(r.gateways).toEqual([]);
    expect(r.totals.meanDeliveryRatio).toBe(0);
    expect(r.totals.transmissions).toBe(0);
  });
});
