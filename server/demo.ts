// The demo: an invented scenario of our own, seeded on first start on an empty database.
// "Kestrel Flat" is an invented irrigation valley (SYNTHETIC terrain, see
// terrain-samples/README.md); the co-operative, the sites and the devices are invented too.
// Team slug `demo`, one planner, one plan on the US 902-928 MHz band plan, 5 candidate
// sites, 2 gateways, 64 nodes of mixed kinds, and the DEM registered as a terrain layer.
import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import proj4 from 'proj4';
import type { Config } from './config.ts';
import type { Database } from './db/client.ts';
import { createTeam, createUser } from './db/repositories/accounts.ts';
import { recordAudit } from './db/repositories/audit.ts';
import { crsForEpsg } from './terrain/crs.ts';
import { openGeoRaster } from './terrain/raster.ts';
import { demoTerrain, demoTerrainPath, makeDemoTerrain } from '../scripts/make-demo-terrain.ts';

export const demoTeamSlug = 'demo';

/** Deterministic PRNG (mulberry32) so every fresh demo is the same. */
function random(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Demo-grid position in km from the DEM's upper-left corner (x east, y south) -> WGS 84. */
function lonLatOf(xKm: number, yKm: number): { lat: number; lon: number } {
  const utm = crsForEpsg(demoTerrain.epsg).proj4;
  const [lon, lat] = proj4(utm, 'EPSG:4326', [demoTerrain.originEastingM + xKm * 1000, demoTerrain.originNorthingM - yKm * 1000]);
  return { lat: Math.round(lat * 1e6) / 1e6, lon: Math.round(lon * 1e6) / 1e6 };
}

const sites = [
  { key: 'silo', name: 'Co-op grain silo', xKm: 6.1, yKm: 8.0, costUsd: 400, maxAntennaHeightAglM: 24, notes: 'Owner agrees to a bracket at the top platform; 230 V at the base.' },
  { key: 'knoll', name: 'West ridge knoll', xKm: 2.4, yKm: 7.2, costUsd: 2600, maxAntennaHeightAglM: 10, notes: 'No mains power: solar and battery needed. Track closed in winter.' },
  { key: 'pump', name: 'Pump house roof', xKm: 6.6, yKm: 10.8, costUsd: 250, maxAntennaHeightAglM: 6, notes: 'Low but easy access; fibre backhaul in the building.' },
  { key: 'tower', name: 'School water tower', xKm: 7.0, yKm: 3.0, costUsd: 900, maxAntennaHeightAglM: 30, notes: 'North of the spur ridge; lease talks open.' },
  { key: 'bench', name: 'East bench lookout', xKm: 10.4, yKm: 6.0, costUsd: 1500, maxAntennaHeightAglM: 12, notes: 'Old fire lookout; lightning protection must be redone.' },
] as const;

type NodeKind = {
  deviceType: string;
  environment: 'outdoor' | 'indoor' | 'pit';
  antennaDesignId: string;
  antennaHeightAglM: number;
  payloadBytes: number;
  messagesPerHour: number;
  buildingType?: string;
  prefix: string;
};

const kinds: NodeKind[] = [
  { prefix: 'Soil probe', deviceType: 'soil-moisture-probe', environment: 'outdoor', antennaDesignId: 'helical-stub', antennaHeightAglM: 1.0, payloadBytes: 14, messagesPerHour: 2 },
  { prefix: 'Water meter', deviceType: 'water-meter', environment: 'pit', antennaDesignId: 'pcb-inverted-f', antennaHeightAglM: -0.4, payloadBytes: 10, messagesPerHour: 1 },
  { prefix: 'Tank level', deviceType: 'tank-level-sensor', environment: 'outdoor', antennaDesignId: 'quarter-wave-ground-plane', antennaHeightAglM: 3.5, payloadBytes: 8, messagesPerHour: 4 },
  { prefix: 'House meter', deviceType: 'electricity-meter', environment: 'indoor', antennaDesignId: 'pcb-inverted-f', antennaHeightAglM: 1.5, payloadBytes: 20, messagesPerHour: 1, buildingType: 'farmhouse' },
  { prefix: 'Canal gate', deviceType: 'flow-sensor', environment: 'outdoor', antennaDesignId: 'quarter-wave-ground-plane', antennaHeightAglM: 2.0, payloadBytes: 12, messagesPerHour: 6 },
  { prefix: 'Weather mast', deviceType: 'weather-station', environment: 'outdoor', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 3.0, payloadBytes: 24, messagesPerHour: 4 },
];
/** How many of each kind (sums to 64). */
const kindCounts = [22, 14, 8, 8, 8, 4];

export interface DemoResult {
  seeded: boolean;
  teamId: string;
  plannerUserId: string;
  planId?: string;
}

/** Copies (or regenerates) the demo DEM into <filesDir>/terrain/ and returns its path relative to filesDir. */
function placeDemoTerrain(config: Config): { relativePath: string; absolutePath: string } {
  const relativePath = join('terrain', 'demo-valley.tif');
  const absolutePath = join(config.filesDir, relativePath);
  mkdirSync(join(config.filesDir, 'terrain'), { recursive: true });
  if (existsSync(demoTerrainPath)) copyFileSync(demoTerrainPath, absolutePath);
  else writeFileSync(absolutePath, makeDemoTerrain());
  return { relativePath, absolutePath };
}

/** Seeds the demo when the database has no team at all; otherwise returns the demo team if there is one. */
export async function seedDemoIfEmpty(db: Database, config: Config): Promise<DemoResult | null> {
  const teams = await db.prisma.team.count();
  if (teams > 0) {
    const team = await db.prisma.team.findUnique({ where: { slug: demoTeamSlug } });
    if (!team) return null;
    const planner = await db.prisma.user.findFirst({ where: { teamId: team.id, role: 'planner' }, orderBy: { createdAt: 'asc' } });
    return planner ? { seeded: false, teamId: team.id, plannerUserId: planner.id } : null;
  }
  return seedDemo(db, config);
}

export async function seedDemo(db: Database, config: Config): Promise<DemoResult> {
  const terrain = placeDemoTerrain(config);
  const raster = await openGeoRaster(terrain.absolutePath);
  const bytes = statSync(terrain.absolutePath).size;
  const sha256 = createHash('sha256').update(readFileSync(terrain.absolutePath)).digest('hex');
  const layer = {
    widthPx: raster.widthPx,
    heightPx: raster.heightPx,
    epsg: raster.crs.epsg,
    proj4: raster.crs.proj4,
    geoTransform: [...raster.geoTransform],
    ...raster.boundsLonLat,
    resolutionM: Math.round(((raster.resolutionM.x + raster.resolutionM.y) / 2) * 100) / 100,
    noData: raster.noData,
  };
  await raster.close();

  const team = await createTeam(db, { slug: demoTeamSlug, name: 'Kestrel Flat Water & Soil Co-op (demo)' });
  const planner = await createUser(db, { teamId: team.id, name: 'Demo planner', role: 'planner' });
  const principal = { teamId: team.id, userId: planner.id, tokenId: null };

  const rand = random(20261201);
  const result = await db.prisma.$transaction(async (tx) => {
    const plan = await tx.plan.create({
      data: {
        teamId: team.id,
        name: 'Kestrel Flat irrigation and meters (demo)',
        description:
          'Invented demo: a valley co-op wants every soil probe, pit meter, tank and canal sensor heard with 10 dB margin. The terrain is SYNTHETIC. A spur ridge crosses the valley 4 km from its north end, so northern nodes need diffraction or a second gateway.',
        settings: { pitLossDb: 15, meterBoxLossDb: 8, demo: true },
      },
    });
    await tx.terrainLayer.create({
      data: { planId: plan.id, kind: 'elevation', name: 'Kestrel Flat DEM (SYNTHETIC, 30 m)', filePath: terrain.relativePath, fileBytes: BigInt(bytes), sha256, priority: 0, createdById: planner.id, ...layer },
    });
    const siteIds: Record<string, string> = {};
    for (const site of sites) {
      const row = await tx.site.create({
        data: { planId: plan.id, name: site.name, ...lonLatOf(site.xKm, site.yKm), kind: site.key === 'silo' || site.key === 'knoll' ? 'used' : 'candidate', costUsd: site.costUsd, maxAntennaHeightAglM: site.maxAntennaHeightAglM, notes: site.notes },
      });
      siteIds[site.key] = row.id;
    }
    const silo = sites[0];
    const knoll = sites[1];
    await tx.gateway.create({
      data: { planId: plan.id, siteId: siteIds.silo, name: 'GW silo', ...lonLatOf(silo.xKm, silo.yKm), antennaDesignId: 'collinear-fibreglass-6dbi', antennaHeightAglM: 22, feedlineId: 'low-loss-half-inch', feedlineLengthM: 28, noiseFigureDb: 6, txPowerDbm: 27 },
    });
    await tx.gateway.create({
      data: { planId: plan.id, siteId: siteIds.knoll, name: 'GW west knoll', ...lonLatOf(knoll.xKm, knoll.yKm), antennaDesignId: 'collinear-fibreglass-8dbi', antennaHeightAglM: 8, feedlineId: 'low-loss-10mm', feedlineLengthM: 10, mastOptionId: 'telescopic-10m', noiseFigureDb: 6, txPowerDbm: 27 },
    });
    const nodes = [];
    for (const [kindIndex, kind] of kinds.entries()) {
      for (let i = 0; i < kindCounts[kindIndex]; i++) {
        // Fields and farms along the valley floor (x within ±2.5 km of the axis), all along its length.
        const yKm = 0.6 + rand() * 11.4;
        const axisKm = 6.0 + 0.8 * Math.sin(yKm / 2.2);
        const xKm = axisKm + (rand() - 0.5) * (kind.deviceType === 'weather-station' ? 7 : 5);
        nodes.push({
          planId: plan.id,
          name: `${kind.prefix} ${String(i + 1).padStart(2, '0')}`,
          ...lonLatOf(xKm, yKm),
          deviceType: kind.deviceType,
          antennaDesignId: kind.antennaDesignId,
          antennaHeightAglM: kind.antennaHeightAglM,
          txPowerDbm: 14,
          sfPolicy: kind.environment === 'pit' ? ('fixed' as const) : ('adaptive' as const),
          fixedSf: kind.environment === 'pit' ? 10 : null,
          payloadBytes: kind.payloadBytes,
          messagesPerHour: kind.messagesPerHour,
          environment: kind.environment,
          buildingType: kind.buildingType ?? null,
          installStatus: rand() < 0.3 ? ('installed' as const) : ('planned' as const),
          notes: yKm < 4.2 ? 'North of the spur ridge.' : '',
        });
      }
    }
    await tx.node.createMany({ data: nodes });
    return { planId: plan.id, nodeCount: nodes.length };
  });
  await recordAudit(db, { principal, action: 'seed', entity: 'plan', entityId: result.planId, detail: { demo: true, nodes: result.nodeCount, sites: sites.length, gateways: 2 } });
  return { seeded: true, teamId: team.id, plannerUserId: planner.id, planId: result.planId };
}
