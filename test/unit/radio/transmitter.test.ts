// A transmitter's peak EIRP and the band plan's legal check (one rule for nodes and gateways),
// and the cautions fitted to height, power and gain.
import { describe, expect, it } from 'vitest';
import { findAntennaDesign } from '../../../server/radio/antennas.ts';
import { findBandPlan } from '../../../server/radio/band-plans.ts';
import { mismatchLossDb } from '../../../server/radio/mismatch.ts';
import { transmitterCheck } from '../../../server/radio/transmitter.ts';
import { fittedCautions } from '../../../server/planning/cautions.ts';

const us = findBandPlan('us-902-928');
const collinear8 = findAntennaDesign('collinear-fibreglass-8dbi');

describe('transmitterCheck', () => {
  it('a 36 dBm gateway with an 8 dBi antenna is about 42 dBm EIRP, over the US 36 dBm limit', () => {
    const check = transmitterCheck(us, { frequencyMhz: 915, bandwidthKhz: 125, powerDbm: 36, end: { antenna: collinear8 } });
    // EIRP = P_tx − L_mismatch + G_peak (no feedline): mismatch loss = −10·log10(1 − |Γ|²), |Γ| = (VSWR−1)/(VSWR+1).
    const expected = 36 - mismatchLossDb(collinear8.typicalVswr) + collinear8.gainDbi;
    expect(check.peakEirpDbm).toBeCloseTo(expected, 9);
    expect(check.peakEirpDbm).toBeGreaterThan(41);
    // FCC 47 CFR §15.247(b)(3): 1 W (30 dBm) conducted; (b)(4): reduced by the gain above 6 dBi -> 28 dBm here.
    expect(check.legal.maxConductedDbm).toBeCloseTo(30 - (collinear8.gainDbi - 6), 9);
    expect(check.legal.withinLimit).toBe(false);
    expect(check.legal.excessDb).toBeCloseTo(Math.max(check.peakEirpDbm - 36, 36 - (30 - (collinear8.gainDbi - 6))), 9);
    expect(check.legal.warnings.join(' ')).toMatch(/exceeds the 36 dBm EIRP limit/);
    expect(check.peakErpDbm).toBeCloseTo(check.peakEirpDbm - 2.15, 9); // ERP = EIRP − 2.15 dB (half-wave dipole gain)
  });

  it('22 dBm into the same antenna stays within the limit', () => {
    const check = transmitterCheck(us, { frequencyMhz: 915, bandwidthKhz: 125, powerDbm: 22, end: { antenna: collinear8 } });
    expect(check.legal.withinLimit).toBe(true);
    expect(check.legal.excessDb).toBeLessThan(0);
  });
});

describe('fittedCautions', () => {
  it('a 1 m soil probe at 14 dBm gets no mast-work, grounding or RF list', () => {
    expect(fittedCautions({ role: 'node', antennaHeightAglM: 1, peakEirpDbm: 14, antennaGainDbi: 2.15, legal: { withinLimit: true, excessDb: -20, maxEirpDbm: 36 } })).toEqual([]);
  });

  it('a 24 m gateway at 42 dBm EIRP with 8 dBi: work at height (tower), grounding, RF exposure and the legal excess, each once', () => {
    const groups = fittedCautions({ role: 'gateway', antennaHeightAglM: 24, peakEirpDbm: 42, antennaGainDbi: 8, legal: { withinLimit: false, excessDb: 6, maxEirpDbm: 36 } });
    expect(groups.map((g) => g.topic)).toEqual(['Work at height', 'Lightning and grounding', 'RF exposure', 'Legal power']);
    expect(groups[0].items.join(' ')).toMatch(/Above 10 m/);
    expect(groups[3].items[0]).toMatch(/Over the band plan's limit by 6\.0 dB/);
    const all = groups.flatMap((g) => g.items);
    expect(new Set(all).size).toBe(all.length);
    expect(all.length).toBeLessThanOrEqual(6);
  });
});
