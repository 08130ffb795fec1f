// Cautions said once and fitted to the job (common practice thresholds, server/planning/cautions.ts).
import { describe, expect, it } from 'vitest';
import { cautionLines, fittedCautions, withoutRepeats } from '../../../server/planning/cautions.ts';
import { installCautions } from '../../../server/planning/check.ts';
import { findBandPlan } from '../../../server/radio/band-plans.ts';

describe('cautions, each said once', () => {
  it('withoutRepeats drops an item repeated in any group (case and spaces aside) and the groups it empties', () => {
    const groups = withoutRepeats([
      { topic: 'Work at height', items: ['Bond the mast.', 'Use fall protection.'] },
      { topic: 'Lightning and grounding', items: ['bond the mast. '] },
      { topic: 'On site', items: ['Use fall protection.', 'Follow electrical codes.'] },
    ]);
    expect(groups).toEqual([
      { topic: 'Work at height', items: ['Bond the mast.', 'Use fall protection.'] },
      { topic: 'On site', items: ['Follow electrical codes.'] },
    ]);
    expect(cautionLines(groups)).toEqual(['Work at height: Bond the mast. Use fall protection.', 'On site: Follow electrical codes.']);
  });
  it('the general install list has no repeated line and at most 10 lines for the US band plan', () => {
    const list = installCautions(findBandPlan('us-902-928').cautions);
    expect(new Set(list).size).toBe(list.length);
    expect(list.length).toBeLessThanOrEqual(10);
    // grounding and RF exposure once each
    expect(list.filter((c) => /surge arrest/i.test(c))).toHaveLength(1);
    expect(list.filter((c) => /^RF exposure/i.test(c))).toHaveLength(1);
  });
  it('a 1 m soil probe in a pit gets only the electrical note; a 10 m node mast gets work at height and grounding', () => {
    const pit = fittedCautions({ role: 'node', antennaHeightAglM: 1, peakEirpDbm: 14, antennaGainDbi: 2.15, legal: null, enclosed: true });
    expect(pit.map((g) => g.topic)).toEqual(['On site']);
    const mast = fittedCautions({ role: 'node', antennaHeightAglM: 10, peakEirpDbm: 16, antennaGainDbi: 2.15, legal: null });
    expect(mast.map((g) => g.topic)).toEqual(['Work at height', 'Lightning and grounding']);
    expect(mast[0].items.join(' ')).toMatch(/Above 10 m/);
  });
});
