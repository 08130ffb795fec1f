// The web clients (web/src/api*.ts) take the server's shapes from the generated OpenAPI types
// (web/src/generated/api-schema.ts) instead of restating them. Two checks:
// - type level (tsc runs over test/): every derived type is a real answer, not the marker type
//   `Answer` gives for a path or status that has no JSON answer (a wrong status would otherwise
//   type-check silently);
// - text level: the clients declare no interfaces except the few purely client-side shapes below.
import { readdirSync, readFileSync } from 'node:fs';
import { expect, expectTypeOf, it } from 'vitest';
import type { FleetTable, LinkCheck, NodeLinks, Recommendation, VisitSheet, KitPreview, ReadingInput, LinkStatus } from '../../../web/src/api.ts';
import type { CalibrationList, CalibrationResult, ReadingImportAnswer } from '../../../web/src/api-calibration.ts';
import type { CapacityQuery, PlanCapacity } from '../../../web/src/api-capacity.ts';
import type { GatewayCheck, GatewayChecks, GatewayKitDraft } from '../../../web/src/api-gateways.ts';
import type { KitDraft, KitPrice } from '../../../web/src/api-kit.ts';
import type { BillOfMaterials, PlanComparison } from '../../../web/src/api-reports.ts';
import type { SitingApplied, SitingRequest, SitingRun, SitingUndone } from '../../../web/src/api-siting.ts';
import type { AuditEntry, Invitation, Role, TeamMember } from '../../../web/src/api-team.ts';
import type { TuneResult } from '../../../web/src/api-tuning.ts';

/** What `Answer` gives when the path, method or status has no JSON answer. */
type NoAnswer = { readonly noJsonAnswer: string };

it('every client type derived from the OpenAPI document is a real answer or body', () => {
  const answers = [
    {} as NodeLinks, {} as LinkCheck, {} as Recommendation, {} as VisitSheet, {} as FleetTable,
    {} as CalibrationResult, {} as CalibrationList, {} as ReadingImportAnswer, {} as PlanCapacity, {} as GatewayCheck, {} as GatewayChecks,
    {} as KitPrice, {} as BillOfMaterials, {} as PlanComparison, {} as SitingRun, {} as SitingApplied, {} as SitingUndone,
    {} as AuditEntry, {} as Invitation, {} as TeamMember, {} as TuneResult,
  ] as const;
  for (const answer of answers) expectTypeOf(answer).not.toMatchTypeOf<NoAnswer>();
  expectTypeOf<NodeLinks['links'][number]['marginDb']>().toEqualTypeOf<number>();
  expectTypeOf<LinkCheck['profile']>().toBeNullable();
  expectTypeOf<VisitSheet['status']>().toEqualTypeOf<LinkStatus>();
  expectTypeOf<LinkStatus>().toEqualTypeOf<'served' | 'marginal' | 'unserved'>();
  expectTypeOf<Role>().toEqualTypeOf<'planner' | 'installer' | 'viewer'>();
  expectTypeOf<KitPreview>().toHaveProperty('antennaHeightAglM');
  expectTypeOf<CapacityQuery>().toHaveProperty('rateScale');
  expectTypeOf<ReadingInput>().toHaveProperty('rssiDbm');
  expectTypeOf<SitingRequest>().toHaveProperty('requiredGateways');
  expectTypeOf<GatewayKitDraft>().toHaveProperty('txPowerDbm');
  expectTypeOf<KitDraft>().toHaveProperty('antennaDesignId');
  expect(answers.length).toBe(21);
});

/** Client-side shapes with no server counterpart (upload progress, a lon/lat box, a page wrapper, the catalog bundle, tuning's hand-parsed body). */
const CLIENT_SIDE = ['ListPage', 'Catalog', 'UploadProgress', 'TerrainUpload', 'LonLatBox', 'TuneRequest'];

it('the web clients restate no server shape as a hand-written interface', () => {
  const dir = new URL('../../../web/src/', import.meta.url);
  const clients = readdirSync(dir).filter((f) => /^api(-[a-z]+)?\.ts$/.test(f));
  expect(clients.length).toBeGreaterThanOrEqual(10);
  const found: string[] = [];
  for (const file of clients) {
    const text = readFileSync(new URL(file, dir), 'utf8');
    for (const match of text.matchAll(/^export interface (\w+)/gm)) if (!CLIENT_SIDE.includes(match[1])) found.push(`${file}: ${match[1]}`);
    expect(text.match(/\[key: string\]: unknown/g) ?? [], file).toEqual([]);
  }
  expect(found).toEqual([]);
});
