// Capacity engine: 10,000 nodes × 1 h of simulated traffic (the issue's ≤ 5 s
// bar), and the analytic models beside the simulation on the same fleet.
// `npm run bench -- capacity`. A synthetic fleet of our own: nodes spread over
// SF7–12 (more at the fast SFs, as a network's data-rate choice gives), heard by
// 1–3 of 4 gateways at RSSI drawn between −135 and −85 dBm.
import { loadavg } from 'node:os';
import { findBandPlan } from '../../server/radio/band-plans.ts';
import { frameTimeOnAirMs } from '../../server/capacity/airtime.ts';
import { assessCapacity, type CapacityNodeInput, type CapacityScenario } from '../../server/capacity/assess.ts';
import { SeededRandom } from '../../server/capacity/random.ts';

function fleet(count: number, messagesPerHour: number): CapacityScenario {
  const rng = new SeededRandom(2026);
  const sfWeights = [0.35, 0.22, 0.16, 0.12, 0.09, 0.06];
  const nodes: CapacityNodeInput[] = [];
  for (let i = 0; i < count; i++) {
    let u = rng.next();
    let sf = 7;
    for (let k = 0; k < 6; k++) {
      if (u < sfWeights[k]) {
        sf = 7 + k;
        break;
      }
      u -= sfWeights[k];
    }
    const links = [];
    const heardBy = 1 + rng.below(3);
    const first = rng.below(4);
    for (let k = 0; k < heardBy; k++) links.push({ gateway: (first + k) % 4, rssiDbm: -135 + 50 * rng.next(), linkProbability: 0.5 + 0.5 * rng.next() });
    nodes.push({ sf, bandwidthKhz: 125, timeOnAirMs: frameTimeOnAirMs({ sf, bandwidthKhz: 125, payloadBytes: 12 }), messagesPerHour, links });
  }
  return { bandPlan: findBandPlan('eu-863-870'), channels: 8, gatewayCount: 4, nodes, confirmedShare: 0.05 };
}

function timed<T>(body: () => T): { value: T; ms: number } {
  const start = performance.now();
  const value = body();
  return { value, ms: performance.now() - start };
}

export async function run(): Promise<void> {
  console.log(`load average before: ${loadavg().map((v) => v.toFixed(2)).join(' ')}`);
  for (const rate of [4, 12]) {
    const scenario = fleet(10_000, rate);
    assessCapacity(fleet(500, rate), { model: 'simulate', seed: 1 }); // warm-up
    const aloha = timed(() => assessCapacity(scenario, { model: 'aloha' }));
    const capture = timed(() => assessCapacity(scenario, { model: 'capture' }));
    const sim = timed(() => assessCapacity(scenario, { model: 'simulate', durationS: 3600, seed: 1 }));
    const simAloha = timed(() => assessCapacity(scenario, { model: 'simulate', durationS: 3600, seed: 1, simulateRule: 'aloha' }));
    const transmissions = sim.value.totals.transmissions ?? 0;
    console.log(`\n10,000 nodes × ${rate} messages/h, 4 gateways, 8 channels, 5 % confirmed: ${transmissions.toLocaleString('en-US')} frames in 1 h simulated`);
    console.log(`  time: aloha ${aloha.ms.toFixed(0)} ms, capture ${capture.ms.toFixed(0)} ms, simulate ${sim.ms.toFixed(0)} ms, simulate with the ALOHA rule ${simAloha.ms.toFixed(0)} ms (bar: ≤ 5000 ms; ${(sim.ms / aloha.ms).toFixed(1)}× aloha)`);
    console.log('  gateway 0, per SF: collision probability   aloha / simulate (ALOHA rule)   capture / simulate (capture rule)');
    for (const entry of aloha.value.gateways[0].perSf) {
      const c = capture.value.gateways[0].perSf.find((e) => e.sf === entry.sf);
      const s = sim.value.gateways[0].perSf.find((e) => e.sf === entry.sf);
      const sa = simAloha.value.gateways[0].perSf.find((e) => e.sf === entry.sf);
      console.log(`    SF${entry.sf.toString().padEnd(3)} ${entry.offeredLoadErlangPerChannel.toFixed(4)} erlang/channel   ${entry.collisionProbability.toFixed(4)} / ${(sa?.collisionProbability ?? 0).toFixed(4)}   ${(c?.collisionProbability ?? 0).toFixed(4)} / ${(s?.collisionProbability ?? 0).toFixed(4)}`);
    }
    console.log(`  mean delivery ratio: aloha ${aloha.value.totals.meanDeliveryRatio.toFixed(4)}, capture ${capture.value.totals.meanDeliveryRatio.toFixed(4)}, simulate ${sim.value.totals.meanDeliveryRatio.toFixed(4)} (link only ${aloha.value.totals.meanLinkDeliveryProbability.toFixed(4)})`);
  }
  console.log(`\nload average after: ${loadavg().map((v) => v.toFixed(2)).join(' ')}`);
}
