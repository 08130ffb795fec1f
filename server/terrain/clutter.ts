// Clutter classes of a land-cover raster and their representative clutter heights.
// The classes follow the coverage codes of ITU-R P.1812 (water/sea, open/rural,
// suburban, urban/trees/forest, dense urban), with urban and trees/forest kept apart
// so a plan can give them different heights.

/** Clutter classes, in the order of their numeric index (CLUTTER_CLASSES[i]). */
export const CLUTTER_CLASSES = ['water', 'open', 'suburban', 'urban', 'trees', 'dense_urban'] as const;
export type ClutterClass = (typeof CLUTTER_CLASSES)[number];

/** Index used in Uint8Array outputs when a point has no clutter class (outside the layer, NoData, unmapped code). */
export const NO_CLUTTER_CLASS = 255;

/** Human labels for the classes. */
export const CLUTTER_LABELS: Record<ClutterClass, string> = {
  water: 'water/sea',
  open: 'open/rural',
  suburban: 'suburban',
  urban: 'urban',
  trees: 'trees/forest',
  dense_urban: 'dense urban',
};

/**
 * Representative clutter heights R (m) of ITU-R P.1812-8 Table 2 ("Default values of
 * representative clutter height"): water/sea 0, open/rural 0, suburban 10, urban 15,
 * trees/forest 15, dense urban 20. The ITU-R SG3 validation profiles carry the same R per
 * coverage code (1 → 0, 2 → 0, 3 → 10, 4 → 15 m; test/reference/clutter-heights.test.ts).
 * Plans override them (`settings.clutterHeightsM`).
 */
export const P1812_REPRESENTATIVE_CLUTTER_HEIGHTS_M: Readonly<Record<ClutterClass, number>> = Object.freeze({
  water: 0,
  open: 0,
  suburban: 10,
  urban: 15,
  trees: 15,
  dense_urban: 20,
});

/** Raster code → clutter class tables. */
export type ClutterCodeMap = Record<number, ClutterClass>;

export const CLUTTER_CODE_PRESETS = {
  /** earshot's own codes: 1 water, 2 open/rural, 3 suburban, 4 urban, 5 trees/forest, 6 dense urban. */
  earshot: { 1: 'water', 2: 'open', 3: 'suburban', 4: 'urban', 5: 'trees', 6: 'dense_urban' },
  /** The coverage codes of the ITU-R SG3 P.1812 validation profiles: 1 water/sea, 2 open/rural, 3 suburban, 4 urban/trees/forest, 5 dense urban. */
  p1812: { 1: 'water', 2: 'open', 3: 'suburban', 4: 'urban', 5: 'dense_urban' },
  /**
   * ESA WorldCover land-cover legend (open data): 10 tree cover, 20 shrubland, 30 grassland, 40 cropland,
   * 50 built-up, 60 bare, 70 snow/ice, 80 permanent water, 90 herbaceous wetland, 95 mangroves, 100 moss/lichen.
   * Built-up becomes urban (the legend does not separate densities).
   */
  worldcover: { 10: 'trees', 20: 'open', 30: 'open', 40: 'open', 50: 'urban', 60: 'open', 70: 'open', 80: 'water', 90: 'open', 95: 'trees', 100: 'open' },
} as const satisfies Record<string, ClutterCodeMap>;

export type ClutterPreset = keyof typeof CLUTTER_CODE_PRESETS;

/** Index of a class name in CLUTTER_CLASSES. */
export function clutterClassIndex(name: ClutterClass): number {
  return CLUTTER_CLASSES.indexOf(name);
}

/** Lookup table code (0..65535) → class index (NO_CLUTTER_CLASS for unmapped codes). */
export function clutterLookup(map: ClutterCodeMap): Uint8Array {
  const table = new Uint8Array(65536).fill(NO_CLUTTER_CLASS);
  for (const [code, name] of Object.entries(map)) {
    const n = Number(code);
    if (!Number.isInteger(n) || n < 0 || n > 65535) throw new RangeError(`clutter code ${code} must be an integer 0..65535`);
    const index = clutterClassIndex(name);
    if (index < 0) throw new RangeError(`clutter code ${code}: unknown class "${name}" (known: ${CLUTTER_CLASSES.join(', ')})`);
    table[n] = index;
  }
  return table;
}

/**
 * Heights per class index (m): the P.1812 defaults with a plan's overrides.
 * Overrides must be finite and within 0–100 m.
 */
export function clutterHeightsByIndex(overrides: Partial<Record<ClutterClass, number>> = {}): Float64Array {
  const heights = new Float64Array(CLUTTER_CLASSES.length);
  CLUTTER_CLASSES.forEach((name, i) => {
    const override = overrides[name];
    if (override !== undefined && (!Number.isFinite(override) || override < 0 || override > 100)) {
      throw new RangeError(`clutter height for ${name} must be between 0 and 100 m (got ${override})`);
    }
    heights[i] = override ?? P1812_REPRESENTATIVE_CLUTTER_HEIGHTS_M[name];
  });
  return heights;
}
