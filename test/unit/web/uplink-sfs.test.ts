// The coverage form's SF list comes from the band plan the server serves, at the plan's bandwidth
// (web/src/uplink-sfs.ts over GET /client-settings), not from a 125 kHz assumption in the web.
import { describe, expect, it } from 'vitest';
import { bandPlans } from '../../../server/radio/band-plans.ts';
import { DEFAULT_BANDWIDTH_KHZ, loraBandwidthsKhz, uplinkSfsFor } from '../../../server/planning/settings.ts';
import { planUplinkSfs } from '../../../web/src/uplink-sfs.ts';
import { clientSettings } from '../../../server/api/routes/client-settings.ts';

// What GET /client-settings serves (the route answers clientSettings(config)).
const settings = clientSettings({});

describe('planUplinkSfs', () => {
  it('every band plan at each of its bandwidths gives exactly the server rule (uplinkSfsFor)', () => {
    for (const plan of bandPlans) {
      for (const bandwidthKhz of loraBandwidthsKhz(plan)) {
        expect(planUplinkSfs(settings, { bandPlanId: plan.id, settings: { bandwidthKhz } }), `${plan.id} ${bandwidthKhz} kHz`).toEqual(uplinkSfsFor(plan, bandwidthKhz));
      }
      // No bandwidth in the plan's settings: the server's default.
      expect(planUplinkSfs(settings, { bandPlanId: plan.id })).toEqual(uplinkSfsFor(plan, DEFAULT_BANDWIDTH_KHZ));
    }
  });

  it('a band plan with a 250 kHz data rate: the list at 250 kHz is the server answer for 250 kHz', () => {
    const plan = bandPlans.find((p) => loraBandwidthsKhz(p).includes(250));
    expect(plan, 'a band plan with a 250 kHz LoRa data rate').toBeDefined();
    const at250 = planUplinkSfs(settings, { bandPlanId: plan!.id, settings: { bandwidthKhz: 250 } }).map((e) => e.sf);
    expect(at250).toEqual(uplinkSfsFor(plan!, 250).map((e) => e.sf));
  });

  it('a bandwidth without data rates gets the server answer for it; an unknown band plan SF7–12', () => {
    const plan = bandPlans[0];
    expect(planUplinkSfs(settings, { bandPlanId: plan.id, settings: { bandwidthKhz: 62.5 } })).toEqual(uplinkSfsFor(plan, 62.5));
    expect(planUplinkSfs(settings, { bandPlanId: 'nowhere' }).map((e) => e.sf)).toEqual([7, 8, 9, 10, 11, 12]);
    expect(planUplinkSfs(undefined, { bandPlanId: plan.id }).map((e) => e.sf)).toEqual([7, 8, 9, 10, 11, 12]);
  });
});
