// The floor under every path method's basic loss (server/siting/horizon.ts lowestBasicLossDb), which
// the siting matrix's safe skip relies on: free space of ITU-R P.525-4 Eq. (9), less P.1812-8's
// rounding of the constant (Eq. (8)) and its focusing correction Esp at p < 50 % (Eq. (9)).
import { describe, expect, it } from 'vitest';
import { lowestBasicLossDb } from '../../../server/siting/horizon.ts';
import { DEFAULT_PATH_SETTINGS, predictPath } from '../../../server/planning/path.ts';
import { PATH_METHODS } from '../../../server/propagation/path-request.ts';

describe('lowest basic loss of a pair (the free-space floor of the siting skip)', () => {
  it('is P.525 free space for the diffraction methods: 32.45 + 20·log10(868) + 20·log10(10) ≈ 111.22 dB at 868 MHz, 10 km', () => {
    expect(lowestBasicLossDb('bullington', 10_000, 868, 50)).toBeCloseTo(32.448 + 20 * Math.log10(868) + 20, 2);
    expect(lowestBasicLossDb('bullington', 10_000, 868, 50)).toBeCloseTo(111.22, 2);
    // 6 dB per doubling of distance (inverse square).
    expect(lowestBasicLossDb('deygout', 20_000, 868, 50) - lowestBasicLossDb('deygout', 10_000, 868, 50)).toBeCloseTo(6.02, 2);
  });

  it('is lower for P.1812 at p < 50 %: by 0.05 dB (Eq. (8) constant) plus 2.6·log10(50/p) (the Esp bound)', () => {
    const fs = lowestBasicLossDb('free-space', 30_000, 868, 50);
    expect(lowestBasicLossDb('p1812', 30_000, 868, 50)).toBeCloseTo(fs - 0.05, 6);
    expect(lowestBasicLossDb('p1812', 30_000, 868, 1)).toBeCloseTo(fs - 0.05 - 2.6 * Math.log10(50), 6);
  });

  it('never exceeds what a method predicts (flat ground beyond the horizon, and a ridge, every method, p = 1 % and 50 %)', () => {
    for (const distanceM of [2_000, 35_000, 60_000]) {
      const n = Math.ceil(distanceM / 100) + 1;
      const d = new Float64Array(n);
      for (let i = 0; i < n; i++) d[i] = (distanceM * i) / (n - 1);
      const flat = new Float64Array(n);
      const ridge = Float64Array.from(d, (x) => 200 * Math.exp(-(((x - distanceM / 2) / (distanceM / 10)) ** 2)));
      for (const groundM of [flat, ridge]) {
        for (const method of PATH_METHODS) {
          for (const timePercent of [1, 50]) {
            const lat2 = 44 + distanceM / 111_320;
            const p = predictPath({ distanceM: d, groundM, clutterHeightM: null }, { ...DEFAULT_PATH_SETTINGS, method, timePercent, frequencyMhz: 868 }, { lat: 44, lon: -116, antennaHeightAglM: 1.5 }, { lat: lat2, lon: -116, antennaHeightAglM: 15 });
            expect(p.basicLossDb, `${method} ${distanceM} m p=${timePercent}`).toBeGreaterThanOrEqual(lowestBasicLossDb(method, distanceM, 868, timePercent));
          }
        }
      }
    }
  });
});
