// Feedlines (coaxial cables by generic designation) and connectors.
//
// Attenuation tables are typical published cable-table values for each generic
// class, from memory (rounded; a real cable's datasheet wins). Between and
// beyond the table points the loss follows the usual coax model
//   α(f) = a·√f + b·f   (dB per 100 m, f in MHz)
// (a: conductor/skin-effect loss, b: dielectric loss), with a and b fitted to
// the table points by least squares, both kept ≥ 0.
// Prices are illustrative list prices, not quotes.

export interface AttenuationPoint {
  frequencyMhz: number;
  lossDbPer100m: number;
}

export interface FeedlineType {
  id: string;
  name: string;
  impedanceOhm: number;
  velocityFactor: number;
  outerDiameterMm: number;
  /** Smallest bend radius for a fixed install, mm (common practice: ~10× the diameter for foam cables). */
  minBendRadiusMm: number;
  /** Attenuation table (dB/100 m) at reference frequencies. */
  table: AttenuationPoint[];
  /** Fitted α = a·√f + b·f coefficients (dB/100 m, f in MHz). */
  fit: { a: number; b: number };
  costUsdPerM: number;
  priceNote: string;
  source: string;
  notes: string[];
}

export interface ConnectorType {
  id: string;
  name: string;
  /** Insertion loss per mated pair at sub-GHz, dB. */
  lossDb: number;
  /** Price of one mated pair (or one arrestor), USD: illustrative list price, not a quote (absent = not priced). */
  costUsd?: number;
  source: string;
  notes: string[];
}

const PRICE_NOTE = 'illustrative list price, not a quote';
const TABLE_SOURCE = 'typical published cable-table attenuation for this generic class, from memory';

/** Least-squares fit of α = a·√f + b·f to table points, with a, b ≥ 0. */
export function fitAttenuation(points: readonly AttenuationPoint[]): { a: number; b: number } {
  if (points.length === 0) throw new RangeError('an attenuation table needs at least one point');
  // Normal equations for the two basis functions u = √f and v = f.
  let suu = 0;
  let suv = 0;
  let svv = 0;
  let suy = 0;
  let svy = 0;
  for (const { frequencyMhz: f, lossDbPer100m: y } of points) {
    const u = Math.sqrt(f);
    suu += u * u;
    suv += u * f;
    svv += f * f;
    suy += u * y;
    svy += f * y;
  }
  const det = suu * svv - suv * suv;
  if (points.length >= 2 && Math.abs(det) > 1e-12) {
    const a = (suy * svv - svy * suv) / det;
    const b = (svy * suu - suy * suv) / det;
    if (a >= 0 && b >= 0) return { a, b };
  }
  // One coefficient would go negative (or a single point): keep the better one-term fit.
  const aOnly = { a: suy / suu, b: 0 };
  const bOnly = { a: 0, b: svy / svv };
  const residual = (c: { a: number; b: number }) =>
    points.reduce((sum, p) => sum + (c.a * Math.sqrt(p.frequencyMhz) + c.b * p.frequencyMhz - p.lossDbPer100m) ** 2, 0);
  return residual(aOnly) <= residual(bOnly) ? aOnly : bOnly;
}

function cable(spec: Omit<FeedlineType, 'fit' | 'priceNote' | 'source'> & { source?: string }): FeedlineType {
  return { ...spec, fit: fitAttenuation(spec.table), priceNote: PRICE_NOTE, source: spec.source ?? TABLE_SOURCE };
}

export const builtInFeedlines: FeedlineType[] = [
  cable({
    id: 'rg-174',
    name: 'RG-174 (2.8 mm, thin flexible)',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    outerDiameterMm: 2.8,
    minBendRadiusMm: 15,
    table: [
      { frequencyMhz: 100, lossDbPer100m: 29 },
      { frequencyMhz: 400, lossDbPer100m: 60 },
      { frequencyMhz: 900, lossDbPer100m: 95 },
    ],
    costUsdPerM: 0.6,
    notes: ['Pigtails and jumpers only: about 1 dB per metre at 900 MHz.'],
  }),
  cable({
    id: 'rg-58',
    name: 'RG-58 (5 mm)',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    outerDiameterMm: 5,
    minBendRadiusMm: 25,
    table: [
      { frequencyMhz: 100, lossDbPer100m: 16 },
      { frequencyMhz: 400, lossDbPer100m: 35 },
      { frequencyMhz: 900, lossDbPer100m: 54 },
    ],
    costUsdPerM: 0.9,
    notes: ['Short runs (a few metres) only at sub-GHz.'],
  }),
  cable({
    id: 'rg-8x',
    name: 'RG-8X (6 mm)',
    impedanceOhm: 50,
    velocityFactor: 0.78,
    outerDiameterMm: 6.1,
    minBendRadiusMm: 30,
    table: [
      { frequencyMhz: 100, lossDbPer100m: 12 },
      { frequencyMhz: 400, lossDbPer100m: 24 },
      { frequencyMhz: 900, lossDbPer100m: 34.5 },
    ],
    costUsdPerM: 1.2,
    source:
      'foam-PE RG-8X class, from memory: about 3.7 / 7.3 / 10.5 dB per 100 ft at 100 / 400 / 900 MHz, the figures commonly quoted for the class (12 / 24 / 34.5 dB per 100 m); a given cable\'s datasheet wins',
    notes: ['Solid-PE "mini-8" cables sold under the same name lose more; check the datasheet.'],
  }),
  cable({
    id: 'rg-213',
    name: 'RG-213 (10.3 mm, solid dielectric)',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    outerDiameterMm: 10.3,
    minBendRadiusMm: 50,
    table: [
      { frequencyMhz: 100, lossDbPer100m: 7.2 },
      { frequencyMhz: 400, lossDbPer100m: 15.7 },
      { frequencyMhz: 900, lossDbPer100m: 25 },
    ],
    costUsdPerM: 2.5,
    notes: ['Heavy; foam low-loss 10 mm cable loses about half as much at 900 MHz.'],
  }),
  cable({
    id: 'low-loss-10mm',
    name: 'Generic 10 mm low-loss foam coax',
    impedanceOhm: 50,
    velocityFactor: 0.85,
    outerDiameterMm: 10.3,
    minBendRadiusMm: 25,
    table: [
      { frequencyMhz: 150, lossDbPer100m: 5.0 },
      { frequencyMhz: 450, lossDbPer100m: 8.9 },
      { frequencyMhz: 900, lossDbPer100m: 12.8 },
      { frequencyMhz: 1800, lossDbPer100m: 18.6 },
    ],
    costUsdPerM: 3.5,
    notes: ['The usual choice for gateway runs of 5–30 m.'],
  }),
  cable({
    id: 'low-loss-half-inch',
    name: 'Generic 1/2-inch foam low-loss coax (corrugated outer)',
    impedanceOhm: 50,
    velocityFactor: 0.88,
    outerDiameterMm: 16,
    minBendRadiusMm: 125,
    table: [
      { frequencyMhz: 150, lossDbPer100m: 2.6 },
      { frequencyMhz: 450, lossDbPer100m: 4.8 },
      { frequencyMhz: 900, lossDbPer100m: 6.9 },
      { frequencyMhz: 1800, lossDbPer100m: 10.1 },
    ],
    costUsdPerM: 7,
    notes: ['Tower runs over 30 m; needs its own connectors and careful weatherproofing.'],
  }),
];

export const builtInConnectors: ConnectorType[] = [
  { id: 'n-type', costUsd: 12, name: 'N-type mated pair', lossDb: 0.1, source: 'common practice (about 0.1 dB per mated pair below 1 GHz)', notes: ['Weatherproof with self-amalgamating tape outdoors.'] },
  { id: 'sma', costUsd: 6, name: 'SMA / RP-SMA mated pair', lossDb: 0.1, source: 'common practice (about 0.1 dB per mated pair below 1 GHz)', notes: [] },
  { id: 'uhf-pl259', costUsd: 5, name: 'UHF (PL-259/SO-239) mated pair', lossDb: 0.2, source: 'common practice (not constant impedance; avoid above 300 MHz where possible)', notes: ['Not constant impedance: prefer N-type at sub-GHz.'] },
  { id: 'u-fl', costUsd: 3, name: 'U.FL / IPEX micro-coax mated pair', lossDb: 0.2, source: 'common practice (rated for few mating cycles)', notes: ['Rated for only a few tens of mating cycles.'] },
  { id: 'surge-arrestor', costUsd: 45, name: 'Coaxial surge arrestor (gas discharge), inline', lossDb: 0.2, source: 'common practice (typical insertion loss of inline arrestors at sub-GHz)', notes: ['Bond to the site ground; follow local electrical codes.'] },
];

/** Raised for an unknown feedline or connector id. */
export class UnknownKitItemError extends Error {}

export function findFeedline(id: string): FeedlineType {
  const found = builtInFeedlines.find((f) => f.id === id);
  if (!found) throw new UnknownKitItemError(`unknown feedline "${id}" (known: ${builtInFeedlines.map((f) => f.id).join(', ')})`);
  return found;
}

export function findConnector(id: string): ConnectorType {
  const found = builtInConnectors.find((c) => c.id === id);
  if (!found) throw new UnknownKitItemError(`unknown connector "${id}" (known: ${builtInConnectors.map((c) => c.id).join(', ')})`);
  return found;
}

/** Attenuation of a feedline in dB per 100 m at `frequencyMhz` (fitted a·√f + b·f). */
export function feedlineAttenuationDbPer100m(feedline: Pick<FeedlineType, 'fit'>, frequencyMhz: number): number {
  if (!(frequencyMhz > 0)) throw new RangeError(`frequency must be positive (got ${frequencyMhz} MHz)`);
  return feedline.fit.a * Math.sqrt(frequencyMhz) + feedline.fit.b * frequencyMhz;
}

/** Loss (dB) of `lengthM` metres of a feedline at `frequencyMhz`. */
export function feedlineLossDb(feedline: Pick<FeedlineType, 'fit'>, frequencyMhz: number, lengthM: number): number {
  if (!(lengthM >= 0) || !Number.isFinite(lengthM)) throw new RangeError(`feedline length must be 0 m or more (got ${lengthM})`);
  return (feedlineAttenuationDbPer100m(feedline, frequencyMhz) * lengthM) / 100;
}

export interface ConnectorUse {
  connector: ConnectorType;
  count: number;
}

/** Total loss (dB) of a set of connectors (mated pairs) and inline parts. */
export function connectorLossDb(connectors: readonly ConnectorUse[]): number {
  let total = 0;
  for (const { connector, count } of connectors) {
    if (!Number.isInteger(count) || count < 0) throw new RangeError(`connector count must be a whole number ≥ 0 (got ${count})`);
    total += connector.lossDb * count;
  }
  return total;
}
