/**
 * Shared helpers for the shipped-grammar tests: sample files, the cooperative's database, and small
 * reference semantics (a JSON tree's value, an arithmetic tree's value, SQL tree predicates) that
 * the outside checks compare against.
 */
import Database from 'better-sqlite3';
import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** A JSON tree node as documented in README ("JSON trees"): constructor name plus named fields. */
export interface Node {
  readonly kind: string;
  readonly [field: string]: unknown;
}

export const GRAMMARS = 'grammars';
export const COOP_SQL = join(GRAMMARS, 'sql', 'coop.sql');

/**
 * The programs of a sample file: one program per line; blank lines and lines starting with `#`
 * are not programs. Returns the 1-based line number with each program.
 */
export function readSamples(path: string): { line: number; text: string }[] {
  const out: { line: number; text: string }[] = [];
  readFileSync(path, 'utf8')
    .split('\n')
    .forEach((text, i) => {
      if (text.trim() === '' || text.startsWith('#')) return;
      out.push({ line: i + 1, text });
    });
  return out;
}

/**
 * The invalid cases of a grammar: every file in `grammars/G/samples/invalid/` except the
 * `.expected` files; each case's expected message is the text of `NAME.expected` beside it
 * (without its final newline).
 */
export function readInvalidCases(grammar: string): { path: string; text: string; expected: string }[] {
  const dir = join(GRAMMARS, grammar, 'samples', 'invalid');
  return readdirSync(dir)
    .filter((f) => !f.endsWith('.expected'))
    .sort()
    .map((f) => {
      const path = join(dir, f);
      const base = f.slice(0, f.lastIndexOf('.'));
      const expected = readFileSync(join(dir, base + '.expected'), 'utf8').replace(/\n$/, '');
      return { path, text: readFileSync(path, 'utf8'), expected };
    });
}

/** The cooperative's database (grammars/sql/coop.sql) loaded into a fresh in-memory SQLite db. */
export function coopDatabase(): Database.Database {
  const db = new Database(':memory:');
  db.exec(readFileSync(COOP_SQL, 'utf8'));
  return db;
}

/** The cooperative's database written to a fresh file in the system temp directory; returns its path. */
export function coopDatabaseFile(): string {
  const path = join(mkdtempSync(join(tmpdir(), 'treewright-coop-')), 'coop.db');
  const db = new Database(path);
  db.exec(readFileSync(COOP_SQL, 'utf8'));
  db.close();
  return path;
}

/** Table name → its column names, in declaration order, read from SQLite's own catalogue. */
export function coopSchema(db: Database.Database): Map<string, string[]> {
  const tables = db
    .prepare("SELECT name FROM sqlite_schema WHERE type = 'table' ORDER BY rowid")
    .pluck()
    .all() as string[];
  const schema = new Map<string, string[]>();
  for (const t of tables) {
    const cols = db.prepare('SELECT name FROM pragma_table_info(?) ORDER BY cid').pluck().all(t) as string[];
    schema.set(t, cols);
  }
  return schema;
}

// ---------------------------------------------------------------------------------------------
// JSON: the JS value a json-grammar tree denotes.

/**
 * The value of a json-grammar tree, with the meaning JSON.parse gives the same text: objects keep
 * the last of duplicate names (ECMA-262, JSON.parse, InternalizeJSONProperty / CreateDataProperty),
 * and a member named `__proto__` is an own data property, not the prototype.
 */
export function jsonValue(node: Node): unknown {
  switch (node.kind) {
    case 'object': {
      const obj: Record<string, unknown> = {};
      for (const m of node.members as Node[]) {
        Object.defineProperty(obj, m.key as string, {
          value: jsonValue(m.value as Node),
          enumerable: true,
          writable: true,
          configurable: true,
        });
      }
      return obj;
    }
    case 'array':
      return (node.items as Node[]).map(jsonValue);
    case 'string':
      return node.value;
    case 'number':
      // the tree holds the lexeme (`as text`): RFC 8259 section 6 numbers of any size
      return Number(node.value);
    case 'true':
      return true;
    case 'false':
      return false;
    case 'null':
      return null;
    default:
      throw new Error(`not a json tree node: ${node.kind}`);
  }
}

// ---------------------------------------------------------------------------------------------
// Arithmetic: direct evaluation of an arith-grammar tree with IEEE doubles.

/** Functions the arithmetic evaluator knows; `max`/`min` take any number of arguments. */
const FUNCTIONS: Record<string, (args: number[]) => number> = {
  max: (a) => Math.max(...a),
  min: (a) => Math.min(...a),
  abs: (a) => {
    if (a.length !== 1) throw new Error(`abs takes 1 argument, got ${a.length}`);
    return Math.abs(a[0]!);
  },
  sqrt: (a) => {
    if (a.length !== 1) throw new Error(`sqrt takes 1 argument, got ${a.length}`);
    return Math.sqrt(a[0]!);
  },
};

/** What an evaluation met that conventions of evaluators differ on. */
export interface ArithNotes {
  /**
   * Powers with a negative base and a non-integer exponent (fractional or ±Infinity). IEEE 754 /
   * Math.pow gives NaN (or ±Infinity for infinite exponents); mathjs in predictable mode gives a
   * real root when the exponent is a fraction with an odd denominator, and NaN for infinite
   * exponents (mathjs source, function/arithmetic/pow.js). Neither is wrong; they differ.
   */
  negativeBasePowers: number;
}

/**
 * The value of an arith-grammar tree: + − × ÷ and ^ on doubles (^ is Math.pow), unary minus,
 * calls. When `notes` is given, it counts the powers whose value depends on convention.
 */
export function evalArith(node: Node, notes?: ArithNotes): number {
  const e = (field: string) => evalArith(node[field] as Node, notes);
  switch (node.kind) {
    case 'add':
      return e('left') + e('right');
    case 'sub':
      return e('left') - e('right');
    case 'mul':
      return e('left') * e('right');
    case 'div':
      return e('left') / e('right');
    case 'neg':
      return -e('operand');
    case 'pow': {
      const base = e('base');
      const exponent = e('exponent');
      if (notes && base < 0 && !Number.isInteger(exponent) && !Number.isNaN(exponent)) notes.negativeBasePowers++;
      return Math.pow(base, exponent);
    }
    case 'num':
      return node.value as number;
    case 'call': {
      const fn = FUNCTIONS[node.fn as string];
      if (!fn) throw new Error(`unknown function ${String(node.fn)}`);
      return fn((node.args as Node[]).map((a) => evalArith(a, notes)));
    }
    default:
      throw new Error(`not an arith tree node: ${node.kind}`);
  }
}

/**
 * Whether two doubles agree: both NaN, or equal infinities, or finite with relative difference at
 * most `rel` (absolute `rel` near zero).
 */
export function sameNumber(a: number, b: number, rel = 1e-9): boolean {
  if (Number.isNaN(a) || Number.isNaN(b)) return Number.isNaN(a) && Number.isNaN(b);
  if (!Number.isFinite(a) || !Number.isFinite(b)) return a === b;
  return Math.abs(a - b) <= rel * Math.max(1, Math.abs(a), Math.abs(b));
}

// ---------------------------------------------------------------------------------------------
// SQL: properties of a sql-grammar tree that SQLite checks but the grammar does not express.

/** All nodes of a tree (depth first), for predicates over whole trees. */
export function* nodes(value: unknown): Generator<Node> {
  if (Array.isArray(value)) {
    for (const v of value) yield* nodes(v);
  } else if (value !== null && typeof value === 'object') {
    const n = value as Node;
    if (typeof n.kind === 'string') yield n;
    for (const [k, v] of Object.entries(n)) if (k !== 'kind') yield* nodes(v);
  }
}

/** Whether the tree has DISTINCT inside SUM, AVG, MIN or MAX (COUNT(DISTINCT x) excluded). */
export function hasDistinctInNonCountAggregate(tree: Node): boolean {
  for (const n of nodes(tree)) {
    if (n.kind === 'apply' && n.distinct !== null && (n.fn as Node).kind !== 'count') return true;
  }
  return false;
}

/**
 * Whether a string literal of the tree contains a backslash. SQLite gives the backslash no special
 * meaning in string literals (SQLite documentation, "SQL Language Expressions", "Literal Values":
 * C-style escapes using the backslash character are not supported); node-sql-parser reads it as
 * an escape, so `'a\'` is an unterminated string to it.
 */
export function hasBackslashString(tree: Node): boolean {
  for (const n of nodes(tree)) {
    if (n.kind === 'str' && String(n.value).includes('\\')) return true;
    if (n.kind === 'like' && String(n.pattern).includes('\\')) return true;
  }
  return false;
}
