// Radio engine throughput: time on air, per-SF reception, full link budget, antenna gain.
// `npm run bench -- radio`. Figures are calls per second measured in this one run.
import { antennaGainDbi, findAntennaDesign } from '../../server/radio/antennas.ts';
import { findFeedline } from '../../server/radio/feedlines.ts';
import { computeLinkBudget } from '../../server/radio/link-budget.ts';
import { receptionPerSf, timeOnAirMs } from '../../server/radio/lora-phy.ts';

function measure(label: string, iterations: number, body: (i: number) => number): number {
  let sink = 0;
  for (let i = 0; i < Math.min(50_000, iterations); i++) sink += body(i); // warm-up: let the optimising compiler settle first
  const start = performance.now();
  for (let i = 0; i < iterations; i++) sink += body(i);
  const elapsedMs = performance.now() - start;
  const perSecond = (iterations / elapsedMs) * 1000;
  console.log(`${label.padEnd(44)} ${iterations.toString().padStart(8)} calls  ${elapsedMs.toFixed(1).padStart(8)} ms  ${Math.round(perSecond).toLocaleString('en-US').padStart(12)} /s${Number.isFinite(sink) ? '' : ' (!)'}`);
  return perSecond;
}

export async function run(): Promise<void> {
  const dipole = findAntennaDesign('half-wave-dipole');
  const yagi = findAntennaDesign('yagi-5-element');
  const feed = findFeedline('low-loss-10mm');
  const toa = measure('timeOnAirMs (SF7–12 rotating, 1–50 B)', 500_000, (i) =>
    timeOnAirMs({ spreadingFactor: 7 + (i % 6), bandwidthKhz: 125, codingRate: '4/5', payloadBytes: 1 + (i % 50) }).timeOnAirMs,
  );
  const reception = measure('receptionPerSf (6 SFs)', 500_000, (i) => receptionPerSf(-100 - (i % 40), 125, 6)[5].marginDb);
  const gain = measure('antennaGainDbi (Yagi, az/el interpolation)', 1_000_000, (i) => antennaGainDbi(yagi, i % 360, (i % 180) - 90, 45));
  const budget = measure('computeLinkBudget (EU plan, frame, feedline)', 300_000, (i) =>
    computeLinkBudget({
      frequencyMhz: 868.1,
      bandwidthKhz: 125,
      pathLossDb: 110 + (i % 40),
      bandPlan: 'eu-863-870',
      frame: { codingRate: '4/5', payloadBytes: 20 },
      transmitter: { powerDbm: 14, antenna: dipole, towardAzimuthDeg: i % 360 },
      receiver: { antenna: yagi, towardAzimuthDeg: (i * 7) % 360, boresightAzimuthDeg: 0, feedline: { feedline: feed, lengthM: 15 } },
    }).receivedPowerDbm,
  );
  console.log(`ratios: time on air / link budget = ${(toa / budget).toFixed(1)}×, reception / link budget = ${(reception / budget).toFixed(1)}×, gain lookups / link budget = ${(gain / budget).toFixed(1)}×`);
}
