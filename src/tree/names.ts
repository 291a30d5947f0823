/**
 * Open name sets from files: `--names FILE` (a JSON object, set name → members) and, for
 * SQL, `--db FILE` (table and column names read from a SQLite database opened read-only, each
 * column with the tables that have it).
 *
 * The names file (README, "Binding names"):
 *   {"Table": ["growers", "orchards"],                      a set: its members
 *    "Column": {"name": ["growers", "orchards"], ...},      a set `in Table`: member → its owners
 *    "Kind": {"grower": null, "apple": "fruit_kind"},        a kind family: kind → parent (or a list of kinds)
 *    "Entity": {"mara_feldwick": "grower", ...},            a set with one kind slot: member → kind
 *    "Rel": {"owns": ["grower", "orchard"], ...}}           a set with several slots: member → kinds
 * A set both `in Owner` and with slots gives each member as {"in": [...], "kinds": [...]}.
 * Object forms need the grammar to be read (they mean different things for different sets).
 */
import { readFileSync } from 'node:fs';
import type Database from 'better-sqlite3';
import type { Grammar, NameBindings, NameFacts, NameSet } from '../description/ir.ts';
import { NAME_FACTS } from '../description/ir.ts';
import { sqlite } from '../util/optional.ts';
import { bindNames, NamesError } from '../description/bound.ts';

export { NamesError };
import { grammarInfo } from './info.ts';
import { nameSpellingProblem } from './lexeme.ts';
import { pathKey, show } from '../util/json.ts';


/**
 * Reads a names file (see the header). Errors: `FILE: $.Set[2]: expected a string, got 3`. Without
 * `grammar` only the list form is read.
 */
export function loadNames(path: string, grammar?: Grammar): NameBindings {
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
  return namesFromJson(value, path, grammar);
}

const isObject = (v: unknown): v is Record<string, unknown> => v !== null && typeof v === 'object' && !Array.isArray(v);

/**
 * Attaches owners and kinds to member lists, as a non-enumerable property (so the record still
 * compares, prints and iterates as plain set → members). Spreading drops it: merge with mergeNames.
 */
export function withFacts(members: Record<string, readonly string[]>, facts: NameFacts): NameBindings {
  return Object.defineProperty(members, NAME_FACTS, { value: facts, enumerable: false }) as NameBindings;
}

/** Checks a parsed names object (see loadNames); `source` prefixes messages. */
export function namesFromJson(value: unknown, source: string, grammar?: Grammar): NameBindings {
  if (!isObject(value)) {
    throw new NamesError(`${source}: $: expected an object mapping name sets to lists of names, got ${show(value)}`);
  }
  const out: Record<string, string[]> = {};
  const owners: Record<string, Record<string, string[]>> = {};
  const kinds: Record<string, Record<string, (string | null)[]>> = {};
  const families: Record<string, Record<string, string | null>> = {};
  const fail = (path: string, msg: string): never => {
    throw new NamesError(`${source}: ${path}: ${msg}`);
  };
  const strings = (v: unknown, path: string, what: string): string[] => {
    if (!Array.isArray(v)) fail(path, `expected a list of ${what}, got ${show(v)}`);
    (v as unknown[]).forEach((x, i) => {
      if (typeof x !== 'string') fail(`${path}[${i}]`, `expected a string, got ${show(x)}`);
    });
    return [...(v as string[])];
  };
  const kindOrNull = (v: unknown, path: string): string | null => {
    if (v !== null && typeof v !== 'string') fail(path, `expected a kind (a string) or null, got ${show(v)}`);
    return v as string | null;
  };
  const slotKinds = (set: NameSet, v: unknown, path: string): (string | null)[] => {
    const n = set.slots.length;
    if (n === 1 && !Array.isArray(v)) return [kindOrNull(v, path)];
    if (!Array.isArray(v) || v.length !== n) {
      fail(path, `expected ${n === 1 ? 'a kind' : `a list of ${n} kinds`} (${set.slots.map((s) => `${s.name}: ${s.family}`).join(', ')}), got ${show(v)}`);
    }
    return (v as unknown[]).map((x, i) => kindOrNull(x, `${path}[${i}]`));
  };
  for (const [key, entry] of Object.entries(value)) {
    const path = pathKey('$', key);
    if (Array.isArray(entry)) {
      if (grammar?.kindFamilies.some((f) => f.name === key)) {
        families[key] = Object.fromEntries(strings(entry, path, 'kinds').map((k) => [k, null]));
      } else out[key] = strings(entry, path, 'names');
      continue;
    }
    if (!isObject(entry)) fail(path, `expected a list of names, got ${show(entry)}`);
    const obj = entry as Record<string, unknown>;
    if (!grammar) fail(path, 'the object form needs the grammar to be read; give a list of names');
    const family = grammar!.kindFamilies.find((f) => f.name === key);
    if (family) {
      const fam: Record<string, string | null> = {};
      for (const [k, p] of Object.entries(obj)) fam[k] = kindOrNull(p, pathKey(path, k));
      families[key] = fam;
      continue;
    }
    const set = grammar!.nameSets.find((n) => n.name === key);
    if (!set) {
      const known = [...grammar!.nameSets.map((n) => n.name), ...grammar!.kindFamilies.map((f) => f.name)].join(', ') || 'none';
      fail(path, `${grammar!.name} has no name set or kind family ${key} (it has: ${known})`);
    }
    const s = set!;
    if (s.owner === null && s.slots.length === 0) {
      fail(path, `name set ${key} has no owners and no kinds in ${grammar!.name}; expected a list of names`);
    }
    out[key] = Object.keys(obj);
    if (s.owner !== null) owners[key] = {};
    if (s.slots.length > 0) kinds[key] = {};
    for (const [m, d] of Object.entries(obj)) {
      const mpath = pathKey(path, m);
      if (s.owner !== null && s.slots.length > 0) {
        if (!isObject(d)) fail(mpath, `expected {"in": [${s.owner} names], "kinds": [...]}, got ${show(d)}`);
        const dd = d as Record<string, unknown>;
        for (const k of Object.keys(dd)) if (k !== 'in' && k !== 'kinds') fail(pathKey(mpath, k), 'expected only "in" and "kinds"');
        owners[key]![m] = dd.in === undefined ? [] : strings(dd.in, pathKey(mpath, 'in'), `${s.owner} names`);
        if (dd.kinds !== undefined) kinds[key]![m] = slotKinds(s, dd.kinds, pathKey(mpath, 'kinds'));
      } else if (s.owner !== null) {
        owners[key]![m] = strings(d, mpath, `${s.owner} names (the members ${m} belongs to)`);
      } else {
        kinds[key]![m] = slotKinds(s, d, mpath);
      }
    }
  }
  return withFacts(out, { owners, kinds, families, source });
}

/**
 * `b` over `a`, set by set and family by family (a set given in `b` takes its members, owners and
 * kinds from `b` only). Facts are kept under NAME_FACTS.
 */
export function mergeNames(a: NameBindings, b: NameBindings): NameBindings {
  const fa = a[NAME_FACTS];
  const fb = b[NAME_FACTS];
  const members: Record<string, readonly string[]> = { ...a, ...b };
  const pick = <T>(key: 'owners' | 'kinds'): Record<string, T> => {
    const out: Record<string, T> = {};
    for (const [set, v] of Object.entries(fa?.[key] ?? {})) if (!(set in b)) out[set] = v as T;
    Object.assign(out, fb?.[key] ?? {});
    return out;
  };
  return withFacts(members, {
    owners: pick('owners'),
    kinds: pick('kinds'),
    families: { ...(fa?.families ?? {}), ...(fb?.families ?? {}) },
    source: fb && fa ? `${fa.source} and ${fb.source}` : (fb?.source ?? fa?.source ?? 'names'),
  });
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
  // owners and kinds: unknown members, unknown kinds, kind cycles (bindNames throws NamesError)
  bindNames(grammar, names);
}

/**
 * Table and column names of a SQLite database (opened read-only): `{Table: [...], Column: [...]}`,
 * each sorted and without duplicates, with each column's tables as owners (NAME_FACTS); internal
 * `sqlite_` tables are skipped. A database without tables is an error (nothing could be queried).
 */
export function namesFromDatabase(path: string): NameBindings & { Table: string[]; Column: string[] } {
  const SqliteDatabase = sqlite(); // outside the try: a missing package is its own error
  let db: Database.Database;
  try {
    db = new SqliteDatabase(path, { readonly: true, fileMustExist: true });
  } catch (err) {
    throw new NamesError(`${path}: cannot open the database: ${(err as Error).message}`);
  }
  try {
    const tables = db
      .prepare("SELECT name FROM sqlite_schema WHERE type IN ('table', 'view') AND name NOT LIKE 'sqlite\\_%' ESCAPE '\\' ORDER BY name")
      .pluck()
      .all() as string[];
    if (tables.length === 0) throw new NamesError(`${path}: the database has no tables, so no query over it can run`);
    const columns = new Map<string, string[]>();
    const info = db.prepare('SELECT name FROM pragma_table_info(?)').pluck();
    for (const t of tables) {
      for (const c of info.all(t) as string[]) {
        const owners = columns.get(c) ?? [];
        if (!owners.includes(t)) owners.push(t);
        columns.set(c, owners);
      }
    }
    const names = [...columns.keys()].sort();
    const members = { Table: tables, Column: names };
    return withFacts(members, {
      owners: { Column: Object.fromEntries(names.map((c) => [c, columns.get(c)!])) },
      kinds: {},
      families: {},
      source: path,
    }) as NameBindings & { Table: string[]; Column: string[] };
  } catch (err) {
    if (err instanceof NamesError) throw err;
    throw new NamesError(`${path}: cannot read the schema: ${(err as Error).message}`);
  } finally {
    db.close();
  }
}
