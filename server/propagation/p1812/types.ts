// Inputs and outputs of the ITU-R P.1812-8 path method (plain typed data).

/** Radio-climatic zone codes of P.1812-8 §3 (Table of zones): sea, coastal land, inland. */
export const ZONE_SEA = 1;
export const ZONE_COASTAL_LAND = 3;
export const ZONE_INLAND = 4;

export type Polarisation = 'horizontal' | 'vertical';

/** Everything the method needs for one path; arrays hold one entry per profile point, Tx first. */
export interface P1812Input {
  frequencyMhz: number;
  /** Time percentage p, 1–50 %. */
  timePercent: number;
  /** Location percentage pL, 1–99 % (50 = median). */
  locationPercent: number;
  /** Location variability standard deviation σL (dB); 0 disables it. */
  locationSigmaDb: number;
  polarisation: Polarisation;
  /** Average radio-refractivity lapse rate ΔN (N-units/km) over the lowest 1 km; P.1812 default 45. */
  deltaN: number;
  /** Sea-level surface refractivity N0 (N-units); default 325. */
  n0: number;
  /** Distance of each terminal from the coast in the direction of the other (km), for Act/Acr. */
  txCoastDistanceKm: number;
  rxCoastDistanceKm: number;
  txHeightAglM: number;
  rxHeightAglM: number;
  /** Latitude of the path centre (degrees), P.1812-8 Eq. (4) or Attachment H great-circle midpoint. */
  pathCentreLatDeg: number;
  distanceKm: Float64Array;
  heightM: Float64Array;
  /** Representative clutter height R at each point (m); added to the terrain for diffraction. */
  clutterHeightM: Float64Array;
  /** Radio-climatic zone of each point: 1 sea, 3 coastal land, 4 inland. */
  zone: Uint8Array;
  /** Effective radiated power (dBm) for the field strength; the Recommendation's Eq. (70) is for 1 kW (60 dBm). */
  erpDbm?: number;
}

/** Every intermediate term of one prediction, named after the Recommendation's symbols. */
export interface P1812Result {
  // Profile analysis (Attachment 1 and §3)
  distanceKm: number;
  transhorizon: boolean;
  dltKm: number;
  dlrKm: number;
  thetaTMrad: number;
  thetaRMrad: number;
  thetaMrad: number;
  htsM: number;
  hrsM: number;
  omega: number;
  dtmKm: number;
  dlmKm: number;
  beta0Percent: number;
  aeKm: number;
  hstM: number; // Eq. (85)
  hsrM: number; // Eq. (86)
  hstDuctM: number; // Eq. (90a)
  hsrDuctM: number; // Eq. (90b)
  hstdM: number; // Eq. (89)
  hsrdM: number;
  htsDiffM: number; // h'ts Eq. (37a)
  hrsDiffM: number; // h'rs Eq. (37b)
  hteM: number; // Eq. (92a)
  hreM: number; // Eq. (92b)
  hmM: number; // Eq. (93)
  // Line of sight
  lbfsDb: number;
  lb0pDb: number;
  lb0bDb: number;
  // Diffraction: suffix 50 for the median radius ae, Beta for aβ
  lbullaDb: number;
  lbullsDb: number;
  ldsphDb: number;
  lbullaBetaDb: number;
  lbullsBetaDb: number;
  ldsphBetaDb: number;
  ld50Db: number;
  ldBetaDb: number;
  ldpDb: number;
  fi: number;
  lbd50Db: number;
  lbdDb: number;
  // Troposcatter, ducting and combination
  lbsDb: number;
  lbaDb: number;
  fj: number;
  fk: number;
  lminb0pDb: number;
  lminbapDb: number;
  lbdaDb: number;
  lbamDb: number;
  lbcDb: number;
  locationCorrectionDb: number;
  lbDb: number;
  /** Field strength (dBµV/m) for 1 kW e.r.p., Eq. (70). */
  ep1kwDbuvm: number;
  /** Field strength (dBµV/m) for the input e.r.p. (erpDbm), equal to ep1kwDbuvm when none is given. */
  epDbuvm: number;
}
