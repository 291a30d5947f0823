/**
 * The command registry (src/cli/commands/index.ts) lists every command for `treewright --help`
 * without loading it: its terms and summaries must be what each command's own registration gives,
 * or the help text would drift from the commands. Checked with commander's own Help class.
 */
import { Command, Help } from 'commander';
import { describe, expect, it, vi } from 'vitest';
import { COMMANDS } from '../../src/cli/commands/index.ts';
import { main } from '../../src/cli/main.ts';

async function captured(argv: string[]): Promise<{ code: number; out: string }> {
  let out = '';
  const spy = vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => {
    out += String(chunk);
    return true;
  });
  try {
    return { code: await main(argv), out };
  } finally {
    spy.mockRestore();
  }
}

describe('command registry', () => {
  it('names each command once', () => {
    const names = COMMANDS.map((c) => c.name);
    expect(new Set(names).size).toBe(names.length);
  });

  for (const entry of COMMANDS) {
    it(`${entry.name}: the listed term and summary are the command's own`, async () => {
      const program = new Command();
      (await entry.load()).register(program, () => {});
      expect(program.commands.map((c) => c.name())).toEqual([entry.name]);
      const cmd = program.commands[0]!;
      expect(new Help().subcommandTerm(cmd)).toBe(entry.term);
      expect(cmd.description()).toBe(entry.summary);
    });
  }

  it('`--help` lists every command with its term and summary, as with all commands loaded', async () => {
    const { code, out } = await captured(['--help']);
    expect(code).toBe(0);
    const full = new Command().name('treewright');
    for (const entry of COMMANDS) (await entry.load()).register(full, () => {});
    full.command('help [command]').description('display help for command');
    const listed = (text: string) => text.slice(text.indexOf('Commands:'));
    expect(listed(out)).toBe(listed(full.helpInformation()));
  });

  it('`help NAME` and `NAME --help` load the command and print its own help', async () => {
    const a = await captured(['help', 'generate']);
    const b = await captured(['generate', '--help']);
    expect(a.code).toBe(0);
    expect(a.out.split('\n')[0]).toBe('Usage: treewright generate [options] <question>');
    expect(a.out).toContain('--grammar <g>');
    expect(b.out).toBe(a.out);
  });
});
