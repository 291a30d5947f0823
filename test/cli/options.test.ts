/**
 * The shared CLI options, command by command, from a working folder outside the project: shipped
 * grammar names resolve inside the package, `--db` takes a SQLite file or a `.sql` script (the
 * same answers either way), and numbers are refused by commander's argument parsers before a
 * command runs.
 */
import Database from 'better-sqlite3';
import { copyFileSync, existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { buildSqliteFileFrom } from '../../src/exec/database.ts';
import { namesFromDatabase } from '../../src/tree/index.ts';

// model runs share two cores with other work: generous limits, no timing assertions
vi.setConfig({ testTimeout: 180_000, hookTimeout: 60_000 });

const ROOT = resolve('.');
const FIXTURE = join(ROOT, 'test/fixtures/tiny-seq2seq');
const away = mkdtempSync(join(tmpdir(), 'tw-cli-away-'));
let home = '';

beforeAll(() => {
  // the script and a database built from it, side by side in a folder outside the project
  copyFileSync(join(ROOT, 'grammars/sql/coop.sql'), join(away, 'coop.sql'));
  buildSqliteFileFrom(join(away, 'coop.sql'), join(away, 'coop.sqlite'));
  home = process.cwd();
  process.chdir(away);
});
afterAll(() => {
  process.chdir(home);
  rmSync(away, { recursive: true, force: true });
});
afterEach(() => vi.restoreAllMocks());

async function run(args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  vi.spyOn(process.stdout, 'write').mockImplementation((s) => ((out += String(s)), true));
  vi.spyOn(process.stderr, 'write').mockImplementation((s) => ((err += String(s)), true));
  try {
    return { code: await main(args), out, err };
  } finally {
    vi.restoreAllMocks();
  }
}

describe('shipped grammar names from a folder outside the project', () => {
  it('check, parse, print, schema and sample resolve arith, json, lf and sql in the package', async () => {
    expect(process.cwd()).toBe(away);
    const check = await run(['check', 'sql']);
    expect(check.code, check.err).toBe(0);
    expect(check.out.split('\n')[0]).toBe(`grammar      sql (${join(ROOT, 'grammars/sql/sql.twg')})`);

    writeFileSync('sum.arith', '1 + 2 * 3\n');
    const parsed = await run(['parse', '--grammar', 'arith', 'sum.arith']);
    expect(parsed.code, parsed.err).toBe(0);
    writeFileSync('sum.json', parsed.out);
    const printed = await run(['print', '--grammar', 'arith', 'sum.json']);
    expect(printed).toEqual({ code: 0, out: '1 + 2 * 3\n', err: '' });

    const schema = await run(['schema', '--grammar', 'json']);
    expect(schema.code, schema.err).toBe(0);
    expect(JSON.parse(schema.out).$schema).toBe('https://json-schema.org/draft/2020-12/schema');

    const sample = await run(['sample', '--grammar', 'lf', '-n', '2', '--names', join(ROOT, 'grammars/lf/samples/names.json')]);
    expect(sample.code, sample.err).toBe(0);
    expect(sample.out.trim().split('\n')).toHaveLength(2);
  });

  it('a path still works, and a name that is neither is refused with the shipped names listed', async () => {
    copyFileSync(join(ROOT, 'grammars/arith/arith.twg'), 'mine.twg');
    expect((await run(['parse', '--grammar', 'mine.twg', 'sum.arith'])).code).toBe(0);
    const bad = await run(['sample', '--grammar', 'nosuch']);
    expect(bad.code).toBe(1);
    expect(bad.err).toBe("error: option '--grammar <g>' argument 'nosuch' is invalid. no such file, and no shipped grammar of that name; expected a .twg file or one of arith, json, lf, shed_commands, sql\n");
  });
});

describe('--db takes a SQLite file or a .sql script', () => {
  it('sample, schema and parse give the same result from the script as from the database', async () => {
    for (const args of [
      ['sample', '--grammar', 'sql', '-n', '4', '--seed', '3', '--max-depth', '4', '--weight', 'join=0'],
      ['schema', '--grammar', 'sql'],
    ]) {
      const fromDb = await run([...args, '--db', 'coop.sqlite']);
      const fromScript = await run([...args, '--db', 'coop.sql']);
      expect(fromDb.code, fromDb.err).toBe(0);
      expect(fromScript).toEqual(fromDb);
    }
    const schema = JSON.parse((await run(['schema', '--grammar', 'sql', '--db', 'coop.sql'])).out);
    expect(JSON.stringify(schema)).toContain(JSON.stringify(namesFromDatabase('coop.sqlite').Table));
    writeFileSync('q.sql', 'SELECT name FROM orchards WHERE hectares > 5');
    const parsed = await run(['parse', '--grammar', 'sql', '--db', 'coop.sql', 'q.sql']);
    expect(parsed.code, parsed.err).toBe(0);
    writeFileSync('bad.sql', 'SELECT name FROM barns');
    const unknown = await run(['parse', '--grammar', 'sql', '--db', 'coop.sql', 'bad.sql']);
    expect(unknown.code).toBe(1);
    expect(unknown.err.split('\n')[0]).toBe("bad.sql:1:18: unknown name 'barns' for Table");
  });

  it('lf binds its names from the fact base read from the script', async () => {
    writeFileSync('q.lf', 'lambda $x. grower($x) & lives_in($x, oakmere)');
    const r = await run(['parse', '--grammar', 'lf', '--db', 'coop.sql', 'q.lf']);
    expect(r.code, r.err).toBe(0);
    writeFileSync('q.lf', 'lambda $x. orchard($x) & owns(nobody_at_all, $x)');
    expect((await run(['parse', '--grammar', 'lf', '--db', 'coop.sql', 'q.lf'])).err.split('\n')[0]).toBe("q.lf:1:31: unknown name 'nobody_at_all' for Entity");
  });

  it('mask reads the script', async () => {
    const tokenizer = join(FIXTURE, 'tokenizer.json');
    const args = ['mask', '--grammar', 'sql', '--tokenizer', tokenizer, '--prefix', 'SELECT name FROM orch', '--json', '--no-cache'];
    const a = await run([...args, '--db', 'coop.sql']);
    expect(a.code, a.err).toBe(0);
    expect(JSON.parse(a.out)).toMatchObject({ viable: true, complete: false });
    expect(await run([...args, '--db', 'coop.sqlite'])).toEqual(a);
  });

  it('generate decodes with names from the script, for sql and for lf', async () => {
    for (const grammar of ['sql', 'lf']) {
      const r = await run(['generate', '--model', FIXTURE, '--grammar', grammar, '--db', 'coop.sql', '--max-tokens', '24', '--json', 'which orchards are high up?']);
      expect(r.code, r.err).toBe(0);
      const o = JSON.parse(r.out);
      expect(o.constrained).toBe(true);
      expect(o.well_typed).toBe(true);
    }
  });

  it('evaluate runs the programs on the database built from the script', async () => {
    const rows = ['SELECT COUNT(*) FROM orchards', 'SELECT name FROM sheds'].map((sql, i) => JSON.stringify({ id: `q${i}`, split: 'test', question: `question ${i}?`, sql }));
    writeFileSync('data.jsonl', rows.join('\n') + '\n');
    const r = await run(['evaluate', '--model', FIXTURE, '--grammar', 'sql', '--data', 'data.jsonl', '--db', 'coop.sql', '--out', 'eval', '--max-tokens', '12']);
    expect(r.code, r.err).toBe(0);
    const results = readFileSync('eval/results.jsonl', 'utf8').trim().split('\n').map((l) => JSON.parse(l));
    expect(results).toHaveLength(4);
    // the gold programs ran on the built database
    for (const row of results) expect(row.gold_error, JSON.stringify(row)).toBe(null);
  });

  it('a script that reaches for another file is refused, and the file is not created', async () => {
    writeFileSync('evil.sql', "CREATE TABLE t (x);\nATTACH 'planted.sqlite' AS p;\n");
    const r = await run(['sample', '--grammar', 'sql', '--db', 'evil.sql']);
    expect(r.code).toBe(1);
    expect(r.err).toBe(
      'evil.sql:2:1: ATTACH is not allowed in a script; expected statements that build a database (CREATE, INSERT, UPDATE, DELETE, PRAGMA, …) — ATTACH, DETACH and VACUUM could reach other files\n',
    );
    expect(existsSync('planted.sqlite')).toBe(false);
  });

  it('a file that is neither is refused before the command runs', async () => {
    writeFileSync('notes.txt', 'orchards');
    const r = await run(['sample', '--grammar', 'sql', '--db', 'notes.txt']);
    expect(r).toEqual({
      code: 1,
      out: '',
      err: `error: option '--db <file>' argument 'notes.txt' is invalid. not a SQLite database (no "SQLite format 3" header) and not a .sql script; expected one of them\n`,
    });
    expect((await run(['generate', '--model', FIXTURE, '--grammar', 'sql', '--db', 'missing.sql', 'q'])).err).toBe(
      "error: option '--db <file>' argument 'missing.sql' is invalid. no such file; expected a SQLite database or a .sql script\n",
    );
  });
});

describe('numbers are parsed by commander', () => {
  it.each([
    [['sample', '--grammar', 'arith', '--max-depth', '0'], "error: option '--max-depth <d>' argument '0' is invalid. expected an integer ≥ 1\n"],
    [['sample', '--grammar', 'arith', '--seed', '1.5'], "error: option '--seed <s>' argument '1.5' is invalid. expected an integer\n"],
    [['sample', '--grammar', 'arith', '--weight', 'num=-1'], "error: option '--weight <ctor=w...>' argument 'num=-1' is invalid. expected a weight ≥ 0 after num=\n"],
    [['generate', '--model', 'm', '--grammar', 'arith', '--beam', '65', 'q'], "error: option '--beam <k>' argument '65' is invalid. expected an integer from 1 to 64\n"],
    [['generate', '--model', 'm', '--grammar', 'arith', '--temperature', '0', 'q'], "error: option '--temperature <t>' argument '0' is invalid. expected a number > 0\n"],
    [['generate', '--model', 'm', '--grammar', 'arith', '--top-p', '1.5', 'q'], "error: option '--top-p <p>' argument '1.5' is invalid. expected a number > 0 and ≤ 1\n"],
    [['generate', '--model', 'm', '--grammar', 'arith', '--beam', '2', '--sample', 'q'], "error: option '--beam <k>' cannot be used with option '--sample'\n"],
    [['evaluate', '--model', 'm', '--grammar', 'sql', '--data', 'd', '--out', 'o', '--limit', 'all'], "error: option '--limit <n>' argument 'all' is invalid. expected an integer ≥ 1\n"],
    [['bench', '--grammar', 'sql', '--programs', ''], "error: option '--programs <n>' argument '' is invalid. expected an integer ≥ 1\n"],
    [['serve', '--max-queued', '-1'], "error: option '--max-queued <n>' argument '-1' is invalid. expected an integer ≥ 0\n"],
  ])('%j', async (args, message) => {
    expect(await run(args)).toEqual({ code: 1, out: '', err: message });
  });
});

describe('one set of help texts', () => {
  it('every shared option reads the same in every command', async () => {
    const help = new Map<string, Set<string>>();
    for (const command of ['parse', 'print', 'schema', 'sample', 'mask', 'bench', 'generate', 'evaluate', 'serve']) {
      const { out } = await run([command, '--help']);
      // option lines: two spaces, the flags, two or more spaces, the description; commander wraps
      // long descriptions onto lines indented further
      const lines = out.split('\n');
      for (let i = 0; i < lines.length; i++) {
        const m = /^ {2}(-\S.*?) {2,}(.*)$/.exec(lines[i]!);
        if (!m) continue;
        let text = m[2]!;
        while (i + 1 < lines.length && /^ {4,}\S/.test(lines[i + 1]!)) text += ' ' + lines[++i]!.trim();
        const flag = m[1]!.split(/[ ,]/)[0]!;
        if (!['--names', '--db', '--tokenizer', '--max-tokens', '--beam', '--cache', '--no-cache'].includes(flag)) continue;
        if (!help.has(flag)) help.set(flag, new Set());
        help.get(flag)!.add(text);
      }
    }
    expect([...help.keys()].sort()).toEqual(['--beam', '--cache', '--db', '--max-tokens', '--names', '--no-cache', '--tokenizer']);
    for (const [flag, texts] of help) expect([...texts], flag).toHaveLength(1);
  });
});

describe('a SQLite database given to --db is opened, not changed', () => {
  it('the file is the same after a command', async () => {
    const before = readFileSync('coop.sqlite');
    expect((await run(['sample', '--grammar', 'sql', '--db', 'coop.sqlite', '-n', '2'])).code).toBe(0);
    expect(readFileSync('coop.sqlite').equals(before)).toBe(true);
    const db = new Database('coop.sqlite', { readonly: true });
    expect(db.prepare('SELECT COUNT(*) FROM orchards').pluck().get()).toBeGreaterThan(0);
    db.close();
  });
});
