// The installer's view of one link: the profile with the straight ray, the
// first Fresnel zone and the obstructions (from the propagation room's path
// geometry), the expected readings as a 10th–90th percentile range, and the
// cautions that go with work on masts and near antennas.
import { analysePathGeometry } from '../propagation/path-geometry.ts';
import { WORK_AT_HEIGHT_CAUTIONS } from '../radio/masts.ts';
import { medianEarthFactor } from './geometry.ts';
import type { LinkResult } from './link.ts';
import { MIN_PATH_ANTENNA_HEIGHT_M, type PathProfile } from './path.ts';

/** z of the 90th percentile of the standard normal (normal tables): 1.2816. */
const Z90 = 1.2815516;

export interface CheckPoint {
  distanceM: number;
  lat: number | null;
  lon: number | null;
  groundM: number;
  /** Ground + clutter height (the top of trees/buildings), m. */
  clutterTopM: number;
  /** Straight ray node → gateway on the chart's flat baseline, m. */
  rayM: number;
  fresnelUpperM: number;
  fresnelLowerM: number;
  /** Ground + clutter + earth bulge, the surface the ray must clear, m. */
  obstacleM: number;
}

export interface ExpectedRange {
  p10: number;
  p50: number;
  p90: number;
}

export interface LinkCheck {
  gatewayId: string;
  lineOfSight: boolean;
  worstClearanceRatio: number | null;
  worstClearanceAtM: number | null;
  kFactor: number;
  points: CheckPoint[];
  obstructions: Array<{ distanceM: number; obstacleM: number; clearanceM: number; clearanceRatio: number }>;
  expected: { rssiDbm: ExpectedRange; snrDb: ExpectedRange; sigmaDb: number; sf: number; note: string };
}

/** Expected range of a normally spread level: median ± 1.2816·σ. */
export function percentileRange(medianValue: number, sigmaDb: number): ExpectedRange {
  return { p10: medianValue - Z90 * sigmaDb, p50: medianValue, p90: medianValue + Z90 * sigmaDb };
}

/** The check view of one link over its profile; at most `maxPoints` chart points (evenly thinned, obstructions kept). */
export function linkCheck(
  profile: PathProfile & { lat: Float64Array | null; lon: Float64Array | null },
  frequencyMhz: number,
  deltaN: number,
  nodeHeightAglM: number,
  gatewayHeightAglM: number,
  link: LinkResult,
  maxPoints = 600,
): LinkCheck {
  const n = profile.distanceM.length;
  const distanceKm = new Float64Array(n);
  for (let i = 0; i < n; i++) distanceKm[i] = profile.distanceM[i] / 1000;
  const kFactor = medianEarthFactor(deltaN);
  const geometry = analysePathGeometry({
    distanceKm,
    groundM: profile.groundM,
    clutterM: profile.clutterHeightM ?? undefined,
    txHeightAglM: Math.max(nodeHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M),
    rxHeightAglM: Math.max(gatewayHeightAglM, MIN_PATH_ANTENNA_HEIGHT_M),
    frequencyMhz,
    kFactor,
  });
  const keep = new Set<number>([0, n - 1]);
  const stride = Math.max(1, Math.ceil(n / maxPoints));
  for (let i = 0; i < n; i += stride) keep.add(i);
  for (const obstruction of geometry.obstructions.slice(0, 50)) keep.add(obstruction.index);
  const points = [...keep]
    .sort((a, b) => a - b)
    .map((i) => ({
      distanceM: profile.distanceM[i],
      lat: profile.lat ? profile.lat[i] : null,
      lon: profile.lon ? profile.lon[i] : null,
      groundM: profile.groundM[i],
      clutterTopM: profile.groundM[i] + (profile.clutterHeightM ? profile.clutterHeightM[i] : 0),
      rayM: geometry.rayM[i],
      fresnelUpperM: geometry.fresnelUpperM[i],
      fresnelLowerM: geometry.fresnelLowerM[i],
      obstacleM: geometry.obstacleM[i],
    }));
  return {
    gatewayId: link.gatewayId,
    lineOfSight: geometry.lineOfSight,
    worstClearanceRatio: Number.isFinite(geometry.worstClearanceRatio) ? geometry.worstClearanceRatio : null,
    worstClearanceAtM: geometry.worstIndex >= 0 ? geometry.worstDistanceKm * 1000 : null,
    kFactor,
    points,
    obstructions: geometry.obstructions.slice(0, 20).map((o) => ({ distanceM: o.distanceKm * 1000, obstacleM: o.obstacleM, clearanceM: o.clearanceM, clearanceRatio: o.clearanceRatio })),
    expected: {
      rssiDbm: percentileRange(link.rssiDbm, link.sigmaDb),
      snrDb: percentileRange(link.snrDb, link.sigmaDb),
      sigmaDb: link.sigmaDb,
      sf: link.usedSf,
      note: 'range across locations near the node (10th–90th percentile of a log-normal spread); LoRa radios report SNR only up to about +10 dB, so strong links read lower than predicted',
    },
  };
}

/**
 * The general caution list (printed reports, the visit sheet's "all cautions"): the work-at-
 * height list, electrical codes and the band plan's own notes, each said once (the work-at-
 * height list already has grounding and weather; the band plan has RF exposure). What one
 * job needs is `fittedCautions` (server/planning/cautions.ts). Common practice; local codes win.
 */
export function installCautions(bandCautions: readonly string[]): string[] {
  const lines = [
    ...WORK_AT_HEIGHT_CAUTIONS,
    'Electrical work inside buildings and meter pits follows local electrical codes; use a licensed electrician where the code requires one.',
    ...bandCautions,
    'These are planning figures: local codes, regulators and licensed practice take precedence.',
  ];
  return [...new Set(lines)];
}
