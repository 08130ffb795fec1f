// Commands of the propagation room: `predict-path` (one path by ITU-R P.1812-8,
// Bullington, knife-edge, Deygout or free space). The engine lives in
// server/propagation/; this file reads the input, validates it and prints the result.
import { readFile } from 'node:fs/promises';
import { z } from 'zod';
import { CliUsageError, defineCommand, stringOption, type CliCommand } from './framework.ts';
import { describePathRequestError, pathRequestSchema, type PathRequest } from '../propagation/path-request.ts';
import { predictPath, profileArraysFromPoints, type PathPrediction, type ProfileArrays } from '../propagation/path-prediction.ts';

async function readInput(source: string, readStdin: () => Promise<string>): Promise<unknown> {
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

async function resolveProfile(request: PathRequest): Promise<ProfileArrays> {
  if (request.profile) return profileArraysFromPoints(request.profile);
  throw new CliUsageError('terrain: profile extraction from GeoTIFF files is not wired in yet; give "profile" points');
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

export const propagationCommands: CliCommand[] = [
  defineCommand({
    words: 'predict-path',
    summary: 'Path loss and field strength over one profile (ITU-R P.1812-8, Bullington, knife-edge, Deygout, free space)',
    options: z.object({ input: stringOption() }),
    run: async (options, context) => {
      const raw = await readInput(options.input, context.readStdin);
      const parsed = pathRequestSchema.safeParse(raw);
      if (!parsed.success) throw new CliUsageError(describePathRequestError(parsed.error));
      const profile = await resolveProfile(parsed.data);
      return predictPath(parsed.data, profile);
    },
    formatText,
  }),
];
