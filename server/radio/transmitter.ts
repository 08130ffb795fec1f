// What one transmitter radiates, and whether the band plan allows it: the same losses as the
// link budget (endLosses: feedline, connectors, mismatch) and the same legal rule (legalCheck),
// so a gateway and a node are judged by one rule.
//   radiated power P_rad = P_tx − L_feedline − L_connectors − L_mismatch − L_other   (dBm)
//   peak EIRP = P_rad + G_peak (dBi);  ERP = EIRP − 2.15 dB (half-wave dipole gain)
import type { BandPlan } from './band-plans.ts';
import { endLosses, legalCheck, type LegalCheck, type LinkEndInput, type LinkEndLosses } from './link-budget.ts';

export interface TransmitterInput {
  frequencyMhz: number;
  bandwidthKhz: number;
  /** Conducted power at the radio's antenna port, dBm. */
  powerDbm: number;
  end: LinkEndInput;
}

export interface TransmitterCheck {
  conductedPowerDbm: number;
  losses: LinkEndLosses;
  /** EIRP in the antenna's strongest direction, dBm (what the limits count). */
  peakEirpDbm: number;
  peakErpDbm: number;
  legal: LegalCheck;
}

export function transmitterCheck(plan: BandPlan, input: TransmitterInput): TransmitterCheck {
  const losses = endLosses(input.end, input.frequencyMhz);
  const radiatedDbm = input.powerDbm - losses.totalLossDb;
  const peakEirpDbm = radiatedDbm + losses.antennaPeakGainDbi;
  const legal = legalCheck(plan, { frequencyMhz: input.frequencyMhz, bandwidthKhz: input.bandwidthKhz, conductedPowerDbm: input.powerDbm, peakEirpDbm, antennaPeakGainDbi: losses.antennaPeakGainDbi });
  return { conductedPowerDbm: input.powerDbm, losses, peakEirpDbm, peakErpDbm: legal.peakErpDbm, legal };
}
