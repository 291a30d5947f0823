/**
 * The options the commands share, each defined once — flag, help text, argument parser — and the
 * helpers that turn their values into what the stages take (a Grammar, name bindings, a database).
 *
 * A command adds an option with `.addOption(opt.grammar())`, `.addOption(opt.db())`, … and, in its
 * action, resolves them:
 *
 *   await withInputs(opts, ({ grammar, names, db }) => { … });   // db: DatabaseFile | null
 *
 * The rules every command follows:
 * - `--grammar G`: an existing file is a description path (relative to the working folder); else a
 *   shipped name (`arith`, `json`, `lf`, `sql`), resolved inside the package — so shipped names work
 *   from any folder. Anything else is refused by commander with the list of shipped names.
 * - `--db FILE`: a SQLite database (recognised by its header) is opened read-only as it is; a
 *   `.sql` script is loaded into a fresh database in a private temporary folder that nothing else
 *   can reach (src/exec/database.ts: ATTACH, DETACH and VACUUM refused), removed when the command
 *   ends. Names bound from it: Table and Column from its schema, for a grammar that declares them;
 *   otherwise the cooperative fact base's Entity, Class, Rel and Measure, for a grammar that
 *   declares those (the lf grammar).
 * - `--names FILE`: a JSON object `{"Set": ["a", …]}` (or the object forms of README "Binding names"); it wins over `--db`, set by set. Both are
 *   checked against the grammar's name sets.
 * - Numbers go through commander's argument parsers (`integer`, `decimal` below), so a bad value
 *   is refused before the command runs: `error: option '--beam <k>' argument 'x' is invalid.
 *   expected an integer from 1 to 64`.
 */
import { readFileSync } from 'node:fs';
import { InvalidArgumentError, Option } from 'commander';
import { loadGrammar } from '../description/index.ts';
import type { Grammar, NameBindings } from '../description/ir.ts';
import { databaseKind, openDatabaseFile, type DatabaseFile } from '../exec/database.ts';
import { checkNames, loadNames, mergeNames, namesFromDatabase, NamesError, withFacts } from '../tree/index.ts';
import { NAME_FACTS } from '../description/ir.ts';
import { grammarFile, shippedGrammars } from '../util/package.ts';
import { UsageError } from './command.ts';

// ---------------------------------------------------------------------------------------------
// argument parsers (commander prints "error: option '…' argument '…' is invalid. <message>")

/** An integer argument from `min` to `max` (inclusive). */
export function integer(min: number, max: number = Number.MAX_SAFE_INTEGER): (value: string) => number {
  const range =
    min === Number.MIN_SAFE_INTEGER && max === Number.MAX_SAFE_INTEGER ? '' : max === Number.MAX_SAFE_INTEGER ? ` ≥ ${min}` : ` from ${min} to ${max}`;
  return (value) => {
    const n = Number(value);
    if (value.trim() === '' || !Number.isSafeInteger(n) || n < min || n > max) throw new InvalidArgumentError(`expected an integer${range}`);
    return n;
  };
}

/** A finite number argument, `> above` (when given) and `≤ atMost` (when given). */
export function decimal(bounds: { above?: number; atMost?: number } = {}): (value: string) => number {
  const parts = [bounds.above !== undefined ? `> ${bounds.above}` : null, bounds.atMost !== undefined ? `≤ ${bounds.atMost}` : null].filter((x) => x !== null);
  return (value) => {
    const n = Number(value);
    const ok = value.trim() !== '' && Number.isFinite(n) && (bounds.above === undefined || n > bounds.above) && (bounds.atMost === undefined || n <= bounds.atMost);
    if (!ok) throw new InvalidArgumentError(`expected a number${parts.length > 0 ? ' ' + parts.join(' and ') : ''}`);
    return n;
  };
}

/** `--grammar` values: the description file (see grammarFile in src/util/package.ts). */
export function grammarArgument(value: string): string {
  const file = grammarFile(value);
  if (file === null) throw new InvalidArgumentError(`no such file, and no shipped grammar of that name; expected a .twg file or one of ${shippedGrammars().join(', ')}`);
  return file;
}

/** `--db` values: checked to be a SQLite database or a .sql script (a script is built later, by openDatabase). */
export function databaseArgument(value: string): string {
  const kind = databaseKind(value);
  if (typeof kind === 'object') throw new InvalidArgumentError(kind.problem);
  return value;
}

const collect = (value: string, previous: string[] | undefined): string[] => [...(previous ?? []), value];

// ---------------------------------------------------------------------------------------------
// the shared options (one definition and one help text each)

const GRAMMAR_HELP = 'grammar description: a .twg file, or a shipped grammar by name (arith, json, lf, shed_commands, sql — found in the package, from any folder)';

export const opt = {
  /** `--grammar <g>`: mandatory, or repeatable (serve) */
  grammar: (mode: 'required' | 'optional' | 'repeatable' = 'required') => {
    const o = new Option('--grammar <g>', mode === 'repeatable' ? `${GRAMMAR_HELP}; repeatable` : GRAMMAR_HELP);
    if (mode === 'repeatable') return o.argParser((v: string, prev: string[] | undefined) => collect(grammarArgument(v), prev));
    o.argParser(grammarArgument);
    return mode === 'required' ? o.makeOptionMandatory() : o;
  },
  /** `--names <file>` */
  names: () => new Option('--names <file>', 'JSON file binding open name sets, {"Set": ["a", "b"]}; wins over --db set by set'),
  /** `--db <file>` */
  db: () =>
    new Option(
      '--db <file>',
      'SQLite database, or a .sql script (loaded into a fresh private database): binds Table and Column from its schema, or the fact base\'s Entity, Class, Rel and Measure (lf); evaluate and serve also run programs on it',
    ).argParser(databaseArgument),
  /** `--model <dir>`: mandatory, or repeatable (serve) */
  model: (mode: 'required' | 'repeatable' = 'required') => {
    const help = 'model folder (config.json, tokenizer.json, tokenizer_config.json, onnx/…)';
    if (mode === 'repeatable') return new Option('--model <dir>', `${help}; repeatable`).argParser(collect);
    return new Option('--model <dir>', help).makeOptionMandatory();
  },
  /** `--tokenizer <file>` */
  tokenizer: (mode: 'required' | 'optional' = 'required') => {
    const o = new Option('--tokenizer <file>', 'Hugging Face tokenizer.json (tokenizer_config.json beside it is read too)');
    return mode === 'required' ? o.makeOptionMandatory() : o;
  },
  /** `--json`: what is printed differs per command, so the command says it */
  json: (what: string) => new Option('--json', what),
  /** `--seed <s>` */
  seed: (fallback?: number) => {
    const o = new Option('--seed <s>', 'seed of the random stream (an integer; the same seed gives the same output)').argParser(integer(Number.MIN_SAFE_INTEGER));
    return fallback === undefined ? o : o.default(fallback);
  },
  /** `--max-tokens <n>` */
  maxTokens: () => new Option('--max-tokens <n>', 'most tokens generated per output, end of sequence included (default 128, at most the model\'s positions − 1)').argParser(integer(1)),
  /** `--beam <k>` */
  beam: () => new Option('--beam <k>', 'beam search with k hypotheses (default: greedy decoding)').argParser(integer(1, 64)),
  /** `--prefix <text>` of the decoding commands (mask has its own --prefix: the text emitted so far) */
  inputPrefix: () =>
    new Option('--prefix <text>', 'text put before each question (default: the model config\'s treewright.prefixes[grammar name], else "to <grammar name>: "; not repeated when the question starts with it)'),
  /** `--cache <dir>`; resolve the value with maskCacheDir (keep the help in sync with defaultCacheDir in src/masks/cache.ts) */
  cache: () => new Option('--cache <dir>', 'mask cache folder (default: treewright/masks in the per-user cache folder, $XDG_CACHE_HOME or ~/.cache; created private, mode 0700)'),
  /** `--queue-name <name>` of evaluate and worker (the two must agree) */
  queueName: () =>
    new Option('--queue-name <name>', 'name of the queue in Redis, for several evaluations on one server (letters, digits, _ - .; default treewright)').default('treewright'),
  /** `--no-cache` */
  noCache: () => new Option('--no-cache', 'leave the mask cache folder alone: compute the masks afresh'),
};

// ---------------------------------------------------------------------------------------------
// resolving the values

/** The grammar of a resolved `--grammar` value (a DescriptionError lists the located errors). */
export function loadGrammarFile(file: string): Grammar {
  return loadGrammar(file);
}

/** Opens a `--db` value (see the file comment); the caller disposes it when done. */
export function openDatabase(file: string): DatabaseFile {
  return openDatabaseFile(file);
}

const FACT_SETS = ['Entity', 'Class', 'Rel', 'Measure'];

/**
 * The bindings `--db` gives a grammar: Table and Column from the schema when the grammar declares
 * either; else the cooperative fact base's sets when it declares any of them; else the schema's
 * names, which checkNames then refuses with the grammar's own sets listed.
 */
export async function namesFromDb(grammar: Grammar, db: DatabaseFile): Promise<NameBindings> {
  const declared = new Set(grammar.nameSets.map((s) => s.name));
  if (!declared.has('Table') && !declared.has('Column') && FACT_SETS.some((s) => declared.has(s))) {
    // loaded here: only grammars over the fact base need the executor stage
    const { factNames, factsFromDatabase } = await import('../exec/index.ts');
    let names: NameBindings;
    try {
      names = factNames(factsFromDatabase(db.path));
    } catch (e) {
      throw new NamesError(`${db.source}: cannot read the fact base for ${grammar.name}'s name sets (${FACT_SETS.filter((s) => declared.has(s)).join(', ')}): ${(e as Error).message}; expected the cooperative's tables (grammars/sql/coop.sql), or --names FILE`);
    }
    const facts = names[NAME_FACTS];
    const kept = Object.fromEntries(Object.entries(names).filter(([k]) => declared.has(k)));
    return facts ? withFacts(kept, facts) : kept;
  }
  return namesFromDatabase(db.path);
}

/** Whether `--db` can bind any name set the grammar declares (Table, Column, or the fact base's sets). */
export function dbBindsNames(grammar: Grammar): boolean {
  return grammar.nameSets.some((s) => s.name === 'Table' || s.name === 'Column' || FACT_SETS.includes(s.name));
}

/** Bindings from `--db` and `--names` (the file wins per set), each checked against the grammar; undefined when neither is given. */
export async function bindNames(grammar: Grammar, opts: { names?: string }, db: DatabaseFile | null): Promise<NameBindings | undefined> {
  if (opts.names === undefined && db === null) return undefined;
  let out: NameBindings = {};
  if (db !== null) {
    const fromDb = await namesFromDb(grammar, db);
    checkNames(grammar, fromDb, db.source);
    out = fromDb;
  }
  if (opts.names !== undefined) {
    const fromFile = loadNames(opts.names, grammar);
    checkNames(grammar, fromFile, opts.names);
    out = mergeNames(out, fromFile);
    checkNames(grammar, out, opts.names);
  }
  return out;
}

/** What `--grammar`, `--names` and `--db` resolve to. */
export interface Inputs {
  readonly grammar: Grammar;
  readonly names: NameBindings | undefined;
  readonly db: DatabaseFile | null;
}

/** Resolves `--grammar`, `--names` and `--db`, runs `body`, and removes a database built from a script afterwards. */
export async function withInputs<T>(opts: { grammar: string; names?: string; db?: string }, body: (inputs: Inputs) => T | Promise<T>): Promise<T> {
  const grammar = loadGrammarFile(opts.grammar);
  const db = opts.db === undefined ? null : openDatabase(opts.db);
  try {
    return await body({ grammar, names: await bindNames(grammar, opts, db), db });
  } finally {
    db?.dispose();
  }
}

/** The mask cache folder of `--cache DIR` / `--no-cache` (false), else the mask stage's default. */
export async function maskCacheDir(value: string | false | undefined): Promise<string | false> {
  if (value !== undefined) return value;
  const { defaultCacheDir } = await import('../masks/index.ts');
  return defaultCacheDir();
}

/** Reads FILE, or standard input for `-`; returns the text and the name messages use. */
export function readInput(file: string | undefined): { text: string; name: string } {
  const f = file ?? '-';
  try {
    return f === '-' ? { text: readFileSync(0, 'utf8'), name: '<stdin>' } : { text: readFileSync(f, 'utf8'), name: f };
  } catch (e) {
    throw new UsageError(`${f}: cannot read: ${(e as Error).message}`);
  }
}
