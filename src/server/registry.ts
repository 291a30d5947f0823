/**
 * What a server holds: grammars (shipped or given with --grammar, plus descriptions checked through
 * /api/check, cached by content hash), models (loaded once at start), name bindings per grammar and
 * the shipped executors (SQL on a read-only SQLite file in a child process, LF over the fact base
 * read from the same file).
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { boundConstraint, maskEngine } from '../decode/index.ts';
import { compileDescription, rememberSource, type Diagnostic } from '../description/index.ts';
import { NAME_FACTS, type Grammar, type NameBindings } from '../description/ir.ts';
import { factNames, factsFromDatabase, lfExecutor, openDatabaseFile, SqlRunner, sqlExecutor, type DatabaseFile, type ExecuteFn } from '../exec/index.ts';
import type { FactBase } from '../exec/facts.ts';
import { loadModel, type Seq2SeqModel } from '../model/index.ts';
import { checkNames, createParser, loadNames, namesFromDatabase } from '../tree/index.ts';
import { grammarFile, PACKAGE_ROOT } from '../util/package.ts';
import { lineColumn } from '../util/source.ts';
import { byteFallbackIds } from '../vocab/index.ts';
import { deserializeEngine, type MaskConstraint, type MaskEngine } from '../masks/index.ts';
import { Compiler, type GrammarRef, type NamesMsg } from './compiler.ts';

export const REPO = resolve(PACKAGE_ROOT);
export const SHIPPED = ['sql', 'lf', 'arith', 'json'] as const;

export interface GrammarEntry {
  /** shipped/--grammar: the grammar's name (suffixed on clashes); checked text: `h-` + 16 hex of its hash */
  readonly id: string;
  readonly grammar: Grammar;
  readonly text: string;
  /** description file (for shipped grammars) or the name given to /api/check */
  readonly file: string;
  readonly origin: 'startup' | 'checked';
  /** bindings of every name set the grammar declares, or null with the reason */
  readonly names: NameBindings | null;
  readonly namesProblem: string | null;
  readonly execute: ExecuteFn | null;
  /** the description as the compile workers take it */
  readonly ref: GrammarRef;
  /** mask engines per model id (checked descriptions: compiled in a worker, read from its bytes) */
  readonly engines: Map<string, MaskEngine>;
}

/** Name bindings as a message to a compile worker (owners and kinds included). */
export function namesMsg(names: NameBindings): NamesMsg {
  return { members: { ...names }, facts: names[NAME_FACTS] ?? null };
}

export interface ModelEntry {
  readonly id: string;
  readonly dir: string;
  readonly model: Seq2SeqModel;
  /** byte-fallback token ids (`<0xNN>` pieces): same bytes as an ordinary token, shown apart */
  readonly byteIds: ReadonlySet<number>;
}

export interface CheckResult {
  readonly ok: boolean;
  readonly id: string | null;
  readonly hash: string;
  readonly diagnostics: readonly DiagnosticJson[];
}

export interface DiagnosticJson {
  readonly severity: 'error' | 'warning';
  readonly code: string;
  readonly message: string;
  readonly hint: string | null;
  readonly file: string;
  readonly line: number;
  readonly column: number;
  readonly end_line: number;
  readonly end_column: number;
}

export interface RegistryOptions {
  /** --grammar values: shipped names (sql, lf, arith, json) or .twg paths; default all shipped */
  readonly grammars?: readonly string[];
  /** --model folders; default models/coop when it holds an ONNX export */
  readonly models?: readonly string[];
  /** SQLite file or .sql script (built into a private temporary database) for SQL, LF facts and
   * names; default: the demo cooperative, built from grammars/sql/coop.sql */
  readonly db?: string;
  /** JSON names file merged over the defaults (each grammar takes the sets it declares) */
  readonly names?: string;
  /** SQL executor time limit in ms */
  readonly sqlTimeoutMs?: number;
  /** onnxruntime threads per session */
  readonly threads?: number;
  /** time limit of one compile-worker job (a check, parse, mask table…) in ms (default 10 000) */
  readonly checkTimeoutMs?: number;
  /** compile worker threads (default 2) */
  readonly compileWorkers?: number;
  /** V8 heap limit of each compile worker in MB (default 512) */
  readonly compileMemoryMb?: number;
  /** compile the mask tables of every model × startup grammar while opening (default true) */
  readonly warm?: boolean;
  /** most checked descriptions kept (least recently used go first) */
  readonly checkedLimit?: number;
  /**
   * Executors bound to startup grammars, `KIND=GRAMMAR` with KIND `sql` or `lf` and GRAMMAR a
   * --grammar value (`sql=my-sql.twg`). The shipped sql and lf descriptions are bound to theirs
   * unless this list binds the kind elsewhere. A grammar's name never chooses an executor.
   */
  readonly executors?: readonly string[];
  /** let a description checked through /api/check use the executor of the startup grammar with the same name (default false) */
  readonly checkedExecutors?: boolean;
}

/** Executors a server can bind: the SQL runner (read-only child process) and the LF evaluator. */
export const EXECUTOR_KINDS = ['sql', 'lf'] as const;
export type ExecutorKind = (typeof EXECUTOR_KINDS)[number];

/** Parses `--bind-executor KIND=GRAMMAR` values into description paths by kind; throws naming the bad value. */
export function executorBindings(values: readonly string[] | undefined): Map<string, ExecutorKind> {
  const byFile = new Map<string, ExecutorKind>();
  const bound = new Set<ExecutorKind>();
  for (const v of values ?? []) {
    const m = /^([a-z]+)=(.+)$/.exec(v);
    if (m === null || !(EXECUTOR_KINDS as readonly string[]).includes(m[1]!)) {
      throw new Error(`--bind-executor ${v}: expected KIND=GRAMMAR with KIND one of ${EXECUTOR_KINDS.join(', ')} (e.g. sql=my-sql.twg)`);
    }
    byFile.set(shippedPath(m[2]!), m[1] as ExecutorKind);
    bound.add(m[1] as ExecutorKind);
  }
  // the shipped descriptions keep their executors unless the operator bound that kind elsewhere
  for (const kind of EXECUTOR_KINDS) {
    const shipped = shippedPath(kind);
    if (!bound.has(kind) && !byFile.has(shipped)) byFile.set(shipped, kind);
  }
  return byFile;
}

/** A --grammar value as a description file: an existing file, else a shipped name (see src/util/package.ts). */
export function shippedPath(g: string): string {
  return resolve(grammarFile(g) ?? g);
}

function defaultModels(): string[] {
  const coop = join(REPO, 'models', 'coop');
  return existsSync(join(coop, 'config.json')) && existsSync(join(coop, 'onnx')) ? [coop] : [];
}

export function diagnosticJson(d: Diagnostic, text: string): DiagnosticJson {
  const a = lineColumn(text, d.span.start);
  const b = lineColumn(text, Math.max(d.span.start, d.span.end));
  return { severity: d.severity, code: d.code, message: d.message, hint: d.hint ?? null, file: d.file, line: a.line, column: a.column, end_line: b.line, end_column: b.column };
}

export class Registry {
  readonly grammars = new Map<string, GrammarEntry>();
  readonly models = new Map<string, ModelEntry>();
  private readonly checked = new Map<string, { result: CheckResult; entry: GrammarEntry | null }>();
  private readonly checkedLimit: number;
  private readonly extraNames: NameBindings;
  private runner: SqlRunner | null = null;
  private database: DatabaseFile | null;
  readonly dbPath: string;
  readonly facts: FactBase;
  /** the worker threads that do every request's compile work (compiler.ts) */
  readonly compiler: Compiler;
  /** request bindings by content, so that equal names share one bound constraint */
  private readonly requestNames = new Map<string, NameBindings>();
  /** description file → executor kind, as the operator configured (executorBindings) */
  private readonly executorFiles: Map<string, ExecutorKind>;
  private readonly checkedExecutors: boolean;

  private constructor(opts: RegistryOptions, database: DatabaseFile) {
    this.executorFiles = executorBindings(opts.executors);
    this.checkedExecutors = opts.checkedExecutors ?? false;
    this.database = database;
    this.dbPath = resolve(database.path);
    this.facts = factsFromDatabase(this.dbPath);
    this.checkedLimit = opts.checkedLimit ?? 64;
    this.extraNames = opts.names !== undefined ? loadNames(opts.names) : {};
    this.runner = new SqlRunner(this.dbPath, { timeoutMs: opts.sqlTimeoutMs ?? 2000 });
    this.compiler = new Compiler({ timeoutMs: opts.checkTimeoutMs ?? 10_000, workers: opts.compileWorkers, memoryMb: opts.compileMemoryMb });
  }

  /** Loads grammars and models; throws with a located message on any bad file. */
  static async open(opts: RegistryOptions = {}): Promise<Registry> {
    let database: DatabaseFile;
    try {
      database = openDatabaseFile(opts.db ?? join(REPO, 'grammars', 'sql', 'coop.sql'));
    } catch (e) {
      throw new Error(`--db ${(e as Error).message}`);
    }
    let reg: Registry;
    try {
      reg = new Registry(opts, database);
    } catch (e) {
      database.dispose();
      throw e;
    }
    try {
      for (const g of opts.grammars ?? SHIPPED) {
        const file = shippedPath(g);
        let text: string;
        try {
          text = readFileSync(file, 'utf8');
        } catch (e) {
          throw new Error(`--grammar ${g}: ${file}: cannot read the description: ${(e as Error).message}`);
        }
        const { grammar, diagnostics } = compileDescription(text, file);
        if (grammar === null) {
          const first = diagnostics.find((d) => d.severity === 'error')!;
          const { line, column } = lineColumn(text, first.span.start);
          throw new Error(`${file}:${line}:${column}: error: ${first.message}`);
        }
        let id = grammar.name;
        for (let i = 2; reg.grammars.has(id); i++) id = `${grammar.name}-${i}`;
        reg.grammars.set(id, reg.entry(id, grammar, text, file, 'startup'));
      }
      for (const dir of opts.models ?? defaultModels()) {
        const model = await loadModel(dir, { threads: opts.threads });
        let id = basename(resolve(dir));
        for (let i = 2; reg.models.has(id); i++) id = `${basename(resolve(dir))}-${i}`;
        let byteIds: ReadonlySet<number> = new Set();
        try {
          const tokFile = join(model.dir, 'tokenizer.json');
          byteIds = byteFallbackIds(JSON.parse(readFileSync(tokFile, 'utf8')), tokFile);
        } catch {
          // the model loaded this file already; should it fail here, tokens are only not marked as bytes
        }
        reg.models.set(id, { id, dir: model.dir, model, byteIds });
      }
      // compile every model × grammar mask table now, so no request pays for it (~0.5 s each for
      // the demo model's 1,100 tokens); a pair that cannot work fails again, located, per request
      if (opts.warm !== false) {
        // the compile workers build the startup grammars' parsers and mask tables before their
        // time limits start; the main thread only decodes, so it needs the mask tables bound to
        // the server's names (the first decode would otherwise pay ~0.1–1 s for them)
        const startup = [...reg.grammars.values()];
        reg.compiler.setWarmUp({ grammars: startup.map((g) => g.ref), tokenizers: [...reg.models.values()].map((m) => join(m.dir, 'tokenizer.json')), names: startup.map((g) => (g.names === null ? undefined : namesMsg(g.names))) });
        const workers = reg.compiler.warmUp();
        for (const m of reg.models.values()) {
          for (const g of startup) {
            try {
              const engine = maskEngine(m.model, g.grammar);
              if (g.names !== null) boundConstraint(engine, g.names);
            } catch {
              // reported by the routes that use the pair (422 grammar_model_mismatch)
            }
          }
        }
        // a server listens once its workers have warmed up
        await workers;
      }
    } catch (e) {
      await reg.close();
      throw e;
    }
    return reg;
  }

  /**
   * Names for a grammar: defaults by grammar (SQL schema, LF facts, samples/names.json), then --names.
   * The members are checked against the grammar's token classes here for startup grammars and in a
   * compile worker for checked descriptions (checkedNames).
   */
  private namesFor(grammar: Grammar, file: string, origin: GrammarEntry['origin']): { names: NameBindings | null; problem: string | null } {
    const declared = new Set(grammar.nameSets.map((n) => n.name));
    if (declared.size === 0) return { names: {}, problem: null };
    const pool: Record<string, readonly string[]> = {};
    const add = (b: NameBindings) => {
      for (const [k, v] of Object.entries(b)) if (declared.has(k)) pool[k] = v;
    };
    // a checked description named like a loaded grammar (an edited copy) starts from its names
    for (const g of this.grammars.values()) if (g.grammar.name === grammar.name && g.names !== null) add(g.names);
    const kind = this.executorKind(grammar, file, origin);
    if (kind === 'sql') add(namesFromDatabase(this.dbPath));
    else if (kind === 'lf') add(factNames(this.facts));
    // a startup grammar's own samples/names.json; a checked description's `file` is only a label
    // for its messages and never names a file the server reads
    const sample = join(dirname(file), 'samples', 'names.json');
    if (origin === 'startup' && kind === null && existsSync(sample)) add(loadNames(sample));
    add(this.extraNames);
    const missing = [...declared].filter((s) => !(s in pool));
    if (missing.length > 0) return { names: null, problem: `no bindings for the name set${missing.length > 1 ? 's' : ''} ${missing.join(', ')} of ${grammar.name}; expected them in --names FILE (or the request's "names")` };
    if (origin === 'checked') return { names: pool, problem: null };
    try {
      checkNames(grammar, pool, 'names');
    } catch (e) {
      return { names: null, problem: (e as Error).message };
    }
    return { names: pool, problem: null };
  }

  /**
   * The executor kind the operator bound to a description: by its file for startup grammars; for a
   * checked description only when --checked-executors allows it, and then the kind of the startup
   * grammar it is named like (an edited copy). Never by the name alone.
   */
  private executorKind(grammar: Grammar, file: string, origin: GrammarEntry['origin']): ExecutorKind | null {
    if (origin === 'startup') return this.executorFiles.get(resolve(file)) ?? null;
    if (!this.checkedExecutors) return null;
    for (const g of this.grammars.values()) {
      if (g.origin === 'startup' && g.grammar.name === grammar.name) return this.executorFiles.get(resolve(g.file)) ?? null;
    }
    return null;
  }

  private executorFor(grammar: Grammar, kind: ExecutorKind | null): ExecuteFn | null {
    if (kind === 'sql' && grammar.nameSets.some((n) => n.name === 'Table')) return sqlExecutor(this.runner!, grammar);
    if (kind === 'lf') return lfExecutor(this.facts);
    return null;
  }

  private entry(id: string, grammar: Grammar, text: string, file: string, origin: GrammarEntry['origin']): GrammarEntry {
    const { names, problem } = this.namesFor(grammar, file, origin);
    return { id, grammar, text, file, origin, names, namesProblem: problem, execute: this.executorFor(grammar, this.executorKind(grammar, file, origin)), ref: { text, file }, engines: new Map() };
  }

  /** A checked description's entry: its bindings checked against it in a compile worker. */
  private async checkedEntry(id: string, grammar: Grammar, text: string, file: string): Promise<GrammarEntry> {
    const e = this.entry(id, grammar, text, file, 'checked');
    if (e.names === null || grammar.nameSets.length === 0) return e;
    try {
      await this.compiler.run({ kind: 'names', grammar: e.ref, names: namesMsg(e.names), source: 'names' }, `checking the names of ${file}`);
      return e;
    } catch (err) {
      return { ...e, names: null, namesProblem: (err as Error).message };
    }
  }

  /** The grammar loaded at start whose description `ref` is (undefined for one checked through the API). */
  startupEntry(ref: GrammarRef): GrammarEntry | undefined {
    for (const g of this.grammars.values()) if (g.ref === ref) return g;
    return undefined;
  }

  /** One object per distinct binding content (bound constraints are kept per bindings object). */
  sharedNames(names: NameBindings): NameBindings {
    const key = createHash('sha256').update(JSON.stringify([names, names[NAME_FACTS] ?? null])).digest('hex');
    const hit = this.requestNames.get(key);
    if (hit !== undefined) return hit;
    if (this.requestNames.size >= 16) this.requestNames.delete(this.requestNames.keys().next().value!);
    this.requestNames.set(key, names);
    return names;
  }

  /**
   * The constraint a decode uses: a startup grammar with the server's names from the tables built
   * at start; otherwise compiled and bound in a compile worker first (under its time and memory
   * limits; the request's own names are checked there), its tables read here from the worker's
   * bytes (bounds-checked), then bound here. Rejects as Compiler.run does.
   */
  async constraintFor(g: GrammarEntry, m: ModelEntry, names: NameBindings, request: NameBindings | null): Promise<MaskConstraint> {
    let engine = g.origin === 'startup' ? maskEngine(m.model, g.grammar) : g.engines.get(m.id);
    if (engine !== undefined && request === null) return boundConstraint(engine, names);
    const shared = this.sharedNames(names);
    const tokenizer = join(m.dir, 'tokenizer.json');
    if (g.origin === 'startup') await this.compiler.run({ kind: 'prepare', grammar: g.ref, tokenizer, names: g.names === null ? null : namesMsg(g.names) }, 'preparing a startup grammar', false);
    const r = await this.compiler.run<{ tables?: Uint8Array }>({ kind: 'engine', grammar: g.ref, tokenizer, names: namesMsg(shared), request: request === null ? null : namesMsg(request), tables: engine === undefined }, `compiling the mask tables of ${g.id} for ${m.id}`);
    if (engine === undefined) {
      engine = deserializeEngine(Buffer.from(r.tables!.buffer, r.tables!.byteOffset, r.tables!.byteLength), g.grammar, g.grammar.hash, `${g.file} × ${m.id}`);
      if (g.engines.size >= 4) g.engines.delete(g.engines.keys().next().value!);
      g.engines.set(m.id, engine);
    }
    return boundConstraint(engine, shared);
  }

  /**
   * Compiles a description in the checker's worker thread (cached by content hash and file name);
   * a clean one becomes a grammar id. Rejects as Compiler.run does (JobTimeout past the time limit).
   */
  async check(text: string, file: string): Promise<CheckResult> {
    const hash = createHashHex(text);
    const key = `${hash}\u0000${file}`;
    const hit = this.checked.get(key);
    if (hit) {
      this.checked.delete(key);
      this.checked.set(key, hit);
      return hit.result;
    }
    const { grammar, diagnostics } = await this.compiler.run<{ grammar: Grammar | null; diagnostics: Diagnostic[] }>({ kind: 'check', text, file }, `compiling ${file}`);
    if (grammar !== null) rememberSource(grammar, text);
    const id = grammar !== null ? `h-${hash.slice(0, 16)}` : null;
    const result: CheckResult = { ok: grammar !== null, id, hash, diagnostics: diagnostics.map((d) => diagnosticJson(d, text)) };
    const entry = grammar !== null ? await this.checkedEntry(id!, grammar, text, file) : null;
    if (this.checked.size >= this.checkedLimit) this.checked.delete(this.checked.keys().next().value!);
    this.checked.set(key, { result, entry });
    return result;
  }

  /** Number of descriptions in the check cache. */
  get checkedCount(): number {
    return this.checked.size;
  }

  grammar(id: string): GrammarEntry | undefined {
    const g = this.grammars.get(id);
    if (g) return g;
    for (const c of this.checked.values()) if (c.entry?.id === id) return c.entry;
    return undefined;
  }

  grammarIds(): string[] {
    const ids = [...this.grammars.keys()];
    for (const c of this.checked.values()) if (c.entry && !ids.includes(c.entry.id)) ids.push(c.entry.id);
    return ids;
  }

  async close(): Promise<void> {
    await this.compiler.close();
    this.runner?.close();
    this.runner = null;
    for (const m of this.models.values()) await m.model.dispose();
    this.models.clear();
    this.database?.dispose();
    this.database = null;
  }
}

function createHashHex(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}
