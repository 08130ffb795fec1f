// The path part of a link prediction: basic transmission loss between a node
// and a gateway over a terrain profile, by the plan's method (through the
// propagation room's predictPath), plus the geometry each antenna sees
// (bearing and elevation of the path).
// The node is the transmitter (uplink); the profile runs node → gateway.
import { predictPath as predictPropagationPath, zoneCode, type ProfileArrays } from '../propagation/path-prediction.ts';
import { P1812Predictor } from '../propagation/p1812/predict.ts';
import { PATH_METHODS, type PathMethod, type PathRequest } from '../propagation/path-request.ts';
import { bearingsBetween, medianEarthFactor, pathElevationDeg, type Bearings } from './geometry.ts';

export type PropagationMethodId = PathMethod;
export const PROPAGATION_METHODS: readonly PropagationMethodId[] = PATH_METHODS;

/** Lowest antenna height handed to the path methods, m (P.1812-8 covers 1–3000 m; a pit node sits lower). */
export const MIN_PATH_ANTENNA_HEIGHT_M = 1;

export interface PathProfile {
  distanceM: Float64Array;
  groundM: Float64Array;
  /** Representative clutter height at each point, m (null = no clutter layer). */
  clutterHeightM: Float64Array | null;
  /** Bearings node → gateway when the profile already solved the geodesic (else predictPath solves it). */
  bearings?: Bearings;
}

export interface PathEnd {
  lat: number;
  lon: number;
  antennaHeightAglM: number;
}

export interface PathSettings {
  frequencyMhz: number;
  method: PropagationMethodId;
  /** Time percentage for P.1812 (1–50 %); 50 = median. */
  timePercent: number;
  polarization: 'horizontal' | 'vertical';
  deltaN: number;
  n0: number;
  /** Radio-climatic zone applied to every profile point (P.1812 §3). */
  zone: 'inland' | 'coastal' | 'sea';
  /** Distance of each end from the coast, km (P.1812 needs it for ducting). */
  coastDistanceKm: number;
}

export const DEFAULT_PATH_SETTINGS: Omit<PathSettings, 'frequencyMhz'> = {
  method: 'p1812',
  timePercent: 50,
  polarization: 'vertical',
  deltaN: 45,
  n0: 325,
  zone: 'inland',
  coastDistanceKm: 500,
};

export interface PathPrediction {
  method: PropagationMethodId;
  distanceM: number;
  basicLossDb: number;
  freeSpaceLossDb: number;
  /** Basic loss beyond free space (diffraction, clutter, ...), dB. */
  excessLossDb: number;
  lineOfSight: boolean;
  /** Worst clearance of the first Fresnel zone (ratio of its radius; negative = ray blocked). */
  fresnelClearanceRatio: number;
  nodeGroundM: number;
  gatewayGroundM: number;
  /** The node's antenna height above ground as given, m (the spread's §4.8 height factor reads it). */
  nodeAntennaHeightAglM: number;
  /** Representative clutter height at the node, m (0 without a land-cover layer). */
  nodeClutterHeightM: number;
  /** Bearing at the node toward the gateway, degrees from north. */
  nodeAzimuthDeg: number;
  /** Bearing at the gateway toward the node. */
  gatewayAzimuthDeg: number;
  /** Elevation of the direct path at the node toward the gateway, degrees. */
  nodeElevationDeg: number;
  gatewayElevationDeg: number;
  /** The method's own terms (names as the method uses them). */
  terms: Record<string, number>;
  warnings: string[];
}

/**
 * Scratch a caller that predicts many paths keeps between them (a worker thread, the link
 * engine): the P.1812 predictor's arrays are reused instead of allocated per path. Used
 * synchronously within one prediction, so one scratch may serve interleaved async callers.
 */
export interface PathScratch {
  p1812: P1812Predictor;
}

export function newPathScratch(): PathScratch {
  return { p1812: new P1812Predictor() };
}

/** Predicts the path loss of one node → gateway path over `profile`. */
export function predictPath(profile: PathProfile, settings: PathSettings, node: PathEnd, gateway: PathEnd, scratch?: PathScratch): PathPrediction {
  const count = profile.distanceM.length;
  if (count < 3) throw new RangeError('profile: needs at least 3 points');
  const warnings: string[] = [];
  const bearings = profile.bearings ?? bearingsBetween(node.lat, node.lon, gateway.lat, gateway.lon);
  const nodeHeightM = Math.max(node.antennaHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M);
  const gatewayHeightM = Math.max(gateway.antennaHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M);
  if (node.antennaHeightAglM < MIN_PATH_ANTENNA_HEIGHT_M) {
    warnings.push(`node antenna ${node.antennaHeightAglM} m above ground is taken as ${MIN_PATH_ANTENNA_HEIGHT_M} m for the path; the environment loss covers the rest`);
  }
  const arrays: ProfileArrays = {
    distanceKm: new Float64Array(count),
    groundM: profile.groundM,
    clutterM: profile.clutterHeightM ?? new Float64Array(count),
    zone: new Uint8Array(count).fill(zoneCode(settings.zone)),
  };
  for (let i = 0; i < count; i++) arrays.distanceKm[i] = profile.distanceM[i] / 1000;
  const request: PathRequest = {
    method: settings.method,
    frequencyMhz: settings.frequencyMhz,
    timePercent: settings.timePercent,
    // Location variability is applied by the link budget (delivery probability), not here.
    locationPercent: 50,
    locationSigmaDb: 0,
    polarization: settings.polarization,
    refractivity: { deltaN: settings.deltaN, n0: settings.n0 },
    coastDistanceKm: { tx: settings.coastDistanceKm, rx: settings.coastDistanceKm },
    erpDbm: 60,
    tx: { lat: node.lat, lon: node.lon, heightAglM: nodeHeightM },
    rx: { lat: gateway.lat, lon: gateway.lon, heightAglM: gatewayHeightM },
    terrainZone: settings.zone,
  };
  const result = predictPropagationPath(request, arrays, scratch?.p1812);
  warnings.push(...result.warnings);
  const terms: Record<string, number> = {};
  for (const key in result.terms) {
    const value = result.terms[key as keyof typeof result.terms];
    if (typeof value === 'number') terms[key] = value;
  }
  return {
    ...pathAtPlace({
      method: settings.method,
      basicLossDb: result.basicLossDb,
      freeSpaceLossDb: result.terms.freeSpaceDb,
      distanceM: result.distanceKm * 1000,
      nodeGroundM: profile.groundM[0],
      gatewayGroundM: profile.groundM[count - 1],
      nodeAntennaHeightAglM: node.antennaHeightAglM,
      gatewayAntennaHeightAglM: gateway.antennaHeightAglM,
      nodeAzimuthDeg: bearings.forwardAzimuthDeg,
      gatewayAzimuthDeg: bearings.backAzimuthDeg,
      deltaN: settings.deltaN,
      nodeClutterHeightM: profile.clutterHeightM ? profile.clutterHeightM[0] : 0,
    }),
    lineOfSight: result.lineOfSight,
    fresnelClearanceRatio: result.fresnelClearanceRatio,
    terms,
    warnings,
  };
}

export interface PlaceInput {
  method: PropagationMethodId;
  basicLossDb: number;
  freeSpaceLossDb: number;
  distanceM: number;
  nodeGroundM: number;
  gatewayGroundM: number;
  nodeAntennaHeightAglM: number;
  gatewayAntennaHeightAglM: number;
  nodeAzimuthDeg: number;
  gatewayAzimuthDeg: number;
  deltaN: number;
  nodeClutterHeightM: number;
}

/**
 * The path as the link budget sees it, from a loss and the geometry of the two ends: what
 * predictPath returns for a profile, and what a coverage cell is (loss from the area sweep,
 * geometry of the cell), so both go through the same budget. Elevations over the effective
 * earth of k50 from ΔN (P.1812-8 Eq. (5)), antenna heights clamped as for the path methods.
 */
export function pathAtPlace(input: PlaceInput): PathPrediction {
  const nodeHeightM = Math.max(input.nodeAntennaHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M);
  const gatewayHeightM = Math.max(input.gatewayAntennaHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M);
  const earthFactor = medianEarthFactor(input.deltaN);
  const distanceM = Math.max(input.distanceM, 1);
  return {
    method: input.method,
    distanceM,
    basicLossDb: input.basicLossDb,
    freeSpaceLossDb: input.freeSpaceLossDb,
    excessLossDb: input.basicLossDb - input.freeSpaceLossDb,
    lineOfSight: false,
    fresnelClearanceRatio: Number.NaN,
    nodeGroundM: input.nodeGroundM,
    gatewayGroundM: input.gatewayGroundM,
    nodeAntennaHeightAglM: input.nodeAntennaHeightAglM,
    nodeClutterHeightM: input.nodeClutterHeightM,
    nodeAzimuthDeg: input.nodeAzimuthDeg,
    gatewayAzimuthDeg: input.gatewayAzimuthDeg,
    nodeElevationDeg: pathElevationDeg(input.nodeGroundM + nodeHeightM, input.gatewayGroundM + gatewayHeightM, distanceM, earthFactor),
    gatewayElevationDeg: pathElevationDeg(input.gatewayGroundM + gatewayHeightM, input.nodeGroundM + nodeHeightM, distanceM, earthFactor),
    terms: {},
    warnings: [],
  };
}
