// The `full` mode's path method: ITU-R P.1812-8 (the propagation room's
// P1812Predictor) on each ray-sample profile, median time and location
// (p = 50 %, pL = 50 %), inland zone, vertical polarisation unless told
// otherwise. Built inside each worker thread from plain options.
import { freeSpaceLossDb } from '../propagation/free-space.ts';
import { P1812Predictor } from '../propagation/p1812/predict.ts';
import type { P1812Input, Polarisation } from '../propagation/p1812/types.ts';
import type { FullModel, RayProfile } from './full.ts';

export interface P1812Options {
  /** Latitude of the gateway (degrees), used as the path-centre latitude (paths are ≤ 100 km). */
  siteLatDeg: number;
  timePercent?: number;
  polarisation?: Polarisation;
  /** ΔN (N-units/km), P.1812 default 45. */
  deltaN?: number;
  /** N0 (N-units), default 325. */
  n0?: number;
  /** Evaluate every m-th ray sample (default 1); the excess loss is interpolated in between. */
  everySamples?: number;
}

export function p1812FullModel(request: { frequencyMhz: number; heightAglM: number; targetHeightAglM: number }, options: P1812Options): FullModel {
  const predictor = new P1812Predictor();
  let zones = new Uint8Array(0);
  return {
    everySamples: options.everySamples,
    lossDb: (profile: RayProfile, count: number) => {
      // Too short for a profile method (one cell from the mast): free space is all there is.
      if (count < 3) return freeSpaceLossDb(profile.distanceKm[count - 1], request.frequencyMhz);
      if (zones.length < count) zones = new Uint8Array(profile.distanceKm.length).fill(4);
      const input: P1812Input = {
        frequencyMhz: request.frequencyMhz,
        timePercent: options.timePercent ?? 50,
        locationPercent: 50,
        locationSigmaDb: 0,
        polarisation: options.polarisation ?? 'vertical',
        deltaN: options.deltaN ?? 45,
        n0: options.n0 ?? 325,
        txCoastDistanceKm: 500,
        rxCoastDistanceKm: 500,
        txHeightAglM: request.heightAglM,
        rxHeightAglM: request.targetHeightAglM,
        pathCentreLatDeg: options.siteLatDeg,
        distanceKm: profile.distanceKm.subarray(0, count),
        heightM: profile.heightM.subarray(0, count),
        clutterHeightM: profile.clutterHeightM.subarray(0, count),
        zone: zones.subarray(0, count),
      };
      return predictor.predict(input).lbDb;
    },
  };
}
