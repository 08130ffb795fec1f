// ITU-R P.1812-8 against the ITU-R Study Group 3 (WP 3M) validation examples,
// read in place from ../shared/reference/p1812/ (never copied into the repository).
// Every term the step-by-step logs report is compared: losses within 0.1 dB,
// geometry within the tolerances below.
import { describe, expect, it } from 'vitest';
import { predictP1812, type P1812Detail } from '../../server/propagation/p1812/index.ts';
import { readSg3Cases, sg3DataPresent, SG3_P1812_DIR } from '../unit/propagation/sg3-validation-data.ts';

type Field = keyof P1812Detail | 'pathCentreLatDeg';

/** Log row ("Label|Eq ref" or bare label) → our result field, unit tolerance. */
const TERMS: [string, Field, number][] = [
  ['phi|Eq (4)', 'pathCentreLatDeg', 1e-4],
  ['b0|Eq (5)', 'beta0Percent', 1e-4],
  ['ae|Eq (7a)', 'aeKm', 1e-3],
  ['w', 'omega', 1e-6],
  ['dtm', 'dtmKm', 1e-6],
  ['dlm', 'dlmKm', 1e-6],
  ['d', 'distanceKm', 1e-9],
  ['dlt', 'dltKm', 1e-6],
  ['dlr', 'dlrKm', 1e-6],
  ['th_t', 'thetaTMrad', 1e-4],
  ['th_r', 'thetaRMrad', 1e-4],
  ['th', 'thetaMrad', 1e-4],
  ['hts', 'htsM', 1e-6],
  ['hrs', 'hrsM', 1e-6],
  ['htc|Table 5', 'htsM', 1e-6],
  ['hrc|Table 5', 'hrsM', 1e-6],
  ['hst|Eq (85)', 'hstM', 1e-3],
  ['hsr|Eq (86)', 'hsrM', 1e-3],
  ['hst|Eq (90a)', 'hstDuctM', 1e-3],
  ['hsr|Eq (90b)', 'hsrDuctM', 1e-3],
  ['hstd|Eq (89)', 'hstdM', 1e-3],
  ['hsrd|Eq (89)', 'hsrdM', 1e-3],
  ['htc|Eq (37a)', 'htsDiffM', 1e-3],
  ['hrc|Eq (37b)', 'hrsDiffM', 1e-3],
  ['hte|Eq (92a)', 'hteM', 1e-3],
  ['hre|Eq (92b)', 'hreM', 1e-3],
  ['hm|Eq (93)', 'hmM', 1e-3],
  ['Fi|Eq (40)', 'fi', 1e-4],
  ['Fj|Eq (57)', 'fj', 1e-4],
  ['Fk|Eq (58)', 'fk', 1e-4],
  ['Lbfs|Eq (8)', 'lbfsDb', 0.1],
  ['Lb0p|Eq (10)', 'lb0pDb', 0.1],
  ['Lb0b|Eq (11)', 'lb0bDb', 0.1],
  // The logs report the Bullington and spherical-earth terms of the last (aβ) evaluation.
  ['Lbulla|Eq (21)', 'lbullaBetaDb', 0.1],
  ['Lbulls|Eq (21)', 'lbullsBetaDb', 0.1],
  ['Ldsph|Eq (27)', 'ldsphBetaDb', 0.1],
  ['Ld50|Eq (39)', 'ld50Db', 0.1],
  ['Ldb|Eq (39)', 'ldBetaDb', 0.1],
  ['Ldp|Eq (41)', 'ldpDb', 0.1],
  ['Lbd50|Eq (42)', 'lbd50Db', 0.1],
  // The "Lbd (Eq 43)" row of the logs carries the value after Eq. (61) (it equals the Lbda row in
  // every log, also where Lb0p + Ldp differs), so it is checked against Lbda; Lb0p + Ldp itself is
  // checked through Lminb0p (Eq. (59)), which equals it for p < β0 over land.
  ['Lbd|Eq (43)', 'lbdaDb', 0.1],
  ['Lminb0p|Eq (59)', 'lminb0pDb', 0.1],
  ['Lba|Eq (46)', 'lbaDb', 0.1],
  ['Lminbap|Eq (60)', 'lminbapDb', 0.1],
  ['Lbda|Eq (61)', 'lbdaDb', 0.1],
  ['Lbam|Eq (62)', 'lbamDb', 0.1],
  ['Lbs|Eq (44)', 'lbsDb', 0.1],
  ['Lbc|Eq (63)', 'lbcDb', 0.1],
  ['Lb|Eq (69)', 'lbDb', 0.1],
  ['Ep|Eq (70)', 'ep1kwDbuvm', 0.1],
  // Field strength for the log's transmitter power (e.r.p. = 60 dBm + 10·log10(Ptx kW); Gtx = Grx = 0 dBi in every log).
  ['Ep w.r.t. Ptx', 'epDbuvm', 0.1],
];

const present = sg3DataPresent();
const inCi = process.env.CI === 'true';

if (!present) {
  if (inCi) {
    describe('ITU-R P.1812-8 SG3 validation examples', () => {
      it(`needs ${SG3_P1812_DIR} (absent in CI: failing as required)`, () => {
        expect.fail(`validation data not found at ${SG3_P1812_DIR}`);
      });
    });
  } else {
    console.warn(`SKIPPED ITU-R P.1812-8 SG3 validation: ${SG3_P1812_DIR} not found (it must sit beside the checkout)`);
    describe.skip(`ITU-R P.1812-8 SG3 validation examples: SKIPPED, ${SG3_P1812_DIR} not found`, () => {
      it('needs the shared reference data beside the checkout', () => {});
    });
  }
} else {
  const cases = readSg3Cases();
  describe('ITU-R P.1812-8 against the ITU-R SG3 validation examples (../shared/reference/p1812)', () => {
    it('finds the provided cases', () => {
      expect(cases.length).toBeGreaterThanOrEqual(27);
    });
    for (const c of cases) {
      it(`${c.name}: every logged term, losses within 0.1 dB (f ${c.input.frequencyMhz / 1000} GHz, p ${c.input.timePercent} %)`, () => {
        const result = predictP1812(c.input);
        const got = (field: Field): number =>
          field === 'pathCentreLatDeg' ? c.input.pathCentreLatDeg : (result[field] as number);
        const failures: string[] = [];
        let compared = 0;
        for (const [row, field, tolerance] of TERMS) {
          const expected = c.values.get(row) ?? c.values.get(row.split('|')[0]);
          if (expected === undefined) continue;
          compared++;
          const value = got(field);
          if (!(Math.abs(value - expected) <= tolerance)) failures.push(`${row}: expected ${expected}, got ${value}`);
        }
        expect(failures).toEqual([]);
        expect(compared).toBe(TERMS.length);
        expect(result.lbDb).toBeCloseTo(c.values.get('Lb|Eq (69)') as number, 1);
      });
    }
  });
}
