// Commands of the propagation room: `predict-path` (one path by ITU-R P.1812-8,
// Bullington, knife-edge, Deygout or free space). The engine lives in
// server/propagation/; this file reads the input, validates it and prints the result.
import { readFile } from 'node:fs/promises';
import { z } from 'zod';
import { CliUsageError, defineCommand, stringOption, type CommandDefinition } from './framework.ts';
import { describePathRequestError, pathRequestSchema, type PathRequest } from '../propagation/path-request.ts';
import {
  predictPath,
  profileArraysFromPoints,
  zoneCode,
  type PathPrediction,
  type ProfileArrays,
} from '../propagation/path-prediction.ts';
import { extractProfile } from '../terrain/profile.ts';
import { openTerrainStore, type TerrainStore } from '../terrain/store.ts';

/** Reads `--input` (a file, or `-` for standard input) as JSON; a read or parse failure is a usage error naming --input. */
export async function readInput(source: string, readStdin: () => Promise<string>): Promise<unknown> {
  let text: string;
  try {
    text = source === '-' ? await readStdin() : await readFile(source, 'utf8');
  } catch (error) {
    const reason = error instanceof Error && 'code' in error ? String((error as NodeJS.ErrnoException).code) : String(error);
    throw new CliUsageError(`--input: cannot read ${source === '-' ? 'standard input' : source} (${reason})`);
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (error) {
    throw new CliUsageError(`--input: not valid JSON (${error instanceof Error ? error.message : String(error)})`);
  }
}

/** The profile of the request: its own points, or one extracted from GeoTIFF files by the terrain engine. */
async function resolveProfile(request: PathRequest, warnings: string[]): Promise<ProfileArrays> {
  if (request.profile) return profileArraysFromPoints(request.profile);
  const files = (request.terrain ?? []).map((entry) =>
    typeof entry === 'string' ? { path: entry, kind: 'elevation' as const } : { path: entry.path, kind: entry.kind },
  );
  let store: TerrainStore | undefined;
  try {
    store = await openTerrainStore(files);
    const extracted = await extractProfile(
      store,
      { lat: request.tx.lat, lon: request.tx.lon },
      { lat: request.rx.lat, lon: request.rx.lon },
      request.terrainStepM === undefined ? {} : { stepM: request.terrainStepM },
    );
    const n = extracted.distanceM.length;
    if (extracted.noDataPoints > 0) {
      throw new CliUsageError(
        `terrain: ${extracted.noDataPoints} of ${n} profile points have no elevation data (NoData or outside the files); cover the whole path`,
      );
    }
    if (n < 3) throw new CliUsageError(`terrain: the extracted profile has ${n} points, needs at least 3 (use a smaller terrainStepM)`);
    const out: ProfileArrays = {
      distanceKm: new Float64Array(n),
      groundM: extracted.groundM,
      clutterM: new Float64Array(n),
      zone: new Uint8Array(n).fill(zoneCode(request.terrainZone)),
    };
    let unclassified = 0;
    for (let i = 0; i < n; i++) {
      out.distanceKm[i] = extracted.distanceM[i] / 1000;
      const clutter = extracted.clutterHeightM ? extracted.clutterHeightM[i] : 0;
      if (Number.isNaN(clutter)) unclassified++;
      out.clutterM[i] = Number.isNaN(clutter) ? 0 : clutter;
    }
    if (unclassified > 0) warnings.push(`${unclassified} profile points have no clutter class: taken as open ground (no clutter height)`);
    warnings.push(`profile extracted from terrain: ${n} points at ${extracted.stepM.toFixed(1)} m, every point in zone "${request.terrainZone}"`);
    return out;
  } catch (error) {
    if (error instanceof CliUsageError) throw error;
    throw new CliUsageError(`terrain: ${error instanceof Error ? error.message.split('\n')[0] : String(error)}`);
  } finally {
    await store?.close();
  }
}

function formatText(result: unknown): string {
  const r = result as PathPrediction;
  const lines = [
    `method             ${r.method}`,
    `basic loss         ${r.basicLossDb.toFixed(2)} dB`,
    `field strength     ${r.fieldStrengthDbuvm.toFixed(2)} dBµV/m for ${r.erpDbm.toFixed(1)} dBm e.r.p.`,
    `distance           ${r.distanceKm.toFixed(3)} km`,
    `line of sight      ${r.lineOfSight ? 'yes' : 'no'} (worst Fresnel clearance ${r.fresnelClearanceRatio.toFixed(2)} at ${r.worstClearanceAtKm.toFixed(2)} km, k = ${r.kFactor.toFixed(3)})`,
  ];
  for (const [name, value] of Object.entries(r.terms)) {
    if (value !== null) lines.push(`  ${name.padEnd(22)} ${value.toFixed(2)} dB`);
  }
  for (const warning of r.warnings) lines.push(`warning: ${warning}`);
  return lines.join('\n');
}

export const propagationCommands: CommandDefinition[] = [
  defineCommand({
    words: 'predict-path',
    options: z.object({ input: stringOption() }),
    run: async (options, context) => {
      const raw = await readInput(options.input, context.readStdin);
      const parsed = pathRequestSchema.safeParse(raw);
      if (!parsed.success) throw new CliUsageError(describePathRequestError(parsed.error));
      const extractionWarnings: string[] = [];
      const profile = await resolveProfile(parsed.data, extractionWarnings);
      const result = predictPath(parsed.data, profile);
      result.warnings.unshift(...extractionWarnings);
      return result;
    },
    formatText,
  }),
];
