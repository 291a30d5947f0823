/**
 * The demo dataset: question ↔ logical form ↔ SQL triples about an invented fruit-growing
 * cooperative, for training and evaluating the shipped model.
 *
 * Produces rows like
 *   {"id":"coop-train-00007","split":"train","question":"Which orchards above 400 m are owned by …?",
 *    "sql":"SELECT name FROM orchards WHERE altitude_m > 400 AND grower_id IN (SELECT id FROM growers WHERE name = 'Mara Feldwick')",
 *    "lf":"lambda $x. orchard($x) & altitude($x) > 400 & owns(mara_feldwick, $x)",
 *    "template":"which:orchard:cmp+rel","depth":1}
 * from synchronous templates (generate.ts) over the demo database (grammars/sql/coop.sql), with the
 * meaning of every LF name written down in src/exec/lexicon.ts. Both programs are built as trees and printed
 * canonically; every SQL query is run on the demo database while building (questions whose answer
 * would be empty or ambiguous are dropped).
 *
 * Splits: train / dev / test are a random partition of one pool (disjoint questions). The
 * compositional split holds every example matching a rule of HELD_OUT — combinations and nesting
 * depths that never occur in train.
 *
 * Cost: a few thousand small SQLite queries; about a second or two. Limits: English only, the
 * phrasings are templated (the model sees a narrow slice of English), SQL has no aliases so a
 * question comparing two entities of one table is asked as a two-row superlative.
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { isDeepStrictEqual } from 'node:util';
import type Database from 'better-sqlite3';
import { sqlite } from '../util/optional.ts';
import { type Example, type Form, Generator, Rng, loadWorld, templateName } from './generate.ts';
import { loadGrammar } from '../description/index.ts';
import type { Grammar, NameBindings } from '../description/ir.ts';
import { createParser, printTree, validateTree, withFacts } from '../tree/index.ts';
import { CLASSES, MEASURES, RELATIONS, SUBCLASSES, constantOf } from '../exec/lexicon.ts';

export const DEFAULT_SEED = 20261201;

export const SPLITS = ['train', 'dev', 'test', 'compositional'] as const;
export type Split = (typeof SPLITS)[number];

export interface Row {
  readonly id: string;
  readonly split: Split;
  readonly question: string;
  readonly sql: string;
  readonly lf: string;
  readonly template: string;
  readonly depth: number;
}

/** The parts of a row the held-out rules look at. */
export interface RowShape {
  readonly template: string;
  readonly depth: number;
}

/** template = form:class:tags — see generate.templateName */
export function parseTemplate(template: string): { form: string; cls: string; tags: string[] } {
  const [form, cls, tags] = template.split(':');
  return { form, cls, tags: tags === 'none' ? [] : tags.split('+') };
}

/**
 * Combinations held out of train, dev and test; the compositional split consists of them.
 * Each part occurs in train on its own (negation, disjunction, sums, nested sets at depth 2),
 * only the combination (or the depth) is new.
 */
export const HELD_OUT: readonly { readonly id: string; readonly doc: string; readonly test: (r: RowShape) => boolean }[] = [
  { id: 'depth3', doc: 'descriptions nested three deep (train has depth ≤ 2)', test: (r) => r.depth >= 3 },
  {
    id: 'superlative+not',
    doc: 'a superlative over a negated restriction (train has superlatives and negations, never together)',
    test: (r) => { const t = parseTemplate(r.template); return t.form === 'superlative' && t.tags.includes('not'); },
  },
  {
    id: 'count+or',
    doc: 'counting a disjunction (train counts, and has disjunctions in other forms)',
    test: (r) => { const t = parseTemplate(r.template); return t.form === 'count' && t.tags.includes('or'); },
  },
  {
    id: 'total+nested',
    doc: 'a sum over a set described through another set (train sums only over depth-1 sets)',
    test: (r) => { const t = parseTemplate(r.template); return t.form === 'total' && r.depth >= 2; },
  },
];

export function heldOutRule(r: RowShape): string | null {
  for (const h of HELD_OUT) if (h.test(r)) return h.id;
  return null;
}

export function demoDatabasePath(): string {
  return repoPath('grammars', 'sql', 'coop.sql');
}

/** The demo database, in memory. */
export function openDemoDatabase(): Database.Database {
  const db = new (sqlite())(':memory:');
  db.exec(readFileSync(demoDatabasePath(), 'utf8'));
  return db;
}

type Maker = (g: Generator) => Example | null;

/** What to generate: [how many accepted examples, maker]. */
function plan(): { readonly pool: readonly (readonly [number, Maker])[]; readonly held: readonly (readonly [number, Maker])[] } {
  return {
    pool: [
      [500, (g) => g.which(1, 'plain')],
      [200, (g) => g.which(1, 'not')],
      [150, (g) => g.which(1, 'or')],
      [350, (g) => g.which(2, 'plain')],
      [350, (g) => g.count(1, 'plain')],
      [150, (g) => g.count(1, 'not')],
      [200, (g) => g.count(2, 'plain')],
      [350, (g) => g.superlative(1, 'plain')],
      [100, (g) => g.superlative(1, 'or')],
      [150, (g) => g.superlative(2, 'plain')],
      [400, (g) => g.total(1)],
      [300, (g) => g.measureOf()],
      [500, (g) => g.ynConst(1)],
      [200, (g) => g.ynConst(2)],
      [250, (g) => g.ynExists(1, 'plain')],
      [100, (g) => g.ynExists(1, 'not')],
      [150, (g) => g.ynExists(2, 'plain')],
      [450, (g) => g.compare2()],
      [600, (g) => g.group(2)],
    ],
    held: [
      [50, (g) => g.which(3, 'plain')],
      [30, (g) => g.count(3, 'plain')],
      [25, (g) => g.superlative(3, 'plain')],
      [25, (g) => g.ynExists(3, 'plain')],
      [25, (g) => g.ynConst(3)],
      [45, (g) => g.group(3)],
      [80, (g) => g.superlative(1, 'not')],
      [80, (g) => g.count(1, 'or')],
      [80, (g) => g.total(2)],
    ],
  };
}

interface Printed {
  readonly question: string;
  readonly sql: string;
  readonly lf: string;
  readonly template: string;
  readonly depth: number;
  readonly trees: { readonly lf: unknown; readonly sql: unknown };
}

export interface Dataset {
  readonly train: Row[];
  readonly dev: Row[];
  readonly test: Row[];
  readonly compositional: Row[];
}

export interface BuildOptions {
  readonly seed: number;
  readonly devSize?: number;
  readonly testSize?: number;
  /** parse every kept gold program back and require the same tree (slow: minutes) */
  readonly verifyParse?: boolean;
}

/** The two target grammars and the names bound for the demo database. */
export interface Targets {
  readonly lf: Grammar;
  readonly sql: Grammar;
  readonly lfNames: NameBindings;
  readonly sqlNames: NameBindings;
}

function repoPath(...parts: string[]): string {
  return join(dirname(fileURLToPath(import.meta.url)), '..', '..', ...parts);
}

/** LF names from the lexicon and the database rows; SQL names from the database schema. */
export function loadTargets(db: Database.Database): Targets {
  const pluck = (q: string) => db.prepare(q).pluck().all() as string[];
  const kindOf: Record<string, string> = {};
  const named = (['growers', 'orchards', 'varieties', 'sheds'] as const).flatMap((t) => {
    const kind = Object.values(CLASSES).find((c) => c.table === t)!.name;
    return pluck(`SELECT name FROM ${t} ORDER BY id`).map((n) => (kindOf[constantOf(n)] = kind, constantOf(n)));
  });
  const villages = pluck('SELECT DISTINCT village FROM growers ORDER BY village').map((v) => (kindOf[constantOf(v)] = 'village', constantOf(v)));
  const entities = [...named, ...villages];
  const tables = pluck("SELECT name FROM sqlite_schema WHERE type = 'table' ORDER BY name");
  const owners = new Map<string, string[]>();
  for (const t of tables) for (const c of pluck(`SELECT name FROM pragma_table_info('${t}')`)) owners.set(c, [...(owners.get(c) ?? []), t]);
  const columns = [...owners.keys()].sort();
  // kinds from the lexicon: the same ones the fact base reads off the rows (exec/coop.ts)
  const classKind = (name: string): string => (CLASSES as Record<string, { name: string }>)[name]?.name ?? SUBCLASSES.find((s) => s.name === name)!.of;
  const classes = [...Object.keys(CLASSES), ...SUBCLASSES.map((s) => s.name)];
  const kinds = [...new Set([...Object.keys(CLASSES), 'village'])].sort();
  return {
    lf: loadGrammar(repoPath('grammars', 'lf', 'lf.twg')),
    sql: loadGrammar(repoPath('grammars', 'sql', 'sql.twg')),
    lfNames: withFacts(
      { Entity: entities, Class: classes, Rel: RELATIONS.map((r) => r.name), Measure: MEASURES.map((m) => m.name) },
      {
        owners: {},
        kinds: {
          Entity: Object.fromEntries(entities.map((e) => [e, [kindOf[e]!]])),
          Class: Object.fromEntries(classes.map((c) => [c, [classKind(c)]])),
          Rel: Object.fromEntries(RELATIONS.map((r) => [r.name, [r.subject, r.object]])),
          Measure: Object.fromEntries(MEASURES.map((m) => [m.name, [m.of]])),
        },
        families: { Kind: Object.fromEntries(kinds.map((k) => [k, null])) },
        source: 'the demo lexicon',
      },
    ),
    sqlNames: withFacts({ Table: tables, Column: columns }, { owners: { Column: Object.fromEntries(owners) }, kinds: {}, families: {}, source: 'the demo database' }),
  };
}

/** Prints a gold tree canonically after checking it against the grammar and the bound names. */
function printGold(grammar: Grammar, names: NameBindings, tree: unknown, question: string): string {
  const issue = validateTree(grammar, tree, { names });
  if (issue) throw new Error(`dataset: invalid ${grammar.name} tree for "${question}" at ${issue.path}: ${issue.message}`);
  return printTree(grammar, tree);
}

/** Generates, checks on the demo database, deduplicates and splits. Deterministic in `seed`. */
export function buildDataset(opts: BuildOptions): Dataset {
  const db = openDemoDatabase();
  try {
    const targets = loadTargets(db);
    const rng = new Rng(opts.seed);
    const gen = new Generator(loadWorld(db), rng);
    const seen = new Set<string>();
    const accept = (e: Example): Printed | null => {
      if (seen.has(e.question)) return null;
      const sqlText = printGold(targets.sql, targets.sqlNames, e.sql, e.question);
      const lfText = printGold(targets.lf, targets.lfNames, e.lf, e.question);
      const rows = db.prepare(sqlText).raw().all() as unknown[][];
      if ((e.form === 'which' || e.form === 'group') && rows.length === 0) return null;
      if (e.form === 'total' && (rows.length !== 1 || rows[0][0] === null)) return null;
      if (e.check) {
        // the extreme must exist among at least two rows and be unique
        const ranked = db.prepare(printTree(targets.sql, e.check)).raw().all() as unknown[][];
        if (ranked.length < 2 || ranked[0][1] === ranked[1][1]) return null;
      }
      seen.add(e.question);
      return {
        question: e.question, sql: sqlText, lf: lfText, template: templateName(e), depth: e.depth,
        trees: { lf: e.lf, sql: e.sql },
      };
    };
    const run = (quota: number, make: Maker, wantHeld: boolean): Printed[] => {
      const out: Printed[] = [];
      for (let attempt = 0; out.length < quota && attempt < quota * 40; attempt++) {
        const e = make(gen);
        if (!e) continue;
        const held = heldOutRule({ template: templateName(e), depth: e.depth }) !== null;
        if (held !== wantHeld) continue;
        const p = accept(e);
        if (p) out.push(p);
      }
      return out;
    };
    const p = plan();
    const pool: Printed[] = p.pool.flatMap(([n, make]) => run(n, make, false));
    const held: Printed[] = p.held.flatMap(([n, make]) => run(n, make, true));
    if (opts.verifyParse) {
      const lfParser = createParser(targets.lf);
      const sqlParser = createParser(targets.sql);
      for (const x of [...pool, ...held]) {
        const back = { lf: lfParser.parse(x.lf, { names: targets.lfNames }), sql: sqlParser.parse(x.sql, { names: targets.sqlNames }) };
        if (!isDeepStrictEqual(back.lf, x.trees.lf) || !isDeepStrictEqual(back.sql, x.trees.sql)) {
          throw new Error(`dataset: a gold program does not parse back to its tree: "${x.question}"`);
        }
      }
    }
    rng.shuffle(pool);
    rng.shuffle(held);
    const devSize = opts.devSize ?? 400;
    const testSize = opts.testSize ?? 400;
    const rows = (split: Split, xs: Printed[]): Row[] =>
      xs.map((x, i) => ({
        id: `coop-${split}-${String(i + 1).padStart(5, '0')}`,
        split,
        question: x.question,
        sql: x.sql,
        lf: x.lf,
        template: x.template,
        depth: x.depth,
      }));
    return {
      dev: rows('dev', pool.slice(0, devSize)),
      test: rows('test', pool.slice(devSize, devSize + testSize)),
      train: rows('train', pool.slice(devSize + testSize)),
      compositional: rows('compositional', held),
    };
  } finally {
    db.close();
  }
}

export function toJsonl(rows: readonly Row[]): string {
  return rows.map((r) => JSON.stringify(r)).join('\n') + '\n';
}

export type { Example, Form };
