// Binding names with owners and kinds: the names-file forms, the integer layout the resolver and
// the masks read, and located errors for bad input. The database side is checked against SQLite's
// own schema tables read through better-sqlite3 (pragma_table_info).
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import { NAME_FACTS, type Grammar } from '../../src/description/ir.ts';
import { bindNames, checkNames, meetKinds, mergeNames, namesFromDatabase, namesFromJson } from '../../src/tree/index.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-bound-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function grammar(...body: string[]): Grammar {
  const text = ['grammar g', 'start Q', 'space " "', 'token Id = /[a-z_]+/ as text', ...body, ''].join('\n');
  const { grammar: g, diagnostics } = compileDescription(text, 'g.twg');
  if (!g) throw new Error(diagnostics.map((d) => d.message).join('\n'));
  return g;
}

const REL = grammar('names T of Id', 'names C of Id in T', 'sort Q { q(t: enter T, c: known C) scope = t c; }');
const KINDS = grammar(
  'kinds K',
  'names E of Id with (is: K)',
  'names P of Id with (a: K, b: K)',
  'sort Q { q(p: P, x: Tm kind p.a, y: Tm kind p.b) = p x y; }',
  'sort Tm kind K { c(e: E kind self) = e; }',
);

describe('names file forms', () => {
  it('a related set: member → owners, laid out as increasing owner ids', () => {
    const names = namesFromJson({ T: ['b', 'a'], C: { x: ['a', 'b'], y: ['b'], z: [] } }, 'n.json', REL);
    expect(names.C).toEqual(['x', 'y', 'z']);
    const b = bindNames(REL, names);
    const c = b.sets[1]!;
    expect([...c.ownerStart!]).toEqual([0, 2, 3, 3]);
    expect([...c.ownerIds!]).toEqual([0, 1, 0]); // a = 1, b = 0 (order of T's list)
    expect(b.incomplete).toEqual([]);
  });

  it('kinds: one slot as a string, several as a list; a family as kind → parent', () => {
    const names = namesFromJson(
      { K: { thing: null, fruit: 'thing', apple: 'fruit' }, E: { e1: 'apple', e2: null }, P: { p: ['thing', 'apple'] } },
      'n.json',
      KINDS,
    );
    expect(Object.keys(names)).toEqual(['E', 'P']); // families are not name sets
    const b = bindNames(KINDS, names);
    const fam = b.families[0]!;
    expect(fam.kinds).toEqual(['thing', 'fruit', 'apple']);
    expect([...fam.parent]).toEqual([-1, 0, 1]);
    expect([...b.sets[0]!.kinds]).toEqual([2, -1]);
    expect([...b.sets[1]!.kinds]).toEqual([0, 2]);
    expect(meetKinds(fam, 0, 2)).toBe(2);
    expect(meetKinds(fam, 2, 1)).toBe(2);
    expect(meetKinds(fam, -1, 1)).toBe(1);
  });

  it('siblings disagree, a chain agrees (meetKinds)', () => {
    const names = namesFromJson({ K: { fruit: null, apple: 'fruit', pear: 'fruit' }, E: [] }, 'n.json', KINDS);
    const fam = bindNames(KINDS, names).families[0]!;
    expect(meetKinds(fam, 1, 2)).toBe(-2);
    expect(meetKinds(fam, 0, 2)).toBe(2);
  });

  it('what is not given is reported as incomplete, not guessed', () => {
    const b = bindNames(REL, { T: ['a'], C: ['x'] });
    expect(b.sets[1]!.ownerIds).toBeNull();
    expect(b.incomplete).toEqual(['C: no owners in T given (`known` checks membership only)']);
  });

  it('facts survive merging, file over database set by set; they stay out of plain views', () => {
    const a = namesFromJson({ T: ['a', 'b'], C: { x: ['a'] } }, 'db', REL);
    const b = namesFromJson({ C: { y: ['b'] } }, 'file', REL);
    const m = mergeNames(a, b);
    expect(m.C).toEqual(['y']);
    expect(m[NAME_FACTS]!.owners.C).toEqual({ y: ['b'] });
    expect(a).toEqual({ T: ['a', 'b'], C: ['x'] });
    expect(JSON.stringify(a)).toBe('{"T":["a","b"],"C":["x"]}');
  });
});

describe('bad input: located errors', () => {
  const bad = (g: Grammar, value: unknown) => {
    try {
      checkNames(g, namesFromJson(value, 'n.json', g), 'n.json');
    } catch (e) {
      return (e as Error).message;
    }
    return 'no error';
  };
  it('a relation naming an unknown member', () => {
    expect(bad(REL, { T: ['a'], C: { x: ['a', 'q'] } })).toBe("n.json: $.C.x[1]: 'q' is not a member of T");
  });
  it('a kind cycle', () => {
    expect(bad(KINDS, { K: { a: 'b', b: 'c', c: 'a' }, E: [] })).toBe('n.json: $.K.a: kind cycle: a → b → c → a');
    expect(bad(KINDS, { K: { a: 'a' }, E: [] })).toBe('n.json: $.K.a: kind cycle: a → a');
  });
  it('an unknown kind or parent', () => {
    expect(bad(KINDS, { K: ['thing'], E: { e: 'thing' }, P: { p: ['thing', 'thng'] } })).toBe(
      "n.json: $.P.p[1]: unknown kind 'thng' (kinds of K: thing)",
    );
    expect(bad(KINDS, { K: { a: 'z' } })).toBe("n.json: $.K.a: unknown parent kind 'z' (kinds of K: a)");
  });
  it('wrong shapes', () => {
    expect(bad(KINDS, { P: { p: 'thing' } })).toBe('n.json: $.P.p: expected a list of 2 kinds (a: K, b: K), got "thing"');
    expect(bad(REL, { C: { x: 'a' } })).toBe('n.json: $.C.x: expected a list of T names (the members x belongs to), got "a"');
    expect(bad(REL, { T: { a: [] } })).toBe('n.json: $.T: name set T has no owners and no kinds in g; expected a list of names');
    expect(bad(REL, { Z: { a: [] } })).toBe('n.json: $.Z: g has no name set or kind family Z (it has: T, C)');
    expect(() => namesFromJson({ C: { x: [] } }, 'n.json')).toThrow('n.json: $.C: the object form needs the grammar to be read; give a list of names');
  });
  it('a schema with no tables', () => {
    const path = join(dir, 'empty.db');
    new Database(path).close();
    expect(() => namesFromDatabase(path)).toThrow(`${path}: the database has no tables, so no query over it can run`);
  });
});

describe('--db binds each column with the tables that have it', () => {
  it('matches pragma_table_info on an invented schema', () => {
    const path = join(dir, 'nursery.db');
    const db = new Database(path);
    db.exec('CREATE TABLE beds (id INTEGER, row_no INTEGER, soil TEXT); CREATE TABLE seedlings (id INTEGER, bed_id INTEGER, sown TEXT, soil TEXT);');
    db.close();
    const names = namesFromDatabase(path);
    const sql = loadGrammar('grammars/sql/sql.twg');
    checkNames(sql, names, path);
    const b = bindNames(sql, names);
    const col = b.sets.find((s) => s.set.name === 'Column')!;
    const tables = b.sets.find((s) => s.set.name === 'Table')!;
    const ownersOf = (c: string) => {
      const m = col.id.get(c)!;
      return [...col.ownerIds!.subarray(col.ownerStart![m]!, col.ownerStart![m + 1]!)].map((t) => tables.members[t]);
    };
    expect(ownersOf('id')).toEqual(['beds', 'seedlings']);
    expect(ownersOf('soil')).toEqual(['beds', 'seedlings']);
    expect(ownersOf('bed_id')).toEqual(['seedlings']);
    expect(ownersOf('row_no')).toEqual(['beds']);
  });
});
