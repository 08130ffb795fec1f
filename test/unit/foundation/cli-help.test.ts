// `earshot <command> --help`: every command lists each of its options (required ones first,
// with their rule) and an example; `airtime --help` from the real command line; text output
// without --json is never JSON.
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { commandIndex, commandModules, loadAllCommands } from '../../../server/cli/commands.ts';
import { commandHelp, describeOptions, plainText } from '../../../server/cli/framework.ts';
import { helpTexts } from '../../../server/cli/help-texts.ts';

describe('earshot <command> --help', () => {
  it('the command index and the command modules agree: every indexed command is defined once, every defined command is indexed', async () => {
    const allCommands = await loadAllCommands();
    expect(allCommands.map((c) => c.words)).toEqual(commandIndex.map((e) => e.words));
    expect(new Set(commandIndex.map((e) => e.words)).size).toBe(commandIndex.length);
    const defined = (await Promise.all(commandModules.map((load) => load()))).flat().map((c) => c.words);
    expect([...defined].sort()).toEqual(commandIndex.map((e) => e.words).sort());
  });

  it('every command: all options, which are required, and an example line starting with earshot <command>', async () => {
    const allCommands = await loadAllCommands();
    for (const command of allCommands) {
      const text = commandHelp(command, helpTexts[command.words]);
      for (const option of describeOptions(command.options)) {
        expect(text, `${command.words} --${option.name}`).toMatch(new RegExp(`--${option.name}\\s.*\\((required|optional)`));
      }
      expect(text, command.words).toMatch(new RegExp(`\\nexamples?:\\n  earshot ${command.words}(\\s|$)`));
    }
  });

  it('help texts name only options that exist (a renamed option must update its text)', async () => {
    const allCommands = await loadAllCommands();
    for (const [words, help] of Object.entries(helpTexts)) {
      const command = allCommands.find((c) => c.words === words);
      expect(command, words).toBeDefined();
      const names = describeOptions(command!.options).map((o) => o.name);
      for (const name of Object.keys(help.options ?? {})) expect(names, `${words} --${name}`).toContain(name);
    }
  });

  it('airtime --help from the real command line lists its options and exits 0', () => {
    const result = spawnSync(process.execPath, ['node_modules/tsx/dist/cli.mjs', 'server/cli.ts', 'airtime', '--help'], { encoding: 'utf8', timeout: 120_000 });
    expect(result.status).toBe(0);
    for (const option of ['--sf', '--bw-khz', '--payload-bytes', '--cr', '--preamble-symbols', '--header', '--crc', '--ldro']) expect(result.stdout).toContain(option);
    expect(result.stdout).toMatch(/--sf\s+spreading factor .*\(required\)/);
    expect(result.stdout).toMatch(/--cr\s+.*one of 4\/5 \| 4\/6 \| 4\/7 \| 4\/8/);
    expect(result.stdout).toContain('example:\n  earshot airtime --sf');
  }, 150_000);

  it('text output without --json is key: value lines, not JSON', () => {
    const text = plainText({ plan: 'p1', nodes: [{ id: 'n1', name: 'Pit 4' }], cost: 12.5, note: null });
    expect(text).toBe('plan: p1\nnodes:\n  1.\n    id: n1\n    name: Pit 4\ncost: 12.5\nnote: –');
    expect(() => JSON.parse(text)).toThrow();
  });
});
