// The path part of a link prediction: basic transmission loss between a node
// and a gateway over a terrain profile, by the plan's method, plus the
// geometry each antenna sees (bearing and elevation of the path).
// The node is the transmitter (uplink); the profile runs node → gateway.
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { bullingtonLossDb } from '../propagation/bullington.ts';
import { P1812Predictor, pathCentreLatitudeDeg, ZONE_COASTAL_LAND, ZONE_INLAND, ZONE_SEA } from '../propagation/p1812/index.ts';
import { bearingsBetween, EARTH_RADIUS_KM, medianEarthFactor, pathElevationDeg } from './geometry.ts';

export type PropagationMethodId = 'p1812' | 'bullington' | 'free-space';
export const PROPAGATION_METHODS: readonly PropagationMethodId[] = ['p1812', 'bullington', 'free-space'];

/** A terrain profile from the node (index 0) to the gateway (last index). */
export interface PathProfile {
  distanceM: Float64Array;
  groundM: Float64Array;
  /** Representative clutter height at each point, m (null = no clutter layer). */
  clutterHeightM: Float64Array | null;
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
  nodeGroundM: number;
  gatewayGroundM: number;
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

/** Predicts the path loss of one node → gateway path over `profile`. */
export function predictPath(profile: PathProfile, settings: PathSettings, node: PathEnd, gateway: PathEnd, predictor?: P1812Predictor): PathPrediction {
  const count = profile.distanceM.length;
  if (count < 2) throw new RangeError('profile: needs at least 2 points');
  const warnings: string[] = [];
  const bearings = bearingsBetween(node.lat, node.lon, gateway.lat, gateway.lon);
  // The profile's own length is the path length (the terrain room measures it along the
  // geodesic); the bare geodesic only serves when a profile has no extent.
  const profileLengthM = profile.distanceM[count - 1] - profile.distanceM[0];
  const distanceM = Math.max(profileLengthM > 0 ? profileLengthM : bearings.distanceM, 1);
  const nodeGroundM = profile.groundM[0];
  const gatewayGroundM = profile.groundM[count - 1];
  const nodeAmslM = nodeGroundM + node.antennaHeightAglM;
  const gatewayAmslM = gatewayGroundM + gateway.antennaHeightAglM;
  const earthFactor = medianEarthFactor(settings.deltaN);
  const effectiveRadiusKm = earthFactor * EARTH_RADIUS_KM;
  const wavelengthM = 299.792458 / settings.frequencyMhz;
  const distanceKm = distanceM / 1000;
  const fsLossDb = freeSpaceLossDb(distanceKm, settings.frequencyMhz);
  const lineOfSight = count <= 2 || clearOfTerrain(profile, nodeAmslM, gatewayAmslM, effectiveRadiusKm);
  let basicLossDb: number;
  let terms: Record<string, number>;
  switch (settings.method) {
    case 'free-space':
      basicLossDb = fsLossDb;
      terms = { freeSpaceDb: fsLossDb };
      break;
    case 'bullington': {
      // ITU-R P.526-16 §4.5.1: Lb = Lbf (P.525) + Bullington diffraction over the profile,
      // with the clutter tops (where loaded) as part of the obstacles.
      const { distanceKmArr, obstacleM } = obstacleArrays(profile);
      const diffractionDb = count > 2 ? bullingtonLossDb(distanceKmArr, obstacleM, count, nodeAmslM, gatewayAmslM, effectiveRadiusKm, wavelengthM) : 0;
      basicLossDb = fsLossDb + diffractionDb;
      terms = { freeSpaceDb: fsLossDb, diffractionDb };
      break;
    }
    case 'p1812':
      ({ basicLossDb, terms } = p1812PathLoss(profile, settings, node, gateway, predictor ?? new P1812Predictor()));
      break;
    default:
      throw new RangeError(`method: must be one of ${PROPAGATION_METHODS.join(', ')}`);
  }
  return {
    method: settings.method,
    distanceM,
    basicLossDb,
    freeSpaceLossDb: fsLossDb,
    excessLossDb: basicLossDb - fsLossDb,
    lineOfSight,
    nodeGroundM,
    gatewayGroundM,
    nodeAzimuthDeg: bearings.forwardAzimuthDeg,
    gatewayAzimuthDeg: bearings.backAzimuthDeg,
    nodeElevationDeg: pathElevationDeg(nodeAmslM, gatewayAmslM, distanceM, earthFactor),
    gatewayElevationDeg: pathElevationDeg(gatewayAmslM, nodeAmslM, distanceM, earthFactor),
    terms,
    warnings,
  };
}

/** Distances in km and obstacle tops (ground + clutter) for the Bullington construction. */
function obstacleArrays(profile: PathProfile): { distanceKmArr: Float64Array; obstacleM: Float64Array } {
  const count = profile.distanceM.length;
  const distanceKmArr = new Float64Array(count);
  const obstacleM = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    distanceKmArr[i] = profile.distanceM[i] / 1000;
    const clutter = profile.clutterHeightM && i > 0 && i < count - 1 ? profile.clutterHeightM[i] : 0;
    obstacleM[i] = profile.groundM[i] + clutter;
  }
  return { distanceKmArr, obstacleM };
}

/** Whether the straight ray clears every intermediate ground/clutter point (earth bulge included). */
function clearOfTerrain(profile: PathProfile, nodeAmslM: number, gatewayAmslM: number, effectiveRadiusKm: number): boolean {
  const count = profile.distanceM.length;
  const totalM = profile.distanceM[count - 1] - profile.distanceM[0];
  const radiusM = effectiveRadiusKm * 1000;
  for (let i = 1; i < count - 1; i++) {
    const d1 = profile.distanceM[i] - profile.distanceM[0];
    const d2 = totalM - d1;
    const rayM = nodeAmslM + ((gatewayAmslM - nodeAmslM) * d1) / totalM;
    const bulgeM = (d1 * d2) / (2 * radiusM);
    const clutter = profile.clutterHeightM ? profile.clutterHeightM[i] : 0;
    if (profile.groundM[i] + clutter + bulgeM > rayM) return false;
  }
  return true;
}

/** P.1812-8 median basic loss; location variability is applied by the caller (σ = 0, pL = 50 % here). */
function p1812PathLoss(
  profile: PathProfile,
  settings: PathSettings,
  node: PathEnd,
  gateway: PathEnd,
  predictor: P1812Predictor,
): { basicLossDb: number; terms: Record<string, number> } {
  const count = profile.distanceM.length;
  if (count < 3) throw new RangeError('profile: P.1812 needs at least 3 points');
  if (settings.frequencyMhz < 30 || settings.frequencyMhz > 6000) throw new RangeError('frequencyMhz: P.1812 covers 30–6000 MHz');
  const distanceKm = new Float64Array(count);
  for (let i = 0; i < count; i++) distanceKm[i] = profile.distanceM[i] / 1000;
  const zoneCode = settings.zone === 'sea' ? ZONE_SEA : settings.zone === 'coastal' ? ZONE_COASTAL_LAND : ZONE_INLAND;
  const totalKm = distanceKm[count - 1] - distanceKm[0];
  const result = predictor.predict({
    frequencyMhz: settings.frequencyMhz,
    timePercent: settings.timePercent,
    locationPercent: 50,
    locationSigmaDb: 0,
    polarisation: settings.polarization,
    deltaN: settings.deltaN,
    n0: settings.n0,
    txCoastDistanceKm: settings.coastDistanceKm,
    rxCoastDistanceKm: settings.coastDistanceKm,
    txHeightAglM: node.antennaHeightAglM,
    rxHeightAglM: gateway.antennaHeightAglM,
    pathCentreLatDeg: pathCentreLatitudeDeg(node.lat, node.lon, gateway.lat, gateway.lon, totalKm),
    distanceKm,
    heightM: profile.groundM,
    clutterHeightM: profile.clutterHeightM ?? new Float64Array(count),
    zone: new Uint8Array(count).fill(zoneCode),
  });
  return {
    basicLossDb: result.lbDb,
    terms: {
      freeSpaceDb: result.lbfsDb,
      lb0pDb: result.lb0pDb,
      diffractionMedianDb: result.ld50Db,
      diffractionDb: result.ldpDb,
      troposcatterDb: result.lbsDb,
      ductingDb: result.lbaDb,
      lbcDb: result.lbcDb,
    },
  };
}
