// The path prediction request (as the `predict-path` command and the API take it)
// and its validation: every rule is checked here, once, with a message naming the field.
import { z } from 'zod';

export const PATH_METHODS = ['p1812', 'bullington', 'knife-edge', 'deygout', 'free-space'] as const;
export type PathMethod = (typeof PATH_METHODS)[number];

/** Heights at or below this are NoData markers (−32768, −9999 …), not terrain: the lowest land is ≈ −430 m. */
export const NODATA_THRESHOLD_M = -1000;

const finite = (message = 'must be a finite number') => z.number({ error: message }).refine(Number.isFinite, { message });

const endSchema = z.object({
  lat: finite().min(-90, 'must be within ±90°').max(90, 'must be within ±90°'),
  lon: finite().min(-180, 'must be within ±180°').max(180, 'must be within ±180°'),
  heightAglM: finite().gt(0, 'must be above 0 m').max(3000, 'must be at most 3000 m'),
});

const pointSchema = z.object({
  distanceKm: finite().min(0, 'must be 0 or more'),
  groundM: z
    .number({ error: 'must be a height in metres (NoData or missing heights are not accepted)' })
    .refine(Number.isFinite, { message: 'must be a finite height in metres' })
    .refine((value) => value > NODATA_THRESHOLD_M, { message: 'is a NoData value; fill the gap or re-extract the profile' })
    .refine((value) => value < 9000, { message: 'must be below 9000 m' }),
  clutterM: finite().min(0, 'must be 0 or more').max(200, 'must be at most 200 m').default(0),
  // Names, or the Recommendation's zone codes 1 (sea), 3 (coastal land), 4 (inland) as in the SG3 profiles.
  zone: z
    .union([z.enum(['inland', 'coastal', 'sea']), z.literal(1), z.literal(3), z.literal(4)], {
      error: 'must be "inland", "coastal" or "sea" (or zone code 4, 3 or 1)',
    })
    .transform((zone) => (zone === 1 ? 'sea' : zone === 3 ? 'coastal' : zone === 4 ? 'inland' : zone))
    .default('inland'),
});

const terrainFileSchema = z.union([
  z.string().min(1, 'must be a file path'),
  z.object({ path: z.string().min(1, 'must be a file path'), kind: z.enum(['elevation', 'clutter']).default('elevation') }),
]);

export const pathRequestSchema = z
  .object({
    method: z.enum(PATH_METHODS, { error: `must be one of ${PATH_METHODS.join(', ')}` }).default('p1812'),
    frequencyMhz: finite(),
    timePercent: finite().min(1, 'must be within 1–50 %').max(50, 'must be within 1–50 %').default(50),
    locationPercent: finite().min(1, 'must be within 1–99 %').max(99, 'must be within 1–99 %').default(50),
    locationSigmaDb: finite().min(0, 'must be 0 or more').max(30, 'must be at most 30 dB').default(0),
    polarization: z.enum(['horizontal', 'vertical'], { error: 'must be "horizontal" or "vertical"' }).default('horizontal'),
    refractivity: z
      .object({
        deltaN: finite().gt(0, 'must be above 0 N-units/km').lt(150, 'must be below 150 N-units/km').default(45),
        n0: finite().min(200, 'must be within 200–450 N-units').max(450, 'must be within 200–450 N-units').default(325),
      })
      .default({ deltaN: 45, n0: 325 }),
    coastDistanceKm: z
      .object({ tx: finite().min(0, 'must be 0 or more').default(500), rx: finite().min(0, 'must be 0 or more').default(500) })
      .default({ tx: 500, rx: 500 }),
    /** Effective radiated power for the field strength (dBm); default 60 dBm = 1 kW, the Recommendation's reference. */
    erpDbm: finite().min(-50, 'must be at least −50 dBm').max(100, 'must be at most 100 dBm').default(60),
    tx: endSchema,
    rx: endSchema,
    profile: z.array(pointSchema).optional(),
    terrain: z.array(terrainFileSchema).min(1, 'must list at least one GeoTIFF').optional(),
    /** Spacing of the extracted profile (m) with `terrain`; default: the finest raster resolution. */
    terrainStepM: finite().gt(0, 'must be above 0 m').optional(),
    /** Radio-climatic zone given to every point of an extracted profile. */
    terrainZone: z.enum(['inland', 'coastal', 'sea']).default('inland'),
  })
  .superRefine((request, ctx) => {
    if (request.method === 'p1812' && (request.frequencyMhz < 30 || request.frequencyMhz > 6000)) {
      ctx.addIssue({ code: 'custom', path: ['frequencyMhz'], message: 'must be within 30–6000 MHz for p1812 (ITU-R P.1812-8 scope)' });
    } else if (request.frequencyMhz <= 0 || request.frequencyMhz > 100_000) {
      ctx.addIssue({ code: 'custom', path: ['frequencyMhz'], message: 'must be above 0 and at most 100000 MHz' });
    }
    if (request.profile === undefined && request.terrain === undefined) {
      ctx.addIssue({ code: 'custom', path: ['profile'], message: 'is required (or give "terrain": ["FILE.tif", ...])' });
      return;
    }
    if (request.profile !== undefined && request.terrain !== undefined) {
      ctx.addIssue({ code: 'custom', path: ['profile'], message: 'give either "profile" or "terrain", not both' });
      return;
    }
    const profile = request.profile;
    if (profile === undefined) return;
    if (profile.length < 3) {
      ctx.addIssue({ code: 'custom', path: ['profile'], message: `needs at least 3 points (got ${profile.length})` });
      return;
    }
    for (let i = 1; i < profile.length; i++) {
      if (!(profile[i].distanceKm > profile[i - 1].distanceKm)) {
        ctx.addIssue({
          code: 'custom',
          path: ['profile', i, 'distanceKm'],
          message: `must be greater than the previous point's ${profile[i - 1].distanceKm} km (distances must increase)`,
        });
        return;
      }
    }
    const lengthKm = profile[profile.length - 1].distanceKm - profile[0].distanceKm;
    if (request.method === 'p1812' && lengthKm > 3000) {
      ctx.addIssue({ code: 'custom', path: ['profile'], message: 'path must be at most 3000 km for p1812' });
    }
  });

export type PathRequest = z.output<typeof pathRequestSchema>;
export type PathRequestInput = z.input<typeof pathRequestSchema>;

/** One line naming the field and the rule, e.g. `profile[4].groundM: is a NoData value; …`. */
export function describePathRequestError(error: z.ZodError): string {
  const issue = error.issues[0];
  let field = '';
  for (const part of issue.path) {
    if (typeof part === 'number') field += `[${part}]`;
    else field += field === '' ? String(part) : `.${String(part)}`;
  }
  return `${field === '' ? 'input' : field}: ${issue.message}`;
}
