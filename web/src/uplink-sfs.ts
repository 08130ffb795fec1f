// The uplink SFs a plan may use, from what GET /client-settings serves (the server's band plan:
// server/planning/settings.ts uplinkSfsFor per bandwidth): the plan's settings.bandwidthKhz, else
// the server's default bandwidth, picks the entry. Pure (test/unit/web/uplink-sfs.test.ts).
import type { ClientSettings, Plan, UplinkSf } from './api.ts';

const ALL_SFS: UplinkSf[] = [7, 8, 9, 10, 11, 12].map((sf) => ({ sf, maxAppPayloadBytes: null }));

export function planUplinkSfs(settings: (Pick<ClientSettings, 'bandPlans'> & { defaultBandwidthKhz?: number }) | undefined, plan: Pick<Plan, 'bandPlanId'> & { settings?: unknown }): UplinkSf[] {
  const bandPlan = settings?.bandPlans.find((b) => b.id === plan.bandPlanId);
  if (!bandPlan) return ALL_SFS;
  const chosen = Number((plan.settings as { bandwidthKhz?: unknown } | undefined)?.bandwidthKhz);
  const bandwidthKhz = Number.isFinite(chosen) && chosen > 0 ? chosen : settings?.defaultBandwidthKhz;
  if (bandPlan.bandwidths && bandwidthKhz !== undefined) {
    const entry = bandPlan.bandwidths.find((b) => Math.abs(b.bandwidthKhz - bandwidthKhz) < 0.01);
    return entry ? entry.uplinkSfs : (bandPlan.otherBandwidthSfs ?? ALL_SFS);
  }
  return bandPlan.uplinkSfs ?? ALL_SFS;
}
