import { describe, expect, it } from 'vitest';
import {
  antennaGainDbi,
  builtInAntennaDesigns,
  customAntennaDesign,
  findAntennaDesign,
  parsePatternCsv,
  parsePatternJson,
  wrapDeg180,
} from '../../../server/radio/antennas.ts';
import { BUILD_SHEET_IDS } from '../../../server/radio/build-sheets.ts';

describe('antenna catalog', () => {
  it('has unique stable ids and covers the kinds the issue asks for', () => {
    const ids = builtInAntennaDesigns.map((d) => d.id);
    expect(new Set(ids).size).toBe(ids.length);
    for (const id of ['helical-stub', 'quarter-wave-ground-plane', 'quarter-wave-ground-plane-drooped', 'half-wave-dipole', 'disc-ground-plane', 'collinear-fibreglass-6dbi', 'pcb-inverted-f', 'yagi-5-element']) {
      expect(ids).toContain(id);
    }
  });

  it('each design is complete: band, VSWR ≥ 1, cost with the illustrative-price note, pattern cuts within 0 dB, source', () => {
    for (const d of builtInAntennaDesigns) {
      expect(d.bandMhz.toMhz).toBeGreaterThan(d.bandMhz.fromMhz);
      expect(d.typicalVswr).toBeGreaterThanOrEqual(1);
      expect(d.priceNote).toBe('illustrative list price, not a quote');
      expect(d.source.length).toBeGreaterThan(10);
      expect(Math.max(...d.pattern.elevation.relativeDb)).toBeCloseTo(0, 9);
      expect(Math.min(...d.pattern.elevation.relativeDb)).toBeGreaterThanOrEqual(-40);
      if (d.homemade) expect(BUILD_SHEET_IDS as readonly string[]).toContain(d.buildSheetId);
    }
  });

  it('gains as the trade quotes them (common practice): helical stub below 0 dBi, dipole 2.15 dBi, collinears 5–8 dBi', () => {
    expect(findAntennaDesign('helical-stub').gainDbi).toBeLessThan(0);
    expect(findAntennaDesign('half-wave-dipole').gainDbi).toBe(2.15);
    for (const d of builtInAntennaDesigns.filter((x) => x.kind === 'collinear')) {
      expect(d.gainDbi).toBeGreaterThanOrEqual(5);
      expect(d.gainDbi).toBeLessThanOrEqual(8);
    }
    expect(findAntennaDesign('quarter-wave-ground-plane-drooped').typicalVswr).toBeLessThan(findAntennaDesign('quarter-wave-ground-plane').typicalVswr);
  });
});

describe('gain toward a direction', () => {
  const dipole = findAntennaDesign('half-wave-dipole');

  it('vertical dipole: 2.15 dBi at the horizon and 2.15 + 20·log10(cos(π/2·sin 45°)/cos 45°) = −1.89 dBi at 45° (standard dipole pattern)', () => {
    expect(antennaGainDbi(dipole, 0, 0)).toBeCloseTo(2.15, 2);
    const expected = 2.15 + 20 * Math.log10(Math.cos((Math.PI / 2) * Math.SQRT1_2) / Math.SQRT1_2);
    expect(expected).toBeCloseTo(-1.89, 2);
    expect(antennaGainDbi(dipole, 0, 45)).toBeCloseTo(expected, 1);
  });

  it('omni designs give the same gain at every azimuth', () => {
    const collinear = findAntennaDesign('collinear-fibreglass-6dbi');
    expect(antennaGainDbi(collinear, 0, 2)).toBe(antennaGainDbi(collinear, 237, 2));
  });

  it('collinear 6 dBi: half-power vertical beamwidth 78°/10^(3.85/10) ≈ 32° (common practice), so −3 dB at ±16°', () => {
    const collinear = findAntennaDesign('collinear-fibreglass-6dbi');
    const halfBeam = 78 / 10 ** ((6 - 2.15) / 10) / 2;
    expect(antennaGainDbi(collinear, 0, halfBeam)).toBeCloseTo(3, 1);
  });

  it('Yagi: 9 dBi on boresight, −3 dB at half the 60° beamwidth, front-to-back 15 dB; boresight rotation applies', () => {
    const yagi = findAntennaDesign('yagi-5-element');
    expect(antennaGainDbi(yagi, 0, 0)).toBeCloseTo(9, 9);
    expect(antennaGainDbi(yagi, 30, 0)).toBeCloseTo(6, 9);
    expect(antennaGainDbi(yagi, 180, 0)).toBeCloseTo(-6, 9);
    expect(antennaGainDbi(yagi, 120, 0, 90)).toBeCloseTo(antennaGainDbi(yagi, 30, 0, 0), 9);
    expect(antennaGainDbi(yagi, -10, 0, 350)).toBeCloseTo(9, 9);
  });

  it('angles wrap to −180…180', () => {
    expect(wrapDeg180(190)).toBe(-170);
    expect(wrapDeg180(-190)).toBe(170);
    expect(wrapDeg180(540)).toBe(180);
  });
});

describe('pattern import (earshot CSV/JSON layout, server/radio/README.md)', () => {
  const csv = [
    '# my panel, measured on the roof',
    'cut,angle_deg,gain_dbi',
    'elevation,-90,-12',
    'elevation,0,10',
    'elevation,90,-12',
    'azimuth,-180,-10',
    'azimuth,0,10',
    'azimuth,90,4',
    'azimuth,180,-10',
  ].join('\n');

  it('CSV: peak gain is the largest sample; cuts interpolate linearly relative to it', () => {
    const p = parsePatternCsv(csv);
    expect(p.gainDbi).toBe(10);
    expect(p.pattern.kind).toBe('directional');
    expect(antennaGainDbi(p, 0, 0)).toBe(10);
    expect(antennaGainDbi(p, 45, 0)).toBeCloseTo(7, 9); // halfway 10 → 4
    expect(antennaGainDbi(p, 0, 45)).toBeCloseTo(-1, 9); // halfway 10 → −12
  });

  it('CSV errors name the line', () => {
    expect(() => parsePatternCsv('cut,angle,gain\n')).toThrow(/line 1: header/);
    expect(() => parsePatternCsv('cut,angle_deg,gain_dbi\nelevation,0,x\nelevation,10,1')).toThrow(/line 2: gain_dbi/);
    expect(() => parsePatternCsv('cut,angle_deg,gain_dbi\nelevation,100,0\nelevation,0,1')).toThrow(/outside -90…90/);
    expect(() => parsePatternCsv('cut,angle_deg,gain_dbi\nslant,0,0')).toThrow(/line 2: cut/);
    expect(() => parsePatternCsv('cut,angle_deg,gain_dbi\nelevation,0,0')).toThrow(/at least 2/);
  });

  it('JSON: omni pattern from an elevation cut only; bad documents are rejected', () => {
    const p = parsePatternJson(JSON.stringify({ format: 'earshot-pattern-1', elevation: [{ angleDeg: -90, gainDbi: -20 }, { angleDeg: 0, gainDbi: 5 }, { angleDeg: 90, gainDbi: -20 }] }));
    expect(p.pattern.kind).toBe('omni');
    expect(antennaGainDbi(p, 123, 0)).toBe(5);
    expect(() => parsePatternJson('{')).toThrow(/does not parse/);
    expect(() => parsePatternJson({ format: 'other' })).toThrow(/format/);
    expect(() => parsePatternJson({ format: 'earshot-pattern-1', elevation: [{ angleDeg: 0 }] })).toThrow(/gainDbi/);
  });

  it('a user design built from an imported pattern is validated at the door', () => {
    const imported = parsePatternCsv(csv);
    const design = customAntennaDesign({ id: 'roof-panel', name: 'Roof panel', imported, bandMhz: { fromMhz: 902, toMhz: 928 }, costUsd: 75 });
    expect(design.gainDbi).toBe(10);
    expect(design.relativeCost).toBe(3);
    expect(() => customAntennaDesign({ id: 'half-wave-dipole', name: 'x', imported, bandMhz: { fromMhz: 902, toMhz: 928 } })).toThrow(/built-in/);
    expect(() => customAntennaDesign({ id: 'x y', name: 'x', imported, bandMhz: { fromMhz: 902, toMhz: 928 } })).toThrow(/id/);
    expect(() => customAntennaDesign({ id: 'ok-id', name: 'x', imported, bandMhz: { fromMhz: 928, toMhz: 902 } })).toThrow(/bandMhz/);
  });
});
