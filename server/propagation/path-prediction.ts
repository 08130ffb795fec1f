// One path prediction by any of our methods, shaped as the `predict-path` output.
// Pure: a validated request and a profile in, the loss terms out.
import { bullingtonLossDb } from './bullington.ts';
import { deygoutLossDb } from './deygout.ts';
import { freeSpaceLossDb } from './free-space.ts';
import { EARTH_RADIUS_KM, pathClearance } from './path-geometry.ts';
import type { PathMethod, PathRequest } from './path-request.ts';
import { fieldStrengthDbuvm } from './p1812/location-variability.ts';
import { P1812Predictor, type P1812Detail } from './p1812/predict.ts';
import { pathCentreLatitudeDeg } from './p1812/radio-climate.ts';
import { ZONE_COASTAL_LAND, ZONE_INLAND, ZONE_SEA } from './p1812/types.ts';

/** A profile as plain typed arrays (Tx first). */
export interface ProfileArrays {
  distanceKm: Float64Array;
  groundM: Float64Array;
  clutterM: Float64Array;
  zone: Uint8Array;
}

export interface PathTerms {
  /** P.1812: Lbfs (Eq. (8)); other methods: P.525 free-space loss over the slant distance. */
  freeSpaceDb: number;
  /** P.1812: Ld50 (Eq. (39) with ae); other diffraction methods: their (median-refraction) loss. */
  diffractionMedianDb: number | null;
  /** P.1812: Ldp (Eq. (41)); other diffraction methods: their loss. */
  diffractionDb: number | null;
  troposcatterDb: number | null;
  ductingDb: number | null;
  /** P.1812: Lb0p, the LoS loss with multipath/focusing for p % (Eq. (10)). */
  lineOfSightDb: number | null;
  /** P.1812: Lbc, the combined loss before location variability (Eq. (63)). */
  combinedDb: number | null;
  /** P.1812: −I(pL/100)·σL added for location variability. */
  locationCorrectionDb: number | null;
}

export interface PathPrediction {
  method: PathMethod;
  basicLossDb: number;
  fieldStrengthDbuvm: number;
  erpDbm: number;
  lineOfSight: boolean;
  fresnelClearanceRatio: number;
  worstClearanceAtKm: number;
  distanceKm: number;
  kFactor: number;
  terms: PathTerms;
  /** Obstacles intruding into 60 % of the first Fresnel zone (worst first, at most 10). */
  obstructions: { distanceKm: number; clearanceM: number; clearanceRatio: number }[];
  /** Every intermediate term of ITU-R P.1812-8 (p1812 only). */
  p1812?: Omit<P1812Detail, 'ducting'> & { ducting: P1812Detail['ducting'] };
  /** Diffracting edges used by knife-edge/deygout (distance from Tx, km). */
  edgesKm?: number[];
  warnings: string[];
}

const ZONE_CODES = { inland: ZONE_INLAND, coastal: ZONE_COASTAL_LAND, sea: ZONE_SEA } as const;

/** Arrays from the request's profile points (validated by pathRequestSchema). */
export function profileArraysFromPoints(points: NonNullable<PathRequest['profile']>): ProfileArrays {
  const n = points.length;
  const out: ProfileArrays = {
    distanceKm: new Float64Array(n),
    groundM: new Float64Array(n),
    clutterM: new Float64Array(n),
    zone: new Uint8Array(n),
  };
  for (let i = 0; i < n; i++) {
    out.distanceKm[i] = points[i].distanceKm;
    out.groundM[i] = points[i].groundM;
    out.clutterM[i] = points[i].clutterM;
    out.zone[i] = ZONE_CODES[points[i].zone];
  }
  return out;
}

export function zoneCode(zone: 'inland' | 'coastal' | 'sea'): number {
  return ZONE_CODES[zone];
}

function finiteOr(value: number, fallback: number): number {
  return Number.isFinite(value) ? value : fallback;
}

/**
 * Runs the requested method over `profile`. `p1812` may be a predictor the caller keeps between
 * calls (its scratch arrays are reused; the answer holds no reference to them), else one is made.
 */
export function predictPath(request: PathRequest, profile: ProfileArrays, p1812Predictor?: P1812Predictor): PathPrediction {
  const warnings: string[] = [];
  const n = profile.distanceKm.length;
  const lengthKm = profile.distanceKm[n - 1] - profile.distanceKm[0];
  const k50 = 157 / (157 - request.refractivity.deltaN); // P.1812-8 Eq. (7a), also used for the geometry
  const aeKm = EARTH_RADIUS_KM * k50;
  // Only line of sight, the worst clearance and the worst 10 obstructions are read below (no per-point arrays).
  const geometry = pathClearance({
    distanceKm: profile.distanceKm,
    groundM: profile.groundM,
    clutterM: profile.clutterM,
    txHeightAglM: request.tx.heightAglM,
    rxHeightAglM: request.rx.heightAglM,
    frequencyMhz: request.frequencyMhz,
    kFactor: k50,
  });
  const frequencyGhz = request.frequencyMhz / 1000;
  const hts = profile.groundM[0] + request.tx.heightAglM;
  const hrs = profile.groundM[n - 1] + request.rx.heightAglM;
  const slantKm = Math.sqrt(lengthKm * lengthKm + ((hts - hrs) / 1000) ** 2);
  const terms: PathTerms = {
    freeSpaceDb: freeSpaceLossDb(slantKm, request.frequencyMhz),
    diffractionMedianDb: null,
    diffractionDb: null,
    troposcatterDb: null,
    ductingDb: null,
    lineOfSightDb: null,
    combinedDb: null,
    locationCorrectionDb: null,
  };
  let basicLossDb: number;
  let p1812: PathPrediction['p1812'];
  let edgesKm: number[] | undefined;

  if (request.method !== 'p1812' && (request.timePercent !== 50 || request.locationPercent !== 50 || request.locationSigmaDb !== 0)) {
    warnings.push(`${request.method} gives a median-condition loss: timePercent, locationPercent and locationSigmaDb are not applied`);
  }

  switch (request.method) {
    case 'p1812': {
      if (lengthKm < 0.25) warnings.push('path shorter than 0.25 km: outside the distance range ITU-R P.1812-8 is defined for');
      for (const [name, end] of [['tx', request.tx], ['rx', request.rx]] as const) {
        if (end.heightAglM < 1) warnings.push(`${name}.heightAglM below 1 m: outside the antenna height range of ITU-R P.1812-8`);
      }
      const result = (p1812Predictor ?? new P1812Predictor()).predict({
        frequencyMhz: request.frequencyMhz,
        timePercent: request.timePercent,
        locationPercent: request.locationPercent,
        locationSigmaDb: request.locationSigmaDb,
        polarisation: request.polarization,
        deltaN: request.refractivity.deltaN,
        n0: request.refractivity.n0,
        txCoastDistanceKm: request.coastDistanceKm.tx,
        rxCoastDistanceKm: request.coastDistanceKm.rx,
        txHeightAglM: request.tx.heightAglM,
        rxHeightAglM: request.rx.heightAglM,
        pathCentreLatDeg: pathCentreLatitudeDeg(request.tx.lat, request.tx.lon, request.rx.lat, request.rx.lon, lengthKm),
        distanceKm: profile.distanceKm,
        heightM: profile.groundM,
        clutterHeightM: profile.clutterM,
        zone: profile.zone,
        erpDbm: request.erpDbm,
      });
      basicLossDb = result.lbDb;
      terms.freeSpaceDb = result.lbfsDb;
      terms.diffractionMedianDb = result.ld50Db;
      terms.diffractionDb = result.ldpDb;
      terms.troposcatterDb = result.lbsDb;
      terms.ductingDb = result.lbaDb;
      terms.lineOfSightDb = result.lb0pDb;
      terms.combinedDb = result.lbcDb;
      terms.locationCorrectionDb = result.locationCorrectionDb;
      p1812 = result;
      break;
    }
    case 'bullington': {
      // ITU-R P.526-16 §4.5.1 over terrain + clutter, earth curvature for the median k-factor.
      const obstacle = new Float64Array(n);
      for (let i = 0; i < n; i++) obstacle[i] = profile.groundM[i] + (i === 0 || i === n - 1 ? 0 : profile.clutterM[i]);
      const rel = new Float64Array(n);
      for (let i = 0; i < n; i++) rel[i] = profile.distanceKm[i] - profile.distanceKm[0];
      const loss = bullingtonLossDb(rel, obstacle, n, hts, hrs, aeKm, 299.792458 / request.frequencyMhz);
      terms.diffractionMedianDb = loss;
      terms.diffractionDb = loss;
      basicLossDb = terms.freeSpaceDb + loss;
      break;
    }
    case 'knife-edge':
    case 'deygout': {
      const obstacle = new Float64Array(n);
      for (let i = 0; i < n; i++) obstacle[i] = profile.groundM[i] + (i === 0 || i === n - 1 ? 0 : profile.clutterM[i]);
      const result = deygoutLossDb(
        profile.distanceKm,
        obstacle,
        request.tx.heightAglM,
        request.rx.heightAglM,
        request.frequencyMhz,
        k50,
        request.method === 'knife-edge' ? 1 : 3,
      );
      terms.diffractionMedianDb = result.lossDb;
      terms.diffractionDb = result.lossDb;
      edgesKm = result.edgeIndices.map((i) => profile.distanceKm[i] - profile.distanceKm[0]);
      basicLossDb = terms.freeSpaceDb + result.lossDb;
      break;
    }
    case 'free-space':
      basicLossDb = terms.freeSpaceDb;
      if (!geometry.lineOfSight) warnings.push('the straight ray is blocked: free-space loss is optimistic on this path');
      break;
  }

  if (geometry.worstClearanceRatio < 0.6 && geometry.lineOfSight) {
    warnings.push(
      `terrain or clutter intrudes into 60 % of the first Fresnel zone at ${geometry.worstDistanceKm.toFixed(2)} km (clearance ratio ${geometry.worstClearanceRatio.toFixed(2)})`,
    );
  }
  return {
    method: request.method,
    basicLossDb,
    fieldStrengthDbuvm: fieldStrengthDbuvm(frequencyGhz, basicLossDb, request.erpDbm), // P.1812-8 Eq. (70) scaled to the e.r.p.
    erpDbm: request.erpDbm,
    lineOfSight: geometry.lineOfSight,
    fresnelClearanceRatio: finiteOr(geometry.worstClearanceRatio, 0),
    worstClearanceAtKm: geometry.worstDistanceKm,
    distanceKm: lengthKm,
    kFactor: k50,
    terms,
    obstructions: geometry.obstructions,
    ...(p1812 ? { p1812 } : {}),
    ...(edgesKm ? { edgesKm } : {}),
    warnings,
  };
}
