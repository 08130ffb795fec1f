// The one schema for an antenna radiation pattern (the AntennaPattern of ./antennas.ts), used
// where a pattern comes in (the kit API) and where a stored one is read back (the catalog
// repository), so an engine never computes with JSON nobody checked. Values are dB relative to
// the peak gain, as cutValueDb interpolates them.
import { z } from 'zod';
import type { AntennaPattern, PatternCut } from './antennas.ts';

const maxPoints = 3601; // 0.1° steps over 360°

function cut(fromDeg: number, toDeg: number) {
  return z
    .strictObject({
      angleDeg: z.array(z.number({ error: 'must be a number' }).min(fromDeg, `angles must be within ${fromDeg}…${toDeg}°`).max(toDeg, `angles must be within ${fromDeg}…${toDeg}°`)).min(2, 'needs at least 2 angles').max(maxPoints, `at most ${maxPoints} angles`),
      relativeDb: z.array(z.number({ error: 'must be a number' }).min(-100, 'must be ≥ -100 dB').max(0.5, 'must be ≤ 0 dB (relative to the peak gain; 0.5 dB slack for rounding)')).min(2).max(maxPoints),
    })
    .superRefine((value, ctx) => {
      if (value.angleDeg.length !== value.relativeDb.length) ctx.addIssue({ code: 'custom', path: ['relativeDb'], message: `needs one value per angle (${value.angleDeg.length})` });
      for (let i = 1; i < value.angleDeg.length; i++) {
        if (!(value.angleDeg[i] > value.angleDeg[i - 1])) {
          ctx.addIssue({ code: 'custom', path: ['angleDeg', i], message: 'angles must increase' });
          break;
        }
      }
    });
}

export const antennaPatternSchema = z
  .strictObject({
    kind: z.enum(['omni', 'directional'], { error: 'must be omni or directional' }),
    elevation: cut(-90, 90),
    azimuth: cut(-180, 180).optional(),
  })
  .superRefine((value, ctx) => {
    if (value.kind === 'directional' && !value.azimuth) ctx.addIssue({ code: 'custom', path: ['azimuth'], message: 'required for a directional pattern' });
  });

/** The pattern of a design that states only its gain: the same gain at every angle (an omni of that gain). */
export function omniPattern(): AntennaPattern {
  const flat: PatternCut = { angleDeg: [-90, 90], relativeDb: [0, 0] };
  return { kind: 'omni', elevation: flat };
}

export class InvalidPatternError extends Error {}

/**
 * A stored pattern as the engines may use it. No pattern (null, or the `{}` older rows hold) is
 * explicitly an omni of the design's gain; anything else must pass antennaPatternSchema.
 */
export function parseStoredPattern(value: unknown, designName: string): AntennaPattern {
  if (value === null || value === undefined || (typeof value === 'object' && !Array.isArray(value) && Object.keys(value).length === 0)) return omniPattern();
  const parsed = antennaPatternSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InvalidPatternError(`antenna design "${designName}": stored pattern is not usable (pattern.${issue.path.join('.')}: ${issue.message}); edit the design`);
  }
  return parsed.data as AntennaPattern;
}
