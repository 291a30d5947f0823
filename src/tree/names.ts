/**
 * Open name sets from files: `--names FILE` (a JSON object, set name → list of strings) and, for
 * SQL, `--db FILE` (table and column names read from a SQLite database opened read-only).
 */
import { readFileSync } from 'node:fs';
import Database from 'better-sqlite3';
import type { Grammar, NameBindings } from '../description/ir.ts';
import { grammarInfo } from './info.ts';
import { nameSpellingProblem } from './lexeme.ts';
import { pathKey, show } from '../util/json.ts';

/** A names file or database that cannot be used; `message` names the file and the JSON path. */
export class NamesError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'NamesError';
  }
}

/** Reads a names file: `{"Set": ["a", "b"], ...}`. Errors: `FILE: $.Set[2]: expected a string, got 3`. */
export function loadNames(path: string): NameBindings {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    throw new NamesError(`${path}: cannot read the names file: ${(err as Error).message}`);
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new NamesError(`${path}: not JSON: ${(err as Error).message}`);
  }
  return namesFromJson(value, path);
}

/** Checks a parsed names object (see loadNames); `source` prefixes messages. */
export function namesFromJson(value: unknown, source: string): NameBindings {
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    throw new NamesError(`${source}: $: expected an object mapping name sets to lists of names, got ${show(value)}`);
  }
  const out: Record<string, string[]> = {};
  for (const [set, list] of Object.entries(value as Record<string, unknown>)) {
    const path = pathKey('$', set);
    if (!Array.isArray(list)) throw new NamesError(`${source}: ${path}: expected a list of names, got ${show(list)}`);
    list.forEach((x, i) => {
      if (typeof x !== 'string') throw new NamesError(`${source}: ${path}[${i}]: expected a string, got ${show(x)}`);
    });
    out[set] = [...(list as string[])];
  }
  return out;
}

/**
 * Checks bindings against a grammar: every set must be a name set of the grammar and every
 * member a lexeme of the set's token class. Throws NamesError with the JSON path of the first problem.
 */
export function checkNames(grammar: Grammar, names: NameBindings, source: string): void {
  const info = grammarInfo(grammar);
  for (const [set, list] of Object.entries(names)) {
    const path = pathKey('$', set);
    const ns = info.nameSet.get(set);
    if (ns === undefined) {
      const known = grammar.nameSets.map((n) => n.name).join(', ') || 'none';
      throw new NamesError(`${source}: ${path}: ${grammar.name} has no name set ${set} (name sets: ${known})`);
    }
    const tok = info.token.get(ns.token)!;
    list.forEach((x, i) => {
      const problem = nameSpellingProblem(tok, x);
      if (problem !== null) throw new NamesError(`${source}: ${path}[${i}]: ${problem}`);
    });
  }
}

/**
 * Table and column names of a SQLite database (opened read-only): `{Table: [...], Column: [...]}`,
 * each sorted and without duplicates; internal `sqlite_` tables are skipped.
 */
export function namesFromDatabase(path: string): { Table: string[]; Column: string[] } {
  let db: Database.Database;
  try {
    db = new Database(path, { readonly: true, fileMustExist: true });
  } catch (err) {
    throw new NamesError(`${path}: cannot open the database: ${(err as Error).message}`);
  }
  try {
    const tables = db
      .prepare("SELECT name FROM sqlite_schema WHERE type IN ('table', 'view') AND name NOT LIKE 'sqlite\\_%' ESCAPE '\\' ORDER BY name")
      .pluck()
      .all() as string[];
    const columns = new Set<string>();
    const info = db.prepare('SELECT name FROM pragma_table_info(?)').pluck();
    for (const t of tables) for (const c of info.all(t) as string[]) columns.add(c);
    return { Table: tables, Column: [...columns].sort() };
  } catch (err) {
    throw new NamesError(`${path}: cannot read the schema: ${(err as Error).message}`);
  } finally {
    db.close();
  }
}
