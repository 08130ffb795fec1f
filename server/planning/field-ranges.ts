// The valid range of each physical input: one table the API routes, the CLI, GET /client-settings
// (and through it every web form) apply, so a limit is defined in one place.

export interface FieldRange {
  min: number;
  max: number;
  unit: string;
  /** Step the forms offer. */
  step: number;
  /** Why the limits are what they are (shown in the forms' hints). */
  note: string;
}

export const FIELD_RANGES = {
  nodeAntennaHeightAglM: { min: -10, max: 200, unit: 'm', step: 0.1, note: 'node antenna above ground; negative for a pit or meter box below ground' },
  gatewayAntennaHeightAglM: { min: 0, max: 500, unit: 'm', step: 0.5, note: 'gateway antenna above ground' },
  nodeTxPowerDbm: { min: -10, max: 30, unit: 'dBm', step: 0.5, note: 'conducted power at the node radio port (1 W at most); the band plan limits the radiated power' },
  gatewayTxPowerDbm: { min: -10, max: 36, unit: 'dBm', step: 0.5, note: 'conducted power at the gateway radio port' },
  nodeFeedlineLengthM: { min: 0, max: 500, unit: 'm', step: 0.5, note: 'cable from the node radio to its antenna' },
  gatewayFeedlineLengthM: { min: 0, max: 1000, unit: 'm', step: 0.5, note: 'cable from the gateway radio to its antenna' },
  targetMarginDb: { min: -20, max: 60, unit: 'dB', step: 0.5, note: 'target margin: the fade margin a node must reach to count as served' },
  sigmaDb: { min: 0, max: 30, unit: 'dB', step: 0.1, note: 'a spread of the received level (σL or σM)' },
  noiseFigureDb: { min: 0, max: 20, unit: 'dB', step: 0.1, note: 'gateway receiver noise figure' },
  coverageRadiusKm: { min: 0.1, max: 100, unit: 'km', step: 0.1, note: 'radius of a coverage run around each gateway (clipped to the terrain)' },
  payloadBytes: { min: 1, max: 255, unit: 'B', step: 1, note: 'application payload of one uplink' },
  maxNodesPerGateway: { min: 1, max: 1_000_000, unit: 'nodes/gateway', step: 1, note: 'most nodes one gateway may serve in a siting answer; a node that must be heard by k gateways takes a place at each of them' },
} as const satisfies Record<string, FieldRange>;

export type RangedField = keyof typeof FIELD_RANGES;
