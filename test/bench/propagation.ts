// Propagation benchmark: one ITU-R P.1812-8 prediction over a 10 km profile at 30 m
// steps (334 points), median time per call on one core, with Bullington and the
// path geometry alongside for comparison. Run: `npm run bench -- propagation`.
import { bullingtonLossDb } from '../../server/propagation/bullington.ts';
import { analysePathGeometry } from '../../server/propagation/path-geometry.ts';
import { P1812Predictor, type P1812Input } from '../../server/propagation/p1812/index.ts';

function syntheticProfile(points: number, stepKm: number): Pick<P1812Input, 'distanceKm' | 'heightM' | 'clutterHeightM' | 'zone'> {
  const distanceKm = new Float64Array(points);
  const heightM = new Float64Array(points);
  const clutterHeightM = new Float64Array(points);
  const zone = new Uint8Array(points).fill(4);
  for (let i = 0; i < points; i++) {
    const d = i * stepKm;
    distanceKm[i] = d;
    // Rolling synthetic hills (invented terrain) with patches of 10 m woodland.
    heightM[i] = 320 + 45 * Math.sin(d * 0.9) + 20 * Math.sin(d * 3.1 + 1) + 8 * Math.sin(d * 11.7);
    clutterHeightM[i] = Math.sin(d * 1.7) > 0.4 ? 10 : 0;
  }
  return { distanceKm, heightM, clutterHeightM, zone };
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)];
}

function timeEach(runs: number, fn: () => void): { medianMs: number; p90Ms: number } {
  const samples: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t0 = process.hrtime.bigint();
    fn();
    samples.push(Number(process.hrtime.bigint() - t0) / 1e6);
  }
  samples.sort((a, b) => a - b);
  return { medianMs: median(samples), p90Ms: samples[Math.floor(samples.length * 0.9)] };
}

export async function run(): Promise<void> {
  const points = Math.round(10 / 0.03) + 1; // 10 km at 30 m steps
  const profile = syntheticProfile(points, 10 / (points - 1));
  const input: P1812Input = {
    frequencyMhz: 868,
    timePercent: 10,
    locationPercent: 50,
    locationSigmaDb: 0,
    polarisation: 'vertical',
    deltaN: 45,
    n0: 325,
    txCoastDistanceKm: 500,
    rxCoastDistanceKm: 500,
    txHeightAglM: 15,
    rxHeightAglM: 1.5,
    pathCentreLatDeg: 47,
    ...profile,
  };
  const predictor = new P1812Predictor();
  let sink = 0;
  // Warm-up so the JIT has compiled the hot paths before timing.
  for (let i = 0; i < 2000; i++) sink += predictor.predict(input).lbDb;
  const runs = 20_000;
  const p1812 = timeEach(runs, () => {
    sink += predictor.predict(input).lbDb;
  });
  const surface = Float64Array.from(profile.heightM, (h, i) => h + profile.clutterHeightM[i]);
  const bullington = timeEach(runs, () => {
    sink += bullingtonLossDb(profile.distanceKm, surface, points, 335, 321.5, 8930.78, 0.3454);
  });
  const geometry = timeEach(5000, () => {
    sink += analysePathGeometry({
      distanceKm: profile.distanceKm,
      groundM: profile.heightM,
      clutterM: profile.clutterHeightM,
      txHeightAglM: 15,
      rxHeightAglM: 1.5,
      frequencyMhz: 868,
    }).worstClearanceRatio;
  });
  console.log(`profile: ${points} points, 10 km at 30 m steps, 868 MHz, p 10 %, vertical polarisation`);
  console.log(`P.1812-8 predictP1812 (reused predictor): median ${(p1812.medianMs * 1000).toFixed(1)} µs, p90 ${(p1812.p90Ms * 1000).toFixed(1)} µs per prediction over ${runs} runs (target < 500 µs)`);
  console.log(`Bullington (P.526 §4.5.1):                median ${(bullington.medianMs * 1000).toFixed(1)} µs, p90 ${(bullington.p90Ms * 1000).toFixed(1)} µs`);
  console.log(`path geometry (Fresnel, clearance):       median ${(geometry.medianMs * 1000).toFixed(1)} µs, p90 ${(geometry.p90Ms * 1000).toFixed(1)} µs`);
  console.log(`ratio P.1812 / Bullington: ${(p1812.medianMs / bullington.medianMs).toFixed(1)}×  (checksum ${sink.toFixed(0)})`);
}
