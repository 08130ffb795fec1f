// Gateways judged like nodes: EIRP from the one loss path and the band plan's legal check
// (server/radio/transmitter.ts), plus cautions fitted to mast height, power and gain
// (server/planning/cautions.ts). Used by the gateway panel, the edit dialog (preview before
// saving) and the fleet table's gateway section.
import type { PlanRow } from '../db/repositories/plans.ts';
import { gatewayConnectors, type LinkEngine, type PlanContext } from '../jobs/link-engine.ts';
import { CAUTIONS_FOOTER, fittedCautions, type CautionGroup } from '../planning/cautions.ts';
import type { AntennaDesign } from '../radio/antennas.ts';
import type { FeedlineType } from '../radio/feedlines.ts';
import { transmitterCheck } from '../radio/transmitter.ts';

export interface GatewayCheck {
  gatewayId: string | null;
  name: string;
  txPowerDbm: number;
  antennaName: string;
  antennaGainDbi: number;
  antennaHeightAglM: number;
  feedlineName: string | null;
  lossesDb: number;
  peakEirpDbm: number;
  peakErpDbm: number;
  legal: { withinLimit: boolean; maxEirpDbm: number | null; excessDb: number | null; limitName: string | null; source: string | null; warnings: string[] };
  bandPlanName: string;
  cautions: CautionGroup[];
  cautionsFooter: string;
}

export interface GatewayKitInput {
  name: string;
  txPowerDbm: number;
  antennaHeightAglM: number;
  antenna: AntennaDesign;
  feedline: FeedlineType | null;
  feedlineLengthM: number;
}

export function checkGatewayKit(ctx: PlanContext, gatewayId: string | null, kit: GatewayKitInput): GatewayCheck {
  const s = ctx.settings;
  const hasFeedline = kit.feedline !== null && kit.feedlineLengthM > 0;
  const result = transmitterCheck(s.bandPlan, {
    frequencyMhz: s.frequencyMhz,
    bandwidthKhz: s.bandwidthKhz,
    powerDbm: kit.txPowerDbm,
    end: { antenna: kit.antenna, feedline: hasFeedline && kit.feedline ? { feedline: kit.feedline, lengthM: kit.feedlineLengthM } : undefined, connectors: gatewayConnectors(hasFeedline) },
  });
  const limit = s.bandPlan.limits.find((l) => l.id === result.legal.limitId);
  return {
    gatewayId,
    name: kit.name,
    txPowerDbm: kit.txPowerDbm,
    antennaName: kit.antenna.name,
    antennaGainDbi: kit.antenna.gainDbi,
    antennaHeightAglM: kit.antennaHeightAglM,
    feedlineName: hasFeedline && kit.feedline ? kit.feedline.name : null,
    lossesDb: result.losses.totalLossDb,
    peakEirpDbm: result.peakEirpDbm,
    peakErpDbm: result.peakErpDbm,
    legal: { withinLimit: result.legal.withinLimit, maxEirpDbm: result.legal.maxEirpDbm, excessDb: result.legal.excessDb, limitName: limit?.name ?? null, source: result.legal.source, warnings: result.legal.warnings },
    bandPlanName: s.bandPlan.name,
    cautions: fittedCautions({ role: 'gateway', antennaHeightAglM: kit.antennaHeightAglM, peakEirpDbm: result.peakEirpDbm, antennaGainDbi: kit.antenna.gainDbi, legal: result.legal }),
    cautionsFooter: CAUTIONS_FOOTER,
  };
}

/** Every gateway of the plan, as stored. */
export async function gatewayChecks(engine: LinkEngine, plan: PlanRow): Promise<{ items: GatewayCheck[]; warnings: string[] }> {
  const ctx = await engine.planContext(plan);
  const items = ctx.gateways.map((g) =>
    checkGatewayKit(ctx, g.row.id, { name: g.row.name, txPowerDbm: g.row.txPowerDbm, antennaHeightAglM: g.row.antennaHeightAglM, antenna: g.antenna, feedline: g.feedline, feedlineLengthM: g.row.feedlineLengthM }),
  );
  return { items, warnings: ctx.warnings };
}

/** A gateway kit not saved yet (the edit dialog's values). */
export async function previewGatewayKit(
  engine: LinkEngine,
  plan: PlanRow,
  input: { name?: string; txPowerDbm: number; antennaHeightAglM: number; antennaDesignId: string; feedlineId?: string | null; feedlineLengthM?: number },
): Promise<GatewayCheck> {
  const ctx = await engine.planContext(plan);
  const antenna = await engine.catalogAntenna(ctx, input.antennaDesignId);
  const feedline = input.feedlineId ? await engine.catalogFeedline(ctx, input.feedlineId) : null;
  return checkGatewayKit(ctx, null, { name: input.name ?? 'gateway', txPowerDbm: input.txPowerDbm, antennaHeightAglM: input.antennaHeightAglM, antenna, feedline, feedlineLengthM: input.feedlineLengthM ?? 0 });
}
