/**
 * Outside checks of the shipped SQL grammar (grammars/sql/sql.twg) on the demo database
 * (grammars/sql/coop.sql).
 *
 * References: SQLite's own `prepare` (better-sqlite3 12.x, bundled SQLite) with the demo schema
 * loaded into an in-memory database, and node-sql-parser 5.x (`database: 'sqlite'`).
 *
 * What the grammar cannot guarantee, and how these tests deal with it:
 * - Names. The grammar does not resolve which columns belong to which table: `Table` and `Column`
 *   are independent open name sets. So for sampled programs we bind, per program, `Table` to one
 *   table T and `Column` to T's columns, and give the `join` constructor sampler weight 0 (a join
 *   would bring a second table whose columns are not bound). Joins are tested separately on
 *   templated and hand-written programs whose names are consistent.
 * - Aggregate queries. SQLite rejects HAVING, and aggregates in ORDER BY, in a query that is not an
 *   aggregate query (SQLite documentation, "SELECT", section "Generation of the set of result rows":
 *   a query is an aggregate query if it has a GROUP BY clause or an aggregate function in its result
 *   expressions). The grammar rules this out by shape: `select` has no GROUP BY or HAVING and orders
 *   by columns only; HAVING and aggregate ORDER BY keys exist only in `grouped`, which requires
 *   GROUP BY. So every sampled program must be accepted; the number of sampled `grouped` programs
 *   with HAVING or an aggregate ORDER BY key is asserted non-zero so the check is not vacuous.
 * - node-sql-parser (sqlite dialect) rejects DISTINCT inside SUM/AVG/MIN/MAX, which SQLite accepts
 *   (SQLite documentation, "Aggregate Functions": in any aggregate function that takes a single
 *   argument, that argument can be preceded by the keyword DISTINCT). Programs with that construct
 *   must still pass SQLite; for node-sql-parser we assert that it rejects them, so a change in the
 *   library shows up here.
 * - node-sql-parser reads a backslash in a string literal as an escape; SQLite does not (SQLite
 *   documentation, "SQL Language Expressions", "Literal Values"). Programs with a backslash in a
 *   string must pass SQLite; node-sql-parser's verdict on them is not checked.
 */
import { Parser as SqlParser } from 'node-sql-parser';
import { rmSync } from 'node:fs';
import { dirname } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { loadGrammar } from '../../src/description/index.ts';
import { createParser, namesFromDatabase, printTree, sampleTree } from '../../src/tree/index.ts';
import {
  coopDatabase,
  coopDatabaseFile,
  coopSchema,
  hasBackslashString,
  hasDistinctInNonCountAggregate,
  readInvalidCases,
  readSamples,
  type Node,
} from './support.ts';

const SAMPLES = 1600;
const db = coopDatabase();
const schema = coopSchema(db);
const sqlParser = new SqlParser();
let grammar: Grammar;
let allNames: NameBindings;

let databaseFile: string;

beforeAll(() => {
  grammar = loadGrammar('grammars/sql/sql.twg');
  databaseFile = coopDatabaseFile();
  allNames = namesFromDatabase(databaseFile);
});

afterAll(() => {
  rmSync(dirname(databaseFile), { recursive: true, force: true });
});

/** SQLite's verdict: null when `prepare` accepts the text, else SQLite's message. */
function sqliteError(text: string): string | null {
  try {
    db.prepare(text);
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

/** node-sql-parser's verdict: null when it parses the text as SQLite SQL, else its message. */
function nspError(text: string): string | null {
  try {
    sqlParser.astify(text, { database: 'sqlite' });
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

describe('sql: names from the demo database', () => {
  it('binds every table and column of coop.sql', () => {
    const columns = new Set([...schema.values()].flat());
    expect([...allNames.Table!].sort()).toEqual([...schema.keys()].sort());
    expect([...allNames.Column!].sort()).toEqual([...columns].sort());
  });
});

describe('sql: sampled programs against SQLite and node-sql-parser', () => {
  it(`${SAMPLES} sampled single-table programs`, { timeout: 300_000 }, () => {
    const tables = [...schema.keys()];
    let groupedWithAggregateClauses = 0;
    let acceptedBySqlite = 0;
    let distinctAggregates = 0;
    let backslashStrings = 0;
    let nspChecked = 0;
    for (let seed = 1; seed <= SAMPLES; seed++) {
      const table = tables[seed % tables.length]!;
      const names = { Table: [table], Column: schema.get(table)! };
      const tree = sampleTree(grammar, { seed, maxDepth: 6, names, weights: { join: 0 } }) as Node;
      const text = printTree(grammar, tree);
      const where = `seed ${seed}: ${text}`;

      // reference: SQLite's own prepare (better-sqlite3 12.x)
      expect(sqliteError(text), where).toBeNull();
      acceptedBySqlite++;
      if (tree.kind === 'grouped' && (tree.having !== null || (tree.order as Node[]).some((o) => (o.key as Node).kind === 'by_aggregate'))) {
        groupedWithAggregateClauses++;
      }

      // reference: node-sql-parser 5.x, database 'sqlite'
      const nsp = nspError(text);
      if (hasDistinctInNonCountAggregate(tree)) {
        expect(nsp, where).not.toBeNull();
        distinctAggregates++;
      } else if (hasBackslashString(tree)) {
        backslashStrings++;
      } else {
        expect(nsp, where).toBeNull();
        nspChecked++;
      }
    }
    expect(acceptedBySqlite).toBeGreaterThanOrEqual(1000);
    expect(groupedWithAggregateClauses).toBeGreaterThan(0);
    expect(distinctAggregates).toBeGreaterThan(0);
    expect(nspChecked, `not checked: ${distinctAggregates} with DISTINCT in SUM/AVG/MIN/MAX, ${backslashStrings} with a backslash`).toBeGreaterThanOrEqual(1000);
  });
});

/**
 * Join programs with consistent names, built from templates over the foreign keys of coop.sql:
 * every join path × every query shape. Literals are values that occur in the database.
 */
interface JoinPath {
  /** FROM ... JOIN ... ON ... */
  readonly from: string;
  /** a text column to show and group by */
  readonly label: string;
  /** a numeric column */
  readonly num: string;
  /** a text column, a value of it, and a prefix of that value */
  readonly text: string;
  readonly value: string;
  readonly prefix: string;
  /** the first table of the path and its key column (for IN subqueries) */
  readonly first: string;
  readonly key: string;
  /** numeric bounds that fall inside the range of `num` */
  readonly low: string;
  readonly high: string;
}

const PATHS: readonly JoinPath[] = [
  {
    from: 'orchards JOIN growers ON orchards.grower_id = growers.id',
    label: 'growers.name', num: 'orchards.hectares', text: 'growers.village', value: 'Oakmere', prefix: 'Hol',
    first: 'orchards', key: 'orchards.id', low: '2.5', high: '9',
  },
  {
    from: 'lots JOIN orchards ON lots.orchard_id = orchards.id',
    label: 'orchards.name', num: 'lots.tonnes', text: 'lots.grade', value: 'A', prefix: 'B',
    first: 'lots', key: 'lots.id', low: '10', high: '40.5',
  },
  {
    from: 'lots JOIN varieties ON lots.variety_id = varieties.id',
    label: 'varieties.fruit', num: 'lots.tonnes', text: 'varieties.name', value: 'Copper Dawn', prefix: 'Mar',
    first: 'lots', key: 'lots.variety_id', low: '5', high: '25',
  },
  {
    from: 'lots JOIN sheds ON lots.shed_id = sheds.id',
    label: 'sheds.name', num: 'lots.tonnes', text: 'sheds.name', value: 'River Barn', prefix: 'North',
    first: 'sheds', key: 'sheds.id', low: '3.5', high: '30',
  },
  {
    from: 'lots JOIN orchards ON lots.orchard_id = orchards.id JOIN growers ON orchards.grower_id = growers.id',
    label: 'growers.village', num: 'orchards.altitude_m', text: 'growers.name', value: 'Idris Vane', prefix: 'Gre',
    first: 'growers', key: 'growers.id', low: '100', high: '450',
  },
  {
    from: 'lots JOIN varieties ON lots.variety_id = varieties.id JOIN sheds ON lots.shed_id = sheds.id',
    label: 'sheds.name', num: 'sheds.temperature_c', text: 'varieties.fruit', value: 'plum', prefix: 'ch',
    first: 'varieties', key: 'varieties.id', low: '1', high: '3.5',
  },
];

const SHAPES: readonly ((p: JoinPath) => string)[] = [
  (p) => `SELECT ${p.label} FROM ${p.from}`,
  (p) => `SELECT DISTINCT ${p.label} FROM ${p.from} ORDER BY ${p.label}`,
  (p) => `SELECT ${p.label}, COUNT(*) FROM ${p.from} GROUP BY ${p.label}`,
  (p) =>
    `SELECT ${p.label}, SUM(${p.num}) FROM ${p.from} GROUP BY ${p.label} HAVING SUM(${p.num}) > ${p.low} ORDER BY SUM(${p.num}) DESC`,
  (p) => `SELECT ${p.label}, ${p.num} FROM ${p.from} WHERE ${p.text} = '${p.value}' ORDER BY ${p.num} DESC LIMIT 5`,
  (p) => `SELECT COUNT(DISTINCT ${p.label}) FROM ${p.from} WHERE ${p.num} BETWEEN ${p.low} AND ${p.high}`,
  (p) => `SELECT ${p.label} FROM ${p.from} WHERE ${p.text} LIKE '${p.prefix}%' OR ${p.num} >= ${p.high}`,
  (p) => `SELECT AVG(${p.num}), MAX(${p.num}) FROM ${p.from} WHERE NOT ${p.text} = '${p.value}'`,
  (p) => `SELECT * FROM ${p.from} WHERE ${p.key} IN (SELECT ${p.key} FROM ${p.first} WHERE ${p.key} > 2)`,
  (p) =>
    `SELECT ${p.label}, MIN(${p.num}) FROM ${p.from} WHERE (${p.num} < ${p.low} OR ${p.text} <> '${p.value}') AND ${p.num} <= ${p.high} GROUP BY ${p.label} ORDER BY ${p.label} ASC LIMIT 3`,
];

const JOIN_PROGRAMS = PATHS.flatMap((p) => SHAPES.map((shape) => shape(p)));
const HAND_WRITTEN = readSamples('grammars/sql/samples/valid.sql');

describe('sql: programs with joins and consistent names', () => {
  it('has at least 50 templated join programs', () => {
    expect(JOIN_PROGRAMS.length).toBeGreaterThanOrEqual(50);
  });

  const cases = [
    ...JOIN_PROGRAMS.map((text, i) => ({ name: `template ${i + 1}`, text })),
    ...HAND_WRITTEN.map((s) => ({ name: `valid.sql:${s.line}`, text: s.text })),
  ];
  it.each(cases)('$name', ({ text }) => {
    // reference: SQLite's own prepare (better-sqlite3 12.x); running it as well catches run-time errors
    expect(() => db.prepare(text).all()).not.toThrow();
    // reference: node-sql-parser 5.x, database 'sqlite'
    expect(nspError(text)).toBeNull();
    // our parser and printer: the canonical text prints back identically
    const tree = createParser(grammar).parse(text, { names: allNames }) as Node;
    expect(printTree(grammar, tree)).toBe(text);
  });
});

describe('sql: invalid samples give located errors', () => {
  const invalid = readInvalidCases('sql');
  it.each(invalid)('$path', ({ path, text, expected }) => {
    const parse = () => createParser(grammar).parse(text, { names: allNames, file: path });
    expect(parse).toThrow();
    try {
      parse();
    } catch (e) {
      expect((e as Error).message).toBe(expected);
    }
    // reference: SQLite's own prepare rejects the same texts
    expect(sqliteError(text)).not.toBeNull();
  });
});
