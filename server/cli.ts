// The earshot command line: `npm run --silent earshot -- <command> [options]`.
// Every command takes --json and then prints exactly one JSON document on
// stdout; an error exits non-zero with a one-line message on stderr.
import { z } from 'zod';
import { CliUsageError, commandHelp, plainText, describeOptionError, parseArgv, type CliContext } from './cli/framework.ts';
import { commandIndex, findEntry, loadCommand } from './cli/commands.ts';
import { helpTexts } from './cli/help-texts.ts';

function usage(): string {
  const lines = commandIndex.map((command) => `  ${command.words.padEnd(18)} ${command.summary}`);
  return ['usage: earshot <command> [options] [--json]', '', 'commands:', ...lines, '', 'earshot <command> --help lists a command\'s options with an example.'].join('\n');
}

async function readStdin(): Promise<string> {
  const chunks: Buffer[] = [];
  for await (const chunk of process.stdin) chunks.push(chunk as Buffer);
  return Buffer.concat(chunks).toString('utf8');
}

function progress(fraction: number, label = ''): void {
  if (!process.stderr.isTTY) return;
  const width = 30;
  const filled = Math.round(Math.max(0, Math.min(1, fraction)) * width);
  process.stderr.write(`\r[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${(fraction * 100).toFixed(0)}% ${label}`);
  if (fraction >= 1) process.stderr.write('\n');
}

export async function runCli(argv: string[]): Promise<number> {
  const context: CliContext = { readStdin, progress };
  try {
    const { words, options } = parseArgv(argv);
    const helpEntry = findEntry((words[0] === 'help' ? words.slice(1) : words).join(' '));
    if (helpEntry && (options.help === true || words[0] === 'help')) {
      const helpFor = await loadCommand(helpEntry);
      process.stdout.write(`${commandHelp(helpFor, helpTexts[helpFor.words])}\n`);
      return 0;
    }
    if (words.length === 0 || words[0] === 'help' || options.help === true) {
      process.stdout.write(`${usage()}\n`);
      return words.length === 0 && options.help !== true ? 2 : 0;
    }
    const commandWords = words.join(' ');
    const entry = findEntry(commandWords);
    if (!entry) throw new CliUsageError(`unknown command "${commandWords}" (try: earshot help)`);
    const command = await loadCommand(entry);
    const json = options.json === true;
    delete options.json;
    const parsed = command.options.safeParse(options);
    if (!parsed.success) throw new CliUsageError(describeOptionError(parsed.error));
    const result = await command.run(parsed.data, context);
    if (json) process.stdout.write(`${JSON.stringify(result)}\n`);
    else process.stdout.write(`${command.formatText ? command.formatText(result) : plainText(result)}\n`);
    return 0;
  } catch (error) {
    const message = error instanceof z.ZodError ? describeOptionError(error) : error instanceof Error ? error.message : String(error);
    process.stderr.write(`earshot: ${message.split('\n')[0]}\n`);
    return error instanceof CliUsageError ? 2 : 1;
  }
}

const isMain = process.argv[1] && import.meta.url.endsWith(process.argv[1].split('/').pop() ?? '');
if (isMain) {
  runCli(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
}
