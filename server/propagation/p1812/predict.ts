// ITU-R P.1812-8 path prediction, Annex 1 §4: ties the sections together and
// returns every intermediate term. Pure: plain typed arrays in, plain numbers out.
import { addClutterToProfile } from './clutter.ts';
import { combineMechanisms, emptyCombinationTerms } from './combination.ts';
import { deltaBullington, diffractionLossForTimeDb, interpolationFactorFi, type DeltaBullingtonTerms } from './diffraction.ts';
import { ductingLoss, emptyDuctingTerms, type DuctingTerms } from './ducting.ts';
import { focusingCorrectionDb, lbfsDb } from './line-of-sight.ts';
import {
  basicTransmissionLossDb,
  fieldStrength1kwDbuvm,
  fieldStrengthDbuvm,
  locationCorrectionDb,
} from './location-variability.ts';
import { analyseProfile, emptyGeometry } from './profile-analysis.ts';
import {
  BETA_EFFECTIVE_RADIUS_KM,
  beta0Percent,
  medianEffectiveRadiusKm,
  tauOfInlandLength,
  zoneStatistics,
} from './radio-climate.ts';
import { troposcatterLossDb } from './troposcatter.ts';
import type { P1812Input, P1812Result } from './types.ts';

export interface P1812Detail extends P1812Result {
  ducting: DuctingTerms;
}

function emptyDelta(): DeltaBullingtonTerms {
  return { lbullaDb: 0, lbullsDb: 0, ldsphDb: 0, ldDb: 0 };
}

/** Cheap checks at the door (the CLI/API schemas give the friendlier messages first). */
function checkInput(input: P1812Input, count: number): void {
  if (count < 3) throw new RangeError(`distanceKm: a profile needs at least 3 points (got ${count})`);
  for (const [name, array] of [
    ['heightM', input.heightM],
    ['clutterHeightM', input.clutterHeightM],
    ['zone', input.zone],
  ] as const) {
    if (array.length !== count) throw new RangeError(`${name}: has ${array.length} entries, distanceKm has ${count}`);
  }
  if (!(input.frequencyMhz >= 30 && input.frequencyMhz <= 6000)) throw new RangeError('frequencyMhz: must be within 30–6000 MHz');
  if (!(input.timePercent >= 1 && input.timePercent <= 50)) throw new RangeError('timePercent: must be within 1–50 %');
  if (!(input.locationPercent >= 1 && input.locationPercent <= 99)) throw new RangeError('locationPercent: must be within 1–99 %');
  if (!(input.deltaN > 0 && input.deltaN < 157)) throw new RangeError('deltaN: must be within 0–157 N-units/km');
  for (let i = 1; i < count; i++) {
    if (!(input.distanceKm[i] > input.distanceKm[i - 1])) throw new RangeError(`distanceKm[${i}]: distances must increase`);
  }
}

/**
 * A reusable P.1812-8 predictor: keeps its scratch arrays between calls so that
 * repeated predictions (coverage rasters) allocate nothing per profile point.
 * Inputs are assumed valid (see the CLI/API schemas); distances must increase.
 */
export class P1812Predictor {
  private distance = new Float64Array(0);
  private surface = new Float64Array(0);
  private readonly geometry = emptyGeometry();
  private readonly delta50 = emptyDelta();
  private readonly deltaBeta = emptyDelta();
  private readonly ductingTerms = emptyDuctingTerms();
  private readonly combination = emptyCombinationTerms();

  private ensureCapacity(count: number): void {
    if (this.distance.length < count) {
      this.distance = new Float64Array(count);
      this.surface = new Float64Array(count);
    }
  }

  predict(input: P1812Input): P1812Detail {
    const count = input.distanceKm.length;
    checkInput(input, count);
    this.ensureCapacity(count);
    const d = this.distance;
    const d0 = input.distanceKm[0];
    for (let i = 0; i < count; i++) d[i] = input.distanceKm[i] - d0; // profile measured from the Tx
    const h = input.heightM;
    const f = input.frequencyMhz / 1000;
    const p = input.timePercent;
    const wavelengthM = 0.2998 / f;
    const dist = d[count - 1];

    // §3: terminal heights above sea level, effective earth radii, zone statistics, β0.
    const hts = h[0] + input.txHeightAglM;
    const hrs = h[count - 1] + input.rxHeightAglM;
    const ae = medianEffectiveRadiusKm(input.deltaN);
    const zones = zoneStatistics(d, input.zone, count);
    const b0 = beta0Percent(input.pathCentreLatDeg, zones.dtmKm, zones.dlmKm);

    // Attachment 1: profile analysis on the bare terrain.
    const g = analyseProfile(d, h, count, hts, hrs, input.txHeightAglM, input.rxHeightAglM, ae, wavelengthM, this.geometry);
    const surface = addClutterToProfile(h, input.clutterHeightM, count, this.surface);

    // §4.2: line of sight with multipath/focusing, Eqs (8)–(11).
    const lbfs = lbfsDb(f, dist, hts, hrs);
    const lb0p = lbfs + focusingCorrectionDb(p, g.dltKm, g.dlrKm);
    const lb0b = lbfs + focusingCorrectionDb(b0, g.dltKm, g.dlrKm);

    // §4.3: delta-Bullington diffraction for ae and aβ, Eq. (37) terminal heights.
    const htsDiff = hts - g.hstdM;
    const hrsDiff = hrs - g.hsrdM;
    const pol = input.polarisation;
    deltaBullington(d, surface, count, hts, hrs, htsDiff, hrsDiff, ae, f, zones.omega, pol, this.delta50);
    deltaBullington(d, surface, count, hts, hrs, htsDiff, hrsDiff, BETA_EFFECTIVE_RADIUS_KM, f, zones.omega, pol, this.deltaBeta);
    const ld50 = this.delta50.ldDb;
    const ldBeta = this.deltaBeta.ldDb;
    const fi = interpolationFactorFi(p, b0);
    const ldp = diffractionLossForTimeDb(ld50, ldBeta, fi);
    const lbd50 = lbfs + ld50; // Eq. (42)
    const lbd = lb0p + ldp; // Eq. (43)

    // §4.4 troposcatter, §4.5 ducting/layer reflection.
    const lbs = troposcatterLossDb(f, dist, g.thetaMrad, input.n0, p);
    const duct = ductingLoss(
      {
        frequencyGhz: f,
        timePercent: p,
        distanceKm: dist,
        dltKm: g.dltKm,
        dlrKm: g.dlrKm,
        thetaTMrad: g.thetaTMrad,
        thetaRMrad: g.thetaRMrad,
        htsM: hts,
        hrsM: hrs,
        hteM: g.hteM,
        hreM: g.hreM,
        hmM: g.hmM,
        aeKm: ae,
        beta0Percent: b0,
        tau: tauOfInlandLength(zones.dlmKm),
        omega: zones.omega,
        txCoastDistanceKm: input.txCoastDistanceKm,
        rxCoastDistanceKm: input.rxCoastDistanceKm,
      },
      this.ductingTerms,
    );

    // §4.6 combination, §4.8 location variability, Eq. (69); Eq. (70) field strength.
    const c = combineMechanisms(
      {
        timePercent: p,
        beta0Percent: b0,
        omega: zones.omega,
        distanceKm: dist,
        thetaMrad: g.thetaMrad,
        fi,
        lb0pDb: lb0p,
        lb0bDb: lb0b,
        ldpDb: ldp,
        lbd50Db: lbd50,
        lbdDb: lbd,
        lbaDb: duct.lbaDb,
        lbsDb: lbs,
      },
      this.combination,
    );
    const loc = locationCorrectionDb(input.locationPercent, input.locationSigmaDb);
    const lb = basicTransmissionLossDb(lb0p, c.lbcDb, loc);
    const ep1kw = fieldStrength1kwDbuvm(f, lb);

    return {
      distanceKm: dist,
      transhorizon: g.transhorizon,
      dltKm: g.dltKm,
      dlrKm: g.dlrKm,
      thetaTMrad: g.thetaTMrad,
      thetaRMrad: g.thetaRMrad,
      thetaMrad: g.thetaMrad,
      htsM: hts,
      hrsM: hrs,
      omega: zones.omega,
      dtmKm: zones.dtmKm,
      dlmKm: zones.dlmKm,
      beta0Percent: b0,
      aeKm: ae,
      hstM: g.hstM,
      hsrM: g.hsrM,
      hstDuctM: g.hstDuctM,
      hsrDuctM: g.hsrDuctM,
      hstdM: g.hstdM,
      hsrdM: g.hsrdM,
      htsDiffM: htsDiff,
      hrsDiffM: hrsDiff,
      hteM: g.hteM,
      hreM: g.hreM,
      hmM: g.hmM,
      lbfsDb: lbfs,
      lb0pDb: lb0p,
      lb0bDb: lb0b,
      lbullaDb: this.delta50.lbullaDb,
      lbullsDb: this.delta50.lbullsDb,
      ldsphDb: this.delta50.ldsphDb,
      lbullaBetaDb: this.deltaBeta.lbullaDb,
      lbullsBetaDb: this.deltaBeta.lbullsDb,
      ldsphBetaDb: this.deltaBeta.ldsphDb,
      ld50Db: ld50,
      ldBetaDb: ldBeta,
      ldpDb: ldp,
      fi,
      lbd50Db: lbd50,
      lbdDb: lbd,
      lbsDb: lbs,
      lbaDb: duct.lbaDb,
      fj: c.fj,
      fk: c.fk,
      lminb0pDb: c.lminb0pDb,
      lminbapDb: c.lminbapDb,
      lbdaDb: c.lbdaDb,
      lbamDb: c.lbamDb,
      lbcDb: c.lbcDb,
      locationCorrectionDb: loc,
      lbDb: lb,
      ep1kwDbuvm: ep1kw,
      epDbuvm: input.erpDbm === undefined ? ep1kw : fieldStrengthDbuvm(f, lb, input.erpDbm),
      ducting: { ...duct },
    };
  }
}

/** One P.1812-8 prediction (allocates its own scratch; use P1812Predictor for many). */
export function predictP1812(input: P1812Input): P1812Detail {
  return new P1812Predictor().predict(input);
}
