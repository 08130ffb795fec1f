// Smooth-earth loss at 1, 1.5 and 2 × the radio horizon (868 MHz, our P.1812 and Bullington code),
// to judge the siting matrix's horizon skip: `npx tsx test/bench/_siting-horizon.ts`.
import { predictPath } from '../../server/planning/path.ts';
import { DEFAULT_PATH_SETTINGS } from '../../server/planning/path.ts';
import { radioHorizonM } from '../../server/siting/horizon.ts';
import { medianEarthFactor } from '../../server/planning/geometry.ts';
for (const [h1, h2] of [[1.5, 15], [1.5, 30], [3, 15], [10, 30]]) {
  const hz = radioHorizonM(h1, h2, medianEarthFactor());
  const out: string[] = [];
  for (const f of [1, 1.5, 2]) {
    const d = hz * f;
    const n = Math.ceil(d / 30) + 1;
    const distanceM = new Float64Array(n); for (let i = 0; i < n; i++) distanceM[i] = (d * i) / (n - 1);
    const lat2 = 44 + d / 111_320;
    for (const method of ['p1812', 'bullington'] as const) {
      const p = predictPath({ distanceM, groundM: new Float64Array(n), clutterHeightM: null }, { ...DEFAULT_PATH_SETTINGS, method, frequencyMhz: 868 }, { lat: 44, lon: -116, antennaHeightAglM: h1 }, { lat: lat2, lon: -116, antennaHeightAglM: h2 });
      out.push(`${f}x ${method} ${(d / 1000).toFixed(1)}km Lb=${p.basicLossDb.toFixed(1)} excess=${p.excessLossDb.toFixed(1)}`);
    }
  }
  console.log(`h ${h1}/${h2} m horizon ${(hz / 1000).toFixed(1)} km: ${out.join(' | ')}`);
}
