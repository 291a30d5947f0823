/**
 * The tree commands end to end through the CLI entry (`main`): parse, print, sample, schema, and
 * names from a JSON file and from a SQLite database (better-sqlite3, opened read-only).
 */
import Database from 'better-sqlite3';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { loadNames, namesFromDatabase } from '../../src/tree/index.ts';

let stdout = '';
let stderr = '';
beforeEach(() => {
  stdout = '';
  stderr = '';
  vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => ((stdout += String(s)), true));
  vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => ((stderr += String(s)), true));
});
afterEach(() => vi.restoreAllMocks());

const dir = mkdtempSync(join(tmpdir(), 'tw-tree-cli-'));
const file = (name: string, text: string) => {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
};

describe('treewright parse / print', () => {
  it('parses a file to a one-line JSON tree, and prints it back', async () => {
    const code = file('a.arith', '(1+2) * max(3,-4)\n');
    expect(await main(['parse', '--grammar', 'arith', code])).toBe(0);
    const tree = JSON.parse(stdout);
    expect(tree.kind).toBe('mul');
    const treeFile = file('a.json', stdout);
    stdout = '';
    expect(await main(['print', '--grammar', 'arith', treeFile])).toBe(0);
    expect(stdout).toBe('(1 + 2) * max(3, -4)\n');
  });
  it('exit 1 and a located error', async () => {
    const code = file('b.arith', '1 +\n');
    expect(await main(['parse', '--grammar', 'arith', code])).toBe(1);
    expect(stdout).toBe('');
    expect(stderr).toBe(`${code}:1:4: expected "(", "-", Num or Func\n1 | 1 +\n  |    ^\n`);
  });
  it('names from --names are checked while parsing', async () => {
    const names = file('names.json', '{"Func": ["max"]}');
    const code = file('c.arith', 'cube(2)');
    expect(await main(['parse', '--grammar', 'arith', '--names', names, code])).toBe(1);
    expect(stderr).toBe(`${code}:1:1: unknown name 'cube' for Func\n1 | cube(2)\n  | ^~~~\n`);
  });
  it('print: a JSON-path error for a bad tree', async () => {
    const t = file('bad.json', '{"kind":"add","left":{"kind":"num","value":1},"right":{"kind":"num","value":"2"}}');
    expect(await main(['print', '--grammar', 'arith', t])).toBe(1);
    expect(stderr).toBe(`${t}: $.right.value: expected Num (a finite number), got "2"\n`);
  });
  it('print: JSON Lines give one program per line, errors name the line', async () => {
    const t = file('trees.jsonl', '{"kind":"num","value":1}\n{"kind":"neg","operand":{"kind":"num","value":2}}\n');
    expect(await main(['print', '--grammar', 'arith', t])).toBe(0);
    expect(stdout).toBe('1\n-2\n');
    const bad = file('bad.jsonl', '{"kind":"num","value":1}\n{"kind":"num"}\n');
    expect(await main(['print', '--grammar', 'arith', bad])).toBe(1);
    expect(stderr).toBe(`${bad}:2: $: missing field "value" of num\n`);
  });
});

describe('treewright sample', () => {
  it('N programs, one per line, reproducible from the seed', async () => {
    expect(await main(['sample', '--grammar', 'lf', '-n', '5', '--seed', '3', '--max-depth', '5'])).toBe(0);
    const first = stdout;
    expect(first.trimEnd().split('\n')).toHaveLength(5);
    stdout = '';
    await main(['sample', '--grammar', 'lf', '-n', '5', '--seed', '3', '--max-depth', '5']);
    expect(stdout).toBe(first);
  });
  it('--json writes trees whose printed form is the program', async () => {
    await main(['sample', '--grammar', 'json', '-n', '4', '--seed', '8']);
    const programs = stdout;
    stdout = '';
    await main(['sample', '--grammar', 'json', '-n', '4', '--seed', '8', '--json']);
    const trees = file('s.jsonl', stdout);
    stdout = '';
    await main(['print', '--grammar', 'json', trees]);
    expect(stdout).toBe(programs);
  });
  it('--weight and bad options', async () => {
    expect(await main(['sample', '--grammar', 'arith', '-n', '50', '--weight', 'call=0', 'pow=0'])).toBe(0);
    expect(stdout).not.toMatch(/[a-z]\(|\^/);
    expect(await main(['sample', '--grammar', 'arith', '-n', 'x'])).toBe(1);
    expect(stderr).toBe("error: option '-n <n>' argument 'x' is invalid. expected an integer ≥ 0\n");
  });
  it('--db binds tables and columns from a SQLite file', async () => {
    const db = join(dir, 'coop.db');
    const h = new Database(db);
    h.exec('CREATE TABLE orchards (id INTEGER, name TEXT, hectares REAL); CREATE TABLE growers (id INTEGER, village TEXT);');
    h.close();
    expect(namesFromDatabase(db)).toEqual({ Table: ['growers', 'orchards'], Column: ['hectares', 'id', 'name', 'village'] });
    expect(await main(['sample', '--grammar', 'sql', '-n', '30', '--db', db])).toBe(0);
    // identifiers outside string literals are the bound names (keywords are upper case)
    const words = new Set(stdout.replace(/'(?:[^']|'')*'/g, '').match(/\b[a-z_]+\b/g));
    for (const w of words) expect(['growers', 'orchards', 'hectares', 'id', 'name', 'village']).toContain(w);
    expect(await main(['sample', '--grammar', 'lf', '--db', db])).toBe(1);
    // lf declares the fact base's sets, which this database (two tables) cannot feed
    expect(stderr).toBe(`${db}: cannot read the fact base for lf's name sets (Entity, Class, Rel, Measure): no such table: varieties; expected the cooperative's tables (grammars/sql/coop.sql), or --names FILE\n`);
  });
});

describe('names files', () => {
  it('errors carry the JSON path', () => {
    expect(() => loadNames(file('n1.json', '["a"]'))).toThrow(': $: expected an object mapping name sets to lists of names, got an array');
    expect(() => loadNames(file('n2.json', '{"Table": ["a", 3]}'))).toThrow(': $.Table[1]: expected a string, got 3');
    expect(loadNames(file('n3.json', '{"Table": ["a"]}'))).toEqual({ Table: ['a'] });
  });
});

describe('treewright schema', () => {
  it('prints a draft 2020-12 schema; bound names become enums', async () => {
    const names = file('f.json', '{"Func": ["max", "min"]}');
    expect(await main(['schema', '--grammar', 'arith', '--names', names])).toBe(0);
    const schema = JSON.parse(stdout);
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema.$defs['names.Func'].enum).toEqual(['max', 'min']);
  });
});
