import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.ts';

let out = '';
let err = '';
beforeEach(() => {
  out = '';
  err = '';
  vi.spyOn(process.stdout, 'write').mockImplementation((s) => ((out += String(s)), true));
  vi.spyOn(process.stderr, 'write').mockImplementation((s) => ((err += String(s)), true));
});
afterEach(() => {
  vi.restoreAllMocks();
});

const dir = mkdtempSync(join(tmpdir(), 'tw-check-'));
function file(name: string, text: string): string {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
}

describe('treewright check', () => {
  it('prints a summary and exits 0 for a shipped grammar', async () => {
    expect(await main(['check', 'grammars/arith/arith.twg'])).toBe(0);
    expect(out).toBe(
      [
        'grammar      arith (grammars/arith/arith.twg)',
        'start        Expr',
        'sorts        1: Expr',
        'constructors 8: add sub mul div neg pow call num',
        'tokens       2: Num Name',
        'name sets    1: Func',
        'keywords     8',
        'warnings     0',
        '',
      ].join('\n'),
    );
    expect(err).toBe('');
  });

  it('prints warnings on stderr and still exits 0', async () => {
    const p = file('orchard.twg', 'grammar orchard\nstart Tree\nspace " "\nsort Tree { apple() = "apple"; }\nsort Shed { shed() = "shed"; }\n');
    expect(await main(['check', p])).toBe(0);
    expect(err).toBe(
      [
        `${p}:5:6: warning: sort \`Shed\` cannot occur in a tree of the start sort \`Tree\``,
        '5 | sort Shed { shed() = "shed"; }',
        '  |      ^~~~',
        'hint: use it in a field, or remove it',
        '',
      ].join('\n'),
    );
    expect(out).toContain('warnings     1\n');
  });

  it('prints errors on stderr and exits 1', async () => {
    const p = file('bad.twg', 'grammar orchard\nstart Tree\nspace " "\nsort Tree { apple(x: Pear) = "apple" x; }\n');
    expect(await main(['check', p])).toBe(1);
    expect(out).toBe('');
    expect(err).toBe(
      [
        `${p}:4:22: error: unknown type \`Pear\`: not a sort, token class or name set`,
        '4 | sort Tree { apple(x: Pear) = "apple" x; }',
        '  |                      ^~~~',
        'hint: declare it, or use one of the declared types',
        `${p}: 1 error`,
        '',
      ].join('\n'),
    );
  });

  it('--json reports the same result as an object', async () => {
    const p = file('bad2.twg', 'grammar orchard\nstart Tree\nspace " "\nsort Tree { apple() = "apple" }\n');
    expect(await main(['check', '--json', p])).toBe(1);
    expect(JSON.parse(out)).toEqual({
      ok: false,
      grammar: null,
      sorts: [],
      constructors: [],
      tokens: [],
      name_sets: [],
      warnings: [],
      errors: [
        {
          code: 'syntax',
          message: 'expected ";", "@", a name, a string literal or "[", found `}`',
          file: p,
          line: 4,
          column: 31,
          hint: 'see the reference section of README.md for the notation',
          text: [
            `${p}:4:31: error: expected ";", "@", a name, a string literal or "[", found \`}\``,
            '4 | sort Tree { apple() = "apple" }',
            '  |                               ^',
            'hint: see the reference section of README.md for the notation',
          ].join('\n'),
        },
      ],
    });
    out = '';
    expect(await main(['check', '--json', 'grammars/json/json.twg'])).toBe(0);
    expect(JSON.parse(out)).toEqual({
      ok: true,
      grammar: 'json',
      sorts: ['Value', 'Member'],
      constructors: ['object', 'array', 'string', 'number', 'true', 'false', 'null', 'member'],
      tokens: ['String', 'Number'],
      name_sets: [],
      warnings: [],
      errors: [],
    });
  });

  it('runs as a real process through the bin script', () => {
    vi.restoreAllMocks();
    const stdout = execFileSync(process.execPath, ['src/cli/treewright.mjs', 'check', 'grammars/lf/lf.twg'], { encoding: 'utf8' });
    expect(stdout.split('\n').slice(0, 2)).toEqual(['grammar      lf (grammars/lf/lf.twg)', 'start        Query']);
  }, 60_000); // a fresh Node process loading tsx: seconds on a loaded 2-core machine
});
