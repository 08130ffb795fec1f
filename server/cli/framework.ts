// The small command framework every `earshot` command is written against.
// A command declares its words ("airtime", "team add"), a zod schema over its
// options, and a run function returning one JSON-serialisable document.
// The dispatcher (server/cli.ts) prints that document with --json, or the
// command's own text form without it; errors become one line on stderr.
import { z } from 'zod';
import type { HelpText } from './help-texts.ts';

/** Raised for anything the user must fix; printed as one line, exit code 2. */
export class CliUsageError extends Error {}

/** Raw options as parsed from argv: `--key value`, `--key=value`, `--flag`. */
export type RawOptions = Record<string, string | true>;

export interface CliContext {
  /** Reads all of standard input (for `--input -`). */
  readStdin: () => Promise<string>;
  /** Writes progress to stderr (only shown when stderr is a terminal). */
  progress: (fraction: number, label?: string) => void;
}

export interface CliCommand<S extends z.ZodType = z.ZodType> extends CommandDefinition<S> {
  /** One line for `earshot help`; it lives in the command index (server/cli/commands.ts). */
  summary: string;
}

/** What a command module defines: everything but the summary, which the index holds. */
export interface CommandDefinition<S extends z.ZodType = z.ZodType> {
  /** Command words, e.g. "airtime" or "token issue". */
  words: string;
  /** Schema over the options with their kebab-case names as keys (values arrive as strings or `true`). */
  options: S;
  run: (options: z.infer<S>, context: CliContext) => Promise<unknown> | unknown;
  /** Example command lines shown by `earshot <command> --help`. */
  examples?: string[];
  /** Human-readable form when --json is not given; defaults to pretty JSON. */
  formatText?: (result: unknown) => string;
}

/** Helper so each command file gets its option types inferred. */
export function defineCommand<S extends z.ZodType>(command: CommandDefinition<S>): CommandDefinition {
  return command as unknown as CommandDefinition;
}

/** Splits argv into command words and raw options. */
export function parseArgv(argv: string[]): { words: string[]; options: RawOptions } {
  const words: string[] = [];
  const options: RawOptions = {};
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (arg.startsWith('--')) {
      const body = arg.slice(2);
      const eq = body.indexOf('=');
      if (eq >= 0) {
        options[body.slice(0, eq)] = body.slice(eq + 1);
      } else {
        const next = argv[i + 1];
        // A following token is this option's value unless it is another option.
        // Negative numbers ("-3.5") are values, not options.
        if (next !== undefined && (!next.startsWith('--') || /^-\d/.test(next))) {
          options[body] = next;
          i++;
        } else {
          options[body] = true;
        }
      }
    } else if (Object.keys(options).length === 0) {
      words.push(arg);
    } else {
      throw new CliUsageError(`unexpected argument "${arg}"`);
    }
  }
  return { words, options };
}

/** Turns a zod error into one line naming the option and the rule. */
export function describeOptionError(error: z.ZodError): string {
  const issue = error.issues[0];
  const path = issue.path.length > 0 ? `--${issue.path.join('.')}` : 'options';
  return `${path}: ${issue.message}`;
}

/** Number option given as a string on the command line. */
export const numberOption = () =>
  z.union([z.string(), z.literal(true)]).transform((value, ctx) => {
    const parsed = typeof value === 'string' ? Number(value) : Number.NaN;
    if (!Number.isFinite(parsed)) {
      ctx.addIssue({ code: 'custom', message: 'must be a finite number' });
      return z.NEVER;
    }
    return parsed;
  });

/** Integer option given as a string on the command line. */
export const integerOption = () =>
  numberOption().refine((value) => Number.isInteger(value), { message: 'must be a whole number' });

/** String option (a bare flag without a value is rejected). */
export const stringOption = () => z.string({ error: 'needs a value' }).min(1, 'needs a value');

/** "LAT,LON" option. */
export const latLonOption = () =>
  stringOption().transform((value, ctx) => {
    const parts = value.split(',').map((part) => Number(part.trim()));
    if (parts.length !== 2 || !parts.every(Number.isFinite)) {
      ctx.addIssue({ code: 'custom', message: 'must be LAT,LON in decimal degrees' });
      return z.NEVER;
    }
    const [lat, lon] = parts;
    if (lat < -90 || lat > 90) {
      ctx.addIssue({ code: 'custom', message: 'latitude must be within ±90°' });
      return z.NEVER;
    }
    if (lon < -180 || lon > 180) {
      ctx.addIssue({ code: 'custom', message: 'longitude must be within ±180°' });
      return z.NEVER;
    }
    return { lat, lon };
  });

/** Boolean flag: present (`--x`) or `--x on|off|true|false`. */
export const flagOption = () =>
  z
    .union([z.literal(true), z.enum(['on', 'off', 'true', 'false'])])
    .optional()
    .transform((value) => value === true || value === 'on' || value === 'true');

interface ZodDefLike {
  type?: string;
  innerType?: z.ZodType;
  in?: z.ZodType;
  entries?: Record<string, string | number>;
}

interface OptionDoc {
  name: string;
  required: boolean;
  description: string;
  choices: string[];
}

/** Reads the option list out of a command's zod schema (names, required or not, `.describe()` texts, enum values). */
export function describeOptions(schema: z.ZodType): OptionDoc[] {
  const shape = (schema as unknown as { shape?: Record<string, z.ZodType> }).shape;
  if (!shape) return [];
  return Object.entries(shape).map(([name, field]) => {
    let description = field.description ?? '';
    let inner: z.ZodType | undefined = field;
    const choices: string[] = [];
    // Walk through optional/default/pipe wrappers to find a description and enum values.
    for (let guard = 0; inner && guard < 6; guard++) {
      if (!description && inner.description) description = inner.description;
      const def: ZodDefLike | undefined = (inner as unknown as { def?: ZodDefLike }).def;
      if (def?.type === 'enum' && def.entries) choices.push(...Object.values(def.entries).map(String));
      inner = def?.innerType ?? def?.in;
    }
    const required = !field.safeParse(undefined).success;
    return { name, required, description, choices };
  });
}

/** The text of `earshot <command> --help`: summary, options (required first), examples. */
export function commandHelp(command: CliCommand, texts: HelpText = {}): string {
  const docs = describeOptions(command.options)
    .map((doc) => ({ ...doc, description: doc.description || texts.options?.[doc.name] || '' }))
    .sort((a, b) => Number(b.required) - Number(a.required));
  const width = Math.max(8, ...docs.map((d) => d.name.length + 2));
  const lines = [`usage: earshot ${command.words} [options] [--json]`, '', command.summary, ''];
  if (docs.length === 0) lines.push('options: none');
  else {
    lines.push('options:');
    for (const doc of docs) {
      const notes = [doc.required ? 'required' : 'optional', doc.choices.length > 0 ? `one of ${doc.choices.join(' | ')}` : ''].filter(Boolean).join('; ');
      lines.push(`  --${doc.name.padEnd(width)} ${doc.description ? `${doc.description} ` : ''}(${notes})`);
    }
  }
  lines.push(`  --${'json'.padEnd(width)} print one JSON document instead of text`);
  const examples = command.examples ?? texts.examples ?? [`earshot ${command.words}${docs.filter((d) => d.required).map((d) => ` --${d.name} <${d.name}>`).join('')}`];
  lines.push('', examples.length > 1 ? 'examples:' : 'example:', ...examples.map((e) => `  ${e}`));
  return lines.join('\n');
}

/**
 * Plain-text form of a result for commands without their own formatText: indented
 * "key: value" lines (JSON is printed only with --json).
 */
export function plainText(value: unknown, indent = ''): string {
  if (value === null || value === undefined) return `${indent}–`;
  if (typeof value !== 'object') return `${indent}${String(value)}`;
  if (value instanceof Date) return `${indent}${value.toLocaleString()}`;
  const lines: string[] = [];
  if (Array.isArray(value)) {
    if (value.length === 0) return `${indent}(none)`;
    value.forEach((item, i) => {
      if (item !== null && typeof item === 'object') lines.push(`${indent}${i + 1}.`, plainText(item, `${indent}  `));
      else lines.push(`${indent}- ${String(item)}`);
    });
    return lines.join('\n');
  }
  for (const [key, item] of Object.entries(value as Record<string, unknown>)) {
    if (item !== null && typeof item === 'object' && !(item instanceof Date)) lines.push(`${indent}${key}:`, plainText(item, `${indent}  `));
    else lines.push(`${indent}${key}: ${item instanceof Date ? item.toLocaleString() : item === null || item === undefined ? '–' : String(item)}`);
  }
  return lines.join('\n');
}
