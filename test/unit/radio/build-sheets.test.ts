import { describe, expect, it } from 'vitest';
import { buildSheet, DEFAULT_LENGTH_FACTOR } from '../../../server/radio/build-sheets.ts';

const el = (sheet: ReturnType<typeof buildSheet>, name: string) => {
  const found = sheet.elements.find((e) => e.name === name);
  if (!found) throw new Error(`no element ${name}`);
  return found;
};

describe('build sheets (element lengths: trade rule 2832/f(MHz) inches for λ/4, common practice)', () => {
  it('quarter-wave ground plane, 902 MHz → radiator 3.140 in = 7.97 cm', () => {
    const r = el(buildSheet('quarter-wave-ground-plane', 902), 'radiator');
    expect(r.lengthIn).toBeCloseTo(2832 / 902, 3);
    expect(r.lengthMm / 10).toBeCloseTo(7.97, 2);
  });
  it('928 MHz → radiator 3.052 in = 7.75 cm; the band edges are only about 2–3 mm apart', () => {
    const r928 = el(buildSheet('quarter-wave-ground-plane', 928), 'radiator');
    expect(r928.lengthIn).toBeCloseTo(3.052, 3);
    expect(r928.lengthMm / 10).toBeCloseTo(7.75, 2);
    const r902 = el(buildSheet('quarter-wave-ground-plane', 902), 'radiator');
    expect(r902.lengthMm - r928.lengthMm).toBeGreaterThan(2);
    expect(r902.lengthMm - r928.lengthMm).toBeLessThan(3);
  });
  it('868 MHz → 2832/868 = 3.263 in = 82.9 mm; 433.92 MHz → 6.527 in = 165.8 mm', () => {
    expect(el(buildSheet('quarter-wave-ground-plane', 868), 'radiator').lengthMm).toBeCloseTo(82.87, 1);
    expect(el(buildSheet('quarter-wave-ground-plane', 433.92), 'radiator').lengthIn).toBeCloseTo(6.527, 3);
  });
  it('default factor ≈ 0.960 of the free-space quarter wave; mm and inches agree (25.4 mm/in)', () => {
    expect(DEFAULT_LENGTH_FACTOR).toBeCloseTo(0.9598, 4);
    const sheet = buildSheet('half-wave-dipole', 915);
    for (const e of sheet.elements) expect(e.lengthIn * 25.4).toBeCloseTo(e.lengthMm, 1);
  });
  it('radials: 4 by default, cut a few per cent long, horizontal (≈ 37 Ω) or drooped 45° (≈ 50 Ω, common practice)', () => {
    const flat = buildSheet('quarter-wave-ground-plane', 915);
    expect(el(flat, 'radial').count).toBe(4);
    expect(el(flat, 'radial').lengthMm).toBeGreaterThan(el(flat, 'radiator').lengthMm);
    expect(flat.droopDeg).toBe(0);
    expect(flat.feedImpedanceOhm).toBeCloseTo(36.5, 1);
    const drooped = buildSheet('quarter-wave-ground-plane-drooped', 915);
    expect(drooped.droopDeg).toBe(45);
    expect(drooped.feedImpedanceOhm).toBeCloseTo(50, 1);
    expect(drooped.estimatedVswr).toBeLessThan(flat.estimatedVswr!);
    expect(el(buildSheet('quarter-wave-ground-plane', 915, { radialCount: 8 }), 'radial').count).toBe(8);
  });
  it('half-wave dipole: two legs of a quarter wave each', () => {
    const leg = el(buildSheet('half-wave-dipole', 915), 'leg');
    expect(leg.count).toBe(2);
    expect(leg.lengthIn).toBeCloseTo(2832 / 915, 3);
  });
  it('disc ground plane: disc at least half a wavelength across (common practice)', () => {
    expect(el(buildSheet('disc-ground-plane', 915), 'disc').lengthMm).toBeCloseTo(299792.458 / 915 / 2, 1);
  });
  it('PCB inverted-F: arm + short leg ≈ λ/(4·√((εr+1)/2)) (common practice starting point), with a tuning note', () => {
    const sheet = buildSheet('pcb-inverted-f', 915);
    const total = el(sheet, 'arm').lengthMm + el(sheet, 'short-leg').lengthMm;
    expect(total).toBeCloseTo(299792.458 / 915 / 4 / Math.sqrt(2.7), 1);
    expect(sheet.notes.join(' ')).toMatch(/starting point/);
  });
  it('every sheet says to cut long and trim for VSWR below 2:1, and carries height, grounding and RF cautions', () => {
    for (const id of ['quarter-wave-ground-plane', 'quarter-wave-ground-plane-drooped', 'half-wave-dipole', 'disc-ground-plane', 'pcb-inverted-f']) {
      const sheet = buildSheet(id, 868);
      expect(sheet.notes.join(' ')).toMatch(/long/);
      expect(sheet.notes.join(' ')).toMatch(/VSWR below 2:1/);
      expect(sheet.cautions.join(' ')).toMatch(/height/i);
      expect(sheet.cautions.join(' ')).toMatch(/ground/i);
      expect(sheet.cautions.join(' ')).toMatch(/RF exposure/);
    }
  });
  it('refuses frequencies outside the design band (naming the band), unknown and bought designs', () => {
    expect(() => buildSheet('quarter-wave-ground-plane', 2400)).toThrow(/covers 430–930 MHz/);
    expect(() => buildSheet('quarter-wave-ground-plane', 100)).toThrow(/outside the band/);
    expect(() => buildSheet('yagi-5-element', 915)).toThrow(/bought ready-made/);
    expect(() => buildSheet('rubber-duck', 915)).toThrow(/unknown design/);
    expect(() => buildSheet('quarter-wave-ground-plane', 915, { radialCount: 2 })).toThrow(/radial count/);
    expect(() => buildSheet('quarter-wave-ground-plane', 915, { droopDeg: 80 })).toThrow(/droop/);
  });
});
