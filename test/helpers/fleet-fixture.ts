// A synthetic fleet for link run tests and the scale bench: a DEM of our own
// making (rolling ground, ridges, bumps; EPSG:4326) written into the files
// folder and recorded as the plan's elevation layer, gateways on a jittered
// grid and nodes scattered with a seeded generator, written straight through
// Prisma (thousands of rows in seconds). Labelled synthetic.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Database } from '../../server/db/client.ts';
import { writeGeoTiff } from '../../server/terrain/geotiff-writer.ts';

/** Deterministic pseudo-random numbers (mulberry32). */
export function seeded(seed: number): () => number {
  let a = seed;
  return () => {
    a = (a + 0x6d2b79f5) | 0;
    let t = Math.imul(a ^ (a >>> 15), 1 | a);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export interface FleetFixtureOptions {
  nodes: number;
  gateways: number;
  /** Side of the square area, km. */
  sideKm: number;
  /** DEM cell, m (default 60). */
  cellM?: number;
  /** The plan's link range, km (pairs further apart are skipped, as in the fleet table). */
  maxLinkRangeKm?: number;
  seed?: number;
  centre?: { lat: number; lon: number };
}

export interface FleetFixture {
  planId: string;
  terrainPath: string;
  nodeIds: string[];
  gatewayIds: string[];
}

export async function createFleetFixture(db: Database, teamId: string, filesDir: string, options: FleetFixtureOptions): Promise<FleetFixture> {
  const centre = options.centre ?? { lat: 46.2, lon: 7.4 };
  const cellM = options.cellM ?? 60;
  const sizePx = Math.ceil((options.sideKm * 1000) / cellM);
  const dLat = cellM / 111_320;
  const dLon = cellM / (111_320 * Math.cos((centre.lat * Math.PI) / 180));
  const west = centre.lon - (sizePx / 2) * dLon;
  const north = centre.lat + (sizePx / 2) * dLat;
  const data = new Float32Array(sizePx * sizePx);
  for (let y = 0; y < sizePx; y++) {
    for (let x = 0; x < sizePx; x++) {
      const u = (x * cellM) / 30_000;
      const v = (y * cellM) / 30_000;
      data[y * sizePx + x] = 600 + 180 * Math.sin(6.1 * u + 1.3) * Math.cos(4.3 * v) + 90 * Math.sin(17 * (u + 0.4 * v)) + 25 * Math.sin(53 * u) * Math.sin(41 * v);
    }
  }
  const plan = await db.prisma.plan.create({ data: { teamId, name: `Synthetic fleet ${options.nodes} × ${options.gateways} (invented scenario)`, settings: { maxLinkRangeKm: options.maxLinkRangeKm ?? 50 } } });
  const dir = join(filesDir, 'terrain');
  mkdirSync(dir, { recursive: true });
  const terrainPath = join(dir, `synthetic-${plan.id}.tif`);
  const bytes = writeGeoTiff({ widthPx: sizePx, heightPx: sizePx, data, geoTransform: [west, dLon, 0, north, 0, -dLat], epsg: 4326, compression: 'deflate', tiled: { tileSizePx: 256 } });
  writeFileSync(terrainPath, bytes);
  const east = west + sizePx * dLon;
  const south = north - sizePx * dLat;
  await db.prisma.terrainLayer.create({
    data: { planId: plan.id, kind: 'elevation', name: 'synthetic ridges', filePath: terrainPath, fileBytes: BigInt(bytes.length), widthPx: sizePx, heightPx: sizePx, epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', geoTransform: [west, dLon, 0, north, 0, -dLat], west, south, east, north, resolutionM: cellM },
  });
  const rand = seeded(options.seed ?? 7);
  // Inside a 2 % margin of the DEM so every profile has terrain.
  const at = (fu: number, fv: number) => ({ lat: south + (0.02 + 0.96 * fv) * (north - south), lon: west + (0.02 + 0.96 * fu) * (east - west) });
  const side = Math.ceil(Math.sqrt(options.gateways));
  const gateways = Array.from({ length: options.gateways }, (_, i) => {
    const p = at(((i % side) + 0.5 + (rand() - 0.5) * 0.6) / side, (Math.floor(i / side) + 0.5 + (rand() - 0.5) * 0.6) / side);
    return { planId: plan.id, name: `GW ${String(i + 1).padStart(4, '0')}`, lat: p.lat, lon: p.lon, antennaDesignId: 'collinear-fibreglass-6dbi', antennaHeightAglM: 15 + Math.round(rand() * 15), feedlineId: 'low-loss-10mm', feedlineLengthM: 20 };
  });
  await db.prisma.gateway.createMany({ data: gateways });
  const epoch = Date.UTC(2026, 0, 1);
  for (let start = 0; start < options.nodes; start += 2000) {
    const count = Math.min(2000, options.nodes - start);
    await db.prisma.node.createMany({
      data: Array.from({ length: count }, (_, k) => {
        const i = start + k;
        const p = at(rand(), rand());
        // Distinct creation times keep the fleet table's order stable.
        return { planId: plan.id, name: `Meter ${String(i + 1).padStart(6, '0')}`, lat: p.lat, lon: p.lon, deviceType: 'meter', antennaDesignId: 'half-wave-dipole', antennaHeightAglM: 1.5 + Math.round(rand() * 4), txPowerDbm: 14, payloadBytes: 12, createdAt: new Date(epoch + i * 1000) };
      }),
    });
  }
  const gatewayIds = (await db.prisma.gateway.findMany({ where: { planId: plan.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], select: { id: true } })).map((row) => row.id);
  const nodeIds = (await db.prisma.node.findMany({ where: { planId: plan.id }, orderBy: [{ createdAt: 'asc' }, { id: 'asc' }], select: { id: true } })).map((row) => row.id);
  return { planId: plan.id, terrainPath, nodeIds, gatewayIds };
}

/** Every Link row of a plan, in a stable order, as comparable text (JSON results included). */
export async function linkRowsOf(db: Database, planId: string): Promise<string[]> {
  const rows = await db.prisma.link.findMany({ where: { planId }, select: { nodeId: true, gatewayId: true, inputHash: true, result: true, packed: true }, orderBy: [{ nodeId: 'asc' }, { gatewayId: 'asc' }] });
  return rows.map((row) => `${row.nodeId}|${row.gatewayId}|${row.inputHash}|${JSON.stringify(row.result)}|${row.packed ? Buffer.from(row.packed).toString('hex') : '-'}`);
}
