// README examples stay true: every fenced block preceded by a marker comment is run from the
// repository root.
//
//   <!-- readme-test: output -->  each `$ command` line is run; what it prints (stdout and stderr,
//                                  merged) must equal the lines that follow it up to the next `$`
//                                  line or the end of the block, whatever the exit status
//   <!-- readme-test: output, times vary -->  as `output`, except that a number followed by ` ms`
//                                  matches any number (timings change from run to run)
//   <!-- readme-test: runs -->    each `$ command` line is run and must exit with status 0
//
// A command continues on the next line when its line ends with `\`. `npx treewright` runs this
// checkout's CLI (node src/cli/treewright.mjs), which is what npx resolves it to.
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';

export interface ReadmeCommand {
  readonly line: number;
  readonly command: string;
  readonly expected: string;
}
export interface ReadmeBlock {
  readonly line: number;
  readonly mode: 'output' | 'timed' | 'runs';
  readonly commands: readonly ReadmeCommand[];
}

/** The marked blocks of a Markdown text, with their commands and expected output. */
export function markedBlocks(text: string): ReadmeBlock[] {
  const lines = text.split('\n');
  const blocks: ReadmeBlock[] = [];
  for (let i = 0; i < lines.length; i++) {
    const m = /^<!-- readme-test: (output|output, times vary|runs) -->$/.exec(lines[i]!);
    if (!m) continue;
    const fence = i + 1;
    if (!/^```/.test(lines[fence] ?? '')) throw new Error(`README.md:${i + 1}: a readme-test marker must stand right before a fenced block`);
    let end = fence + 1;
    while (end < lines.length && !/^```\s*$/.test(lines[end]!)) end++;
    if (end >= lines.length) throw new Error(`README.md:${fence + 1}: the block is not closed`);
    const commands: ReadmeCommand[] = [];
    let j = fence + 1;
    while (j < end) {
      if (!lines[j]!.startsWith('$ ')) {
        if (commands.length === 0) throw new Error(`README.md:${j + 1}: a marked block begins with a \`$ \` command line`);
        j++;
        continue;
      }
      const at = j + 1;
      let command = lines[j]!.slice(2);
      while (command.endsWith('\\') && j + 1 < end) command += '\n' + lines[++j]!;
      j++;
      const out: string[] = [];
      while (j < end && !lines[j]!.startsWith('$ ')) out.push(lines[j++]!);
      commands.push({ line: at, command, expected: out.join('\n') });
    }
    blocks.push({ line: fence + 1, mode: m[1] === 'output, times vary' ? 'timed' : (m[1] as 'output' | 'runs'), commands });
    i = end;
  }
  return blocks;
}

/** Output with every timing (a number followed by ` ms`) replaced by `… ms`. */
export function withoutTimes(text: string): string {
  return text.replace(/\b\d+(?:\.\d+)? ms\b/g, '… ms');
}

function run(command: string): { status: number | null; output: string } {
  const local = command.replace(/\bnpx treewright\b/g, 'node src/cli/treewright.mjs');
  const r = spawnSync('sh', ['-c', `{ ${local}\n} 2>&1`], {
    encoding: 'utf8',
    timeout: 240_000,
    env: { ...process.env, NO_COLOR: '1', FORCE_COLOR: '0' },
  });
  return { status: r.status, output: r.stdout.replace(/\n$/, '') };
}

const blocks = markedBlocks(readFileSync('README.md', 'utf8'));

describe('README', () => {
  it('has marked blocks', () => {
    expect(blocks.length).toBeGreaterThanOrEqual(3);
  });

  it('reads markers, continuation lines and expected output', () => {
    const md = ['<!-- readme-test: output -->', '```', '$ echo a \\', '  b', 'a b', '$ true', '```', 'x', '<!-- readme-test: runs -->', '```sh', '$ ls', '```'].join('\n');
    expect(markedBlocks(md)).toEqual([
      { line: 2, mode: 'output', commands: [{ line: 3, command: 'echo a \\\n  b', expected: 'a b' }, { line: 6, command: 'true', expected: '' }] },
      { line: 10, mode: 'runs', commands: [{ line: 11, command: 'ls', expected: '' }] },
    ]);
    expect(run('echo a \\\n  b; echo err >&2')).toEqual({ status: 0, output: 'a b\nerr' });
    expect(markedBlocks(['<!-- readme-test: output, times vary -->', '```', '$ true', '```'].join('\n'))[0]!.mode).toBe('timed');
    expect(withoutTimes('model 41.3 ms · mask 5 ms · 44 tokens')).toBe('model … ms · mask … ms · 44 tokens');
    expect(withoutTimes('model 41.3 ms')).not.toBe(withoutTimes('model 41.3 s'));
  });

  for (const b of blocks) {
    for (const c of b.commands) {
      it(`README.md:${c.line}: ${c.command.split('\n')[0]}`, () => {
        const r = run(c.command);
        if (b.mode === 'runs') expect(r.status, r.output).toBe(0);
        else if (b.mode === 'timed') expect(withoutTimes(r.output)).toBe(withoutTimes(c.expected));
        else expect(r.output).toBe(c.expected);
      }, 300_000);
    }
  }
});
