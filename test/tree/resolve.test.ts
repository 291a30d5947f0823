/**
 * Name resolution (tree/resolve.ts) against SQLite's own: for hand-written queries over the demo
 * database, resolveTree finds no issue exactly when SQLite's `prepare` (better-sqlite3 12.x,
 * bundled SQLite 3.5x) accepts the text, and its message says what SQLite's says (no such column /
 * ambiguous column name). Kinds are checked on hand-written logical forms over a small invented
 * names file (the verdicts are worked out by hand from the rules in README "Scopes, relations and
 * kinds").
 */
import { rmSync } from 'node:fs';
import { dirname } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import { bindNames, createParser, loadNames, namesFromDatabase, namesFromJson, resolveTree, type Tree } from '../../src/tree/index.ts';
import { coopDatabase, coopDatabaseFile, readSamples } from '../grammars/support.ts';

const sql = loadGrammar('grammars/sql/sql.twg');
const lf = loadGrammar('grammars/lf/lf.twg');
const dbFile = coopDatabaseFile();
const db = coopDatabase();
const names = namesFromDatabase(dbFile);
afterAll(() => rmSync(dirname(dbFile), { recursive: true, force: true }));

/** Parses structure only (no names, so resolution is not applied by the parser) and resolves. */
function resolveSql(text: string): string[] {
  const tree = createParser(sql).parse(text, { resolve: false }) as Tree;
  return resolveTree(sql, tree, names).map((i) => `${i.path}: ${i.message}`);
}

function sqlite(text: string): string | null {
  try {
    db.prepare(text);
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

// [query, what SQLite says (a fragment of its message, or null when it prepares)]
const CASES: readonly [string, string | null][] = [
  ['SELECT name FROM growers', null],
  ['SELECT category FROM growers', 'no such column: category'],
  ['SELECT hectares FROM growers', 'no such column: hectares'],
  ['SELECT name FROM growers JOIN orchards ON grower_id = growers.id', 'ambiguous column name: name'],
  ['SELECT village FROM growers JOIN orchards ON grower_id = growers.id', null],
  ['SELECT orchards.name FROM growers JOIN orchards ON orchards.grower_id = growers.id', null],
  ['SELECT orchards.name FROM growers', 'no such column: orchards.name'],
  ['SELECT growers.hectares FROM growers JOIN orchards ON grower_id = growers.id', 'no such column: growers.hectares'],
  ['SELECT name FROM growers JOIN growers ON id = id', 'ambiguous column name'],
  ['SELECT name FROM lots JOIN orchards ON lots.orchard_id = orchards.id JOIN lots ON lots.id = orchards.id', 'ambiguous column name'],
  // late introduction: a JOIN's ON may name a table joined after it (inner joins)
  ['SELECT tonnes FROM lots JOIN orchards ON lots.orchard_id = orchards.id JOIN growers ON orchards.grower_id = growers.id', null],
  ['SELECT tonnes FROM lots JOIN orchards ON orchards.grower_id = growers.id JOIN growers ON lots.orchard_id = orchards.id', null],
  // subqueries see the enclosing query's tables; inner tables win for unqualified names
  ['SELECT name FROM growers WHERE id IN (SELECT grower_id FROM orchards WHERE village = \'Oakmere\')', null],
  ['SELECT name FROM growers WHERE id IN (SELECT grower_id FROM orchards WHERE name = \'Fox Run\')', null],
  ['SELECT name FROM growers WHERE id IN (SELECT grower_id FROM orchards WHERE growers.joined_year > 2000)', null],
  ['SELECT name FROM growers WHERE id IN (SELECT grower_id FROM orchards WHERE tonnes > 2)', 'no such column: tonnes'],
  ['SELECT tonnes FROM growers WHERE id IN (SELECT grower_id FROM orchards)', 'no such column: tonnes'],
  ['SELECT name FROM growers WHERE id IN (SELECT orchards.id FROM lots)', 'no such column: orchards.id'],
  ['SELECT name FROM orchards WHERE id IN (SELECT orchard_id FROM lots WHERE orchards.hectares > 2)', null],
  ['SELECT grade, COUNT(*) FROM lots GROUP BY grade HAVING SUM(hectares) > 3', 'no such column: hectares'],
  ['SELECT grade, COUNT(*) FROM lots GROUP BY village', 'no such column: village'],
  ['SELECT village FROM growers ORDER BY hectares', 'no such column: hectares'],
];

describe('sql: resolveTree agrees with SQLite prepare', () => {
  for (const [text, expected] of CASES) {
    it(text, () => {
      const verdict = sqlite(text);
      if (expected === null) expect(verdict).toBeNull();
      else expect(verdict).toContain(expected);
      const issues = resolveSql(text);
      expect(issues.length === 0, issues.join('\n')).toBe(verdict === null);
    });
  }

  it('words its issues after SQLite (no such / ambiguous / not a column of)', () => {
    expect(resolveSql('SELECT category FROM growers')).toEqual(['$.items[0].col.column: `category` is not a Column of any Table in scope (growers)']);
    expect(resolveSql('SELECT name FROM growers JOIN orchards ON grower_id = growers.id')).toEqual([
      '$.items[0].col.column: `name` is ambiguous: a Column of growers and orchards in the same scope; name its Table',
    ]);
    expect(resolveSql('SELECT orchards.name FROM growers')).toEqual(['$.items[0].col.table: `orchards` is not a Table in scope (in scope: growers)']);
    expect(resolveSql('SELECT growers.hectares FROM growers JOIN orchards ON grower_id = growers.id')).toEqual([
      '$.items[0].col.column: `hectares` is not a Column of `growers` (its Column names: id, joined_year, name, village)',
    ]);
    expect(resolveSql('SELECT village FROM growers JOIN growers ON id = id')[0]).toBe(
      '$.joins[0].table: `growers` is already a Table of this scope (at $.from); a scope takes each Table once',
    );
  });

  it('every hand-written valid program resolves', () => {
    for (const { line, text } of readSamples('grammars/sql/samples/valid.sql')) {
      expect(resolveSql(text), `valid.sql:${line}`).toEqual([]);
      expect(sqlite(text), `valid.sql:${line}`).toBeNull();
    }
  });
});

describe('the parser reports resolution issues with locations', () => {
  it('points at the column', () => {
    const p = createParser(sql);
    expect(() => p.parse('SELECT name, category FROM growers', { file: 'q.sql', names })).toThrow(
      /^q\.sql:1:14: `category` is not a Column of any Table in scope \(growers\)/,
    );
  });
});

// a small invented fact names file for the lf grammar: kinds of entities and of predicate arguments
const LF_NAMES = namesFromJson(
  {
    Kind: ['grower', 'orchard', 'village'],
    Entity: { mara: 'grower', hilltop: 'orchard', oakmere: 'village' },
    Class: { grower: 'grower', orchard: 'orchard' },
    Rel: { owns: ['grower', 'orchard'], lives_in: ['grower', 'village'] },
    Measure: { hectares: 'orchard', joined: 'grower' },
  },
  'lf-names.json',
  lf,
);

function resolveLf(text: string): string[] {
  const tree = createParser(lf).parse(text, { resolve: false }) as Tree;
  return resolveTree(lf, tree, LF_NAMES).map((i) => `${i.path}: ${i.message}`);
}

describe('lf: kinds', () => {
  it.each([
    ['lambda $x. grower($x)'],
    ['lambda $x. grower($x) & exists $y. (orchard($y) & owns($x, $y))'],
    ['argmax $x. (orchard($x)) by hectares'],
    ['value: hectares(hilltop) + joined(mara)'],
    ['holds: lives_in(mara, oakmere)'],
    ['value: sum $x. (owns(mara, $x)) of hectares'],
    ['lambda $x. $x == mara'],
  ])('%s agrees', (text) => {
    expect(resolveLf(text)).toEqual([]);
  });

  it.each([
    ['lambda $x. grower($x) & orchard($x)', '$.body.right.arg: kinds disagree: `orchard` has kind orchard, but `grower` has kind grower'],
    ['value: hectares(mara)', '$.expr.arg: kinds disagree: `hectares` has kind orchard, but `mara` has kind grower'],
    ['argmax $x. (grower($x)) by hectares', '$.by: kinds disagree: `grower` has kind grower, but `hectares` has kind orchard'],
    ['lambda $x. $x == mara & orchard($x)', '$.body.right.arg: kinds disagree: `orchard` has kind orchard, but `mara` has kind grower'],
  ])('%s is refused', (text, message) => {
    expect(resolveLf(text)).toEqual([message]);
  });

  it('reports every disagreement', () => {
    expect(resolveLf('holds: owns(hilltop, mara)')).toEqual([
      '$.claim.subject: kinds disagree: `owns` has kind grower as subject, but `hilltop` has kind orchard',
      '$.claim.object: kinds disagree: `owns` has kind orchard as object, but `mara` has kind grower',
    ]);
  });
});

describe('lf: kinds from the fact base (the executor checks them)', () => {
  it('every hand-written valid logical form agrees, and evaluates without a kind error', async () => {
    const { factNames, factsFromDatabase, evaluateLf } = await import('../../src/exec/index.ts');
    const facts = factsFromDatabase(dbFile);
    const fromFacts = factNames(facts);
    const fromFile = loadNames('grammars/lf/samples/names.json', lf);
    const p = createParser(lf);
    for (const { line, text } of readSamples('grammars/lf/samples/valid.lf')) {
      const tree = p.parse(text, { names: fromFacts }) as Tree;
      expect(resolveTree(lf, tree, fromFile), `valid.lf:${line}`).toEqual([]);
      const r = evaluateLf(facts, tree);
      expect(r.ok, `valid.lf:${line}: ${r.ok ? '' : r.error}`).toBe(true);
    }
  });

  it('the fact base reads kinds off its rows: the same as the samples names file', async () => {
    const { factNames, factsFromDatabase } = await import('../../src/exec/index.ts');
    const a = bindNames(lf, factNames(factsFromDatabase(dbFile)));
    const b = bindNames(lf, loadNames('grammars/lf/samples/names.json', lf));
    for (const set of a.sets) {
      const other = b.sets[set.set.index]!;
      const kindsOf = (s: typeof set, fam: (typeof a.families)[number]) =>
        Object.fromEntries(s.members.map((m, i) => [m, [...s.kinds.subarray(i * s.set.slots.length, (i + 1) * s.set.slots.length)].map((k) => fam.kinds[k] ?? null)]));
      expect(kindsOf(set, a.families[0]!), set.set.name).toEqual(kindsOf(other, b.families[0]!));
    }
  });

  it('an ill-kinded program is a kind error in the executor, not a silent answer', async () => {
    const { factsFromDatabase, evaluateLf } = await import('../../src/exec/index.ts');
    const facts = factsFromDatabase(dbFile);
    const tree = createParser(lf).parse('value: hectares(mara_feldwick)', { resolve: false }) as Tree;
    expect(evaluateLf(facts, tree)).toEqual({
      ok: false,
      error: 'kind error: kinds disagree: `hectares` has kind orchard, but `mara_feldwick` has kind grower (at $.expr.arg)',
    });
    const owned = createParser(lf).parse('lambda $x. grower($x) & exists $y. (owns($y, $x))', { resolve: false }) as Tree;
    expect(evaluateLf(facts, owned).ok).toBe(false);
    expect(evaluateLf(facts, owned, { checkKinds: false })).toEqual({ ok: true, value: { type: 'set', members: [] } });
  });
});
