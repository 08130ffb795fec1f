// Path profile analysis, ITU-R P.1812-8 Attachment 1 to Annex 1:
// horizon elevation angles and distances (§5.1.1–5.1.3, Eqs (76)–(82)),
// the smooth-earth surface (Eqs (83)–(86)), the smooth-earth heights for the
// diffraction model (Eqs (87)–(89)) and for ducting (Eqs (90)–(92)), and the
// terrain roughness hm (Eq. (93)). Uses the bare terrain heights; clutter is
// added only for the Bullington construction (see clutter.ts).

export interface ProfileGeometry {
  distanceKm: number;
  transhorizon: boolean;
  /** Index of the Tx and Rx horizon points (for LoS, the point of highest ν). */
  txHorizonIndex: number;
  rxHorizonIndex: number;
  dltKm: number;
  dlrKm: number;
  thetaTMrad: number;
  thetaRMrad: number;
  thetaMrad: number;
  hstM: number;
  hsrM: number;
  hstdM: number;
  hsrdM: number;
  hstDuctM: number;
  hsrDuctM: number;
  hteM: number;
  hreM: number;
  hmM: number;
}

export function emptyGeometry(): ProfileGeometry {
  return {
    distanceKm: 0,
    transhorizon: false,
    txHorizonIndex: 0,
    rxHorizonIndex: 0,
    dltKm: 0,
    dlrKm: 0,
    thetaTMrad: 0,
    thetaRMrad: 0,
    thetaMrad: 0,
    hstM: 0,
    hsrM: 0,
    hstdM: 0,
    hsrdM: 0,
    hstDuctM: 0,
    hsrDuctM: 0,
    hteM: 0,
    hreM: 0,
    hmM: 0,
  };
}

/**
 * Fills `out` with the profile parameters. `htsM`/`hrsM` are the antenna heights above sea level,
 * `aeKm` the median effective earth radius and `wavelengthM` the wavelength (for the LoS ν of Eq. (78)).
 */
export function analyseProfile(
  d: Float64Array,
  h: Float64Array,
  count: number,
  htsM: number,
  hrsM: number,
  txHeightAglM: number,
  rxHeightAglM: number,
  aeKm: number,
  wavelengthM: number,
  out: ProfileGeometry,
): ProfileGeometry {
  const n = count;
  const dist = d[n - 1];
  out.distanceKm = dist;
  const halfCurv = 1 / (2 * aeKm);

  // Eq. (76): highest elevation angle from the transmitter to an intermediate point (mrad).
  let thetaMax = -Infinity;
  let it = 1;
  for (let i = 1; i < n - 1; i++) {
    const t = 1000 * Math.atan((h[i] - htsM) / (1000 * d[i]) - d[i] * halfCurv);
    if (t > thetaMax) {
      thetaMax = t;
      it = i;
    }
  }
  // Eq. (77): elevation angle to the receiver.
  const thetaTd = 1000 * Math.atan((hrsM - htsM) / (1000 * dist) - dist * halfCurv);
  const transhorizon = thetaMax > thetaTd;
  out.transhorizon = transhorizon;

  if (transhorizon) {
    out.thetaTMrad = thetaMax;
    out.txHorizonIndex = it;
    out.dltKm = d[it];
    // Eq. (79): highest elevation angle from the receiver.
    let thetaRMax = -Infinity;
    let ir = n - 2;
    for (let i = 1; i < n - 1; i++) {
      const dr = dist - d[i];
      const t = 1000 * Math.atan((h[i] - hrsM) / (1000 * dr) - dr * halfCurv);
      if (t > thetaRMax) {
        thetaRMax = t;
        ir = i;
      }
    }
    out.thetaRMrad = thetaRMax;
    out.rxHorizonIndex = ir;
    out.dlrKm = dist - d[ir];
  } else {
    out.thetaTMrad = thetaTd;
    // Eq. (78): for a LoS path the horizon distance is that of the highest diffraction parameter ν.
    let vMax = -Infinity;
    let iv = 1;
    for (let i = 1; i < n - 1; i++) {
      const di = d[i];
      const v =
        (h[i] + 500 * di * (dist - di) / aeKm - (htsM * (dist - di) + hrsM * di) / dist) *
        Math.sqrt((0.002 * dist) / (wavelengthM * di * (dist - di)));
      if (v > vMax) {
        vMax = v;
        iv = i;
      }
    }
    out.txHorizonIndex = iv;
    out.rxHorizonIndex = iv;
    out.dltKm = d[iv];
    // Eq. (80)–(81a): angle to the transmitter; dlr = d − dlt.
    out.thetaRMrad = 1000 * Math.atan((htsM - hrsM) / (1000 * dist) - dist * halfCurv);
    out.dlrKm = dist - out.dltKm;
  }
  // Eq. (82): path angular distance (mrad).
  out.thetaMrad = (1000 * dist) / aeKm + out.thetaTMrad + out.thetaRMrad;

  // Eqs (83)–(86): least-squares smooth-earth surface through the terrain.
  let v1 = 0;
  let v2 = 0;
  for (let i = 1; i < n; i++) {
    const step = d[i] - d[i - 1];
    v1 += step * (h[i] + h[i - 1]);
    v2 += step * (h[i] * (2 * d[i] + d[i - 1]) + h[i - 1] * (d[i] + 2 * d[i - 1]));
  }
  const hst = (2 * v1 * dist - v2) / (dist * dist);
  const hsr = (v2 - v1 * dist) / (dist * dist);
  out.hstM = hst;
  out.hsrM = hsr;

  // Eqs (87)–(89): smooth-earth heights for the diffraction model, lowered under obstructions.
  let hobs = -Infinity;
  let alphaObt = -Infinity;
  let alphaObr = -Infinity;
  for (let i = 1; i < n - 1; i++) {
    const hi = h[i] - (htsM * (dist - d[i]) + hrsM * d[i]) / dist;
    if (hi > hobs) hobs = hi;
    const at = hi / d[i];
    if (at > alphaObt) alphaObt = at;
    const ar = hi / (dist - d[i]);
    if (ar > alphaObr) alphaObr = ar;
  }
  let hstp = hst;
  let hsrp = hsr;
  if (hobs > 0) {
    const gt = alphaObt / (alphaObt + alphaObr);
    const gr = alphaObr / (alphaObt + alphaObr);
    hstp = hst - hobs * gt;
    hsrp = hsr - hobs * gr;
  }
  out.hstdM = hstp > h[0] ? h[0] : hstp;
  out.hsrdM = hsrp > h[n - 1] ? h[n - 1] : hsrp;

  // Eq. (90): smooth-earth heights for ducting, never above the ground at the terminals.
  const hstDuct = hst > h[0] ? h[0] : hst;
  const hsrDuct = hsr > h[n - 1] ? h[n - 1] : hsr;
  out.hstDuctM = hstDuct;
  out.hsrDuctM = hsrDuct;
  // Eq. (92): effective antenna heights for ducting.
  out.hteM = txHeightAglM + h[0] - hstDuct;
  out.hreM = rxHeightAglM + h[n - 1] - hsrDuct;

  // Eqs (91), (93): terrain roughness between the horizon points.
  const m = (hsrDuct - hstDuct) / dist;
  let hm = -Infinity;
  // ilt ≤ ilr on any real transhorizon profile; take them in order so odd profiles still get a value.
  const from = Math.min(out.txHorizonIndex, out.rxHorizonIndex);
  const to = Math.max(out.txHorizonIndex, out.rxHorizonIndex);
  for (let i = from; i <= to; i++) {
    const r = h[i] - (hstDuct + m * d[i]);
    if (r > hm) hm = r;
  }
  out.hmM = hm;
  return out;
}
