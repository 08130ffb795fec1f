// `earshot tune`: an antenna sweep (.s1p or CSV) → resonance, VSWR, the VSWR < 2 band and the trim.
// Thin: reads the file, calls server/app/tuning.ts, prints one document.
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { z } from 'zod';
import { TuneError, tuneSweep } from '../app/tuning.ts';
import type { TuneResult } from '../tuning/analyse.ts';
import { CliUsageError, defineCommand, flagOption, numberOption, stringOption, type CommandDefinition } from './framework.ts';

const tune = defineCommand({
  words: 'tune',
  options: z.strictObject(
    {
      s1p: stringOption().optional(),
      csv: stringOption().optional(),
      band: stringOption(),
      design: stringOption().optional(),
      'length-mm': numberOption().optional(),
      chart: flagOption().optional(),
    },
    { error: (issue) => (issue.code === 'unrecognized_keys' ? `unknown option --${(issue.keys as string[])[0]}` : issue.code === 'invalid_type' && issue.path?.[0] === 'band' ? 'is required (a band plan id, e.g. us-902-928; see `earshot bands`)' : undefined) },
  ),
  run: async (o, context) => {
    const source = o.s1p ?? o.csv;
    if ((o.s1p === undefined) === (o.csv === undefined)) throw new CliUsageError('--s1p: give the sweep as exactly one of --s1p FILE or --csv FILE (- reads standard input)');
    let text: string;
    try {
      text = source === '-' ? await context.readStdin() : await readFile(source as string, 'utf8');
    } catch (error) {
      throw new CliUsageError(`--${o.s1p !== undefined ? 's1p' : 'csv'}: cannot read ${source} (${(error as NodeJS.ErrnoException).code ?? String(error)})`);
    }
    const fileName = source === '-' ? (o.csv !== undefined ? 'stdin.csv' : 'stdin.s1p') : basename(source as string);
    let result: TuneResult;
    try {
      result = tuneSweep({ text, fileName: o.csv !== undefined && !fileName.toLowerCase().endsWith('.csv') ? `${fileName}.csv` : fileName, bandId: o.band, designId: o.design, lengthMm: o['length-mm'] });
    } catch (error) {
      if (error instanceof TuneError) {
        const option = { file: o.s1p !== undefined ? 's1p' : 'csv', band: 'band', design: 'design', lengthMm: 'length-mm' }[error.field] ?? error.field;
        throw new CliUsageError(`--${option}: ${error.message.slice(error.field.length + 2)}`);
      }
      throw error;
    }
    if (o.chart) return result;
    const { chart: _chart, ...rest } = result;
    return rest;
  },
  formatText: (r) => {
    const t = r as TuneResult;
    const rl = (v: number | null) => (v === null ? '∞' : v.toFixed(1));
    const lines = [
      `${t.bandName}: centre ${t.bandCentreMhz} MHz`,
      `resonance ${t.resonanceMhz.toFixed(2)} MHz, VSWR ${t.vswrAtResonance.toFixed(2)} there`,
      `at the band centre: VSWR ${t.vswrAtBandCentre.toFixed(2)}, return loss ${rl(t.returnLossDbAtBandCentre)} dB`,
      `VSWR < 2 from ${t.vswr2BandMhz ? `${t.vswr2BandMhz[0].toFixed(1)} to ${t.vswr2BandMhz[1].toFixed(1)} MHz` : 'nowhere (not even at resonance)'}`,
    ];
    if (t.newLengthMm !== null) lines.push(`${t.element}: ${t.lengthMm} mm → ${t.newLengthMm.toFixed(1)} mm (${t.lengthRule})`);
    lines.push('', ...t.advice.map((a) => `- ${a.message}`));
    if (t.cautions.length) lines.push('', ...t.cautions.map((c) => `! ${c}`));
    return lines.join('\n');
  },
});

export const tuningCommands: CommandDefinition[] = [tune];
