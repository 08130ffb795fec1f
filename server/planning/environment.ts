// Extra loss for where a node sits: outdoors (none), inside a building
// (ITU-R P.2109-1 building entry loss), or below ground in a pit or meter box
// (a plan setting; there is no ITU-R model for that case).
import { buildingEntryLossSummary, type BuildingType } from '../radio/building-entry-loss.ts';

export type NodeEnvironment = 'outdoor' | 'indoor' | 'pit';

export interface EnvironmentSettings {
  /** Building type assumed for indoor nodes (P.2109 Table 1 row). */
  indoorBuildingType: BuildingType;
  /** Extra median loss of a below-ground pit or meter box, dB. */
  pitExtraLossDb: number;
  /** Spread of that loss across installations, dB. */
  pitSigmaDb: number;
}

/**
 * Defaults. Pit / meter box: 15 dB median, 4 dB spread — common practice for a
 * meter pit with a lid at 900 MHz (the trade quotes roughly 10–20 dB, worse
 * with a steel lid or standing water); planners should override it from their
 * own field readings.
 */
export const DEFAULT_ENVIRONMENT_SETTINGS: EnvironmentSettings = {
  indoorBuildingType: 'traditional',
  pitExtraLossDb: 15,
  pitSigmaDb: 4,
};

export interface EnvironmentLoss {
  /** Median extra loss, dB. */
  lossDb: number;
  /** Spread of the extra loss (adds to the location variability), dB. */
  sigmaDb: number;
  /** Where the figure comes from, shown to the user. */
  source: string;
}

/** Median extra loss and spread for a node's environment. */
export function environmentLoss(
  environment: NodeEnvironment,
  frequencyMhz: number,
  elevationDeg: number,
  settings: EnvironmentSettings = DEFAULT_ENVIRONMENT_SETTINGS,
): EnvironmentLoss {
  switch (environment) {
    case 'outdoor':
      return { lossDb: 0, sigmaDb: 0, source: 'outdoor: no extra loss' };
    case 'indoor': {
      const { medianDb, sigmaDb } = buildingEntryLossSummary(frequencyMhz, settings.indoorBuildingType, Math.max(-90, Math.min(90, elevationDeg)));
      return { lossDb: medianDb, sigmaDb, source: `ITU-R P.2109-1 building entry loss (${settings.indoorBuildingType}), median` };
    }
    case 'pit':
      return { lossDb: settings.pitExtraLossDb, sigmaDb: settings.pitSigmaDb, source: 'below-ground pit / meter box: plan setting' };
    default:
      throw new RangeError(`environment: unknown value ${String(environment)}`);
  }
}
