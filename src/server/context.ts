/**
 * What every route shares: the registry, the concurrency gate, the counters and limits, and the
 * lookups and error mappings that turn a request's fields into a grammar, a model and names — or
 * into the documented ApiError. Built once per server by app.ts; each file under routes/ gets it.
 */
import type { NameBindings } from '../description/ir.ts';
import { BindError } from '../automaton/index.ts';
import { MaskError } from '../masks/index.ts';
import { ModelError } from '../model/index.ts';
import { NamesError, ParseError, TreeError } from '../tree/index.ts';
import { JobFailed, JobOutOfMemory, JobsOverloaded, JobTimeout, type Job } from './compiler.ts';
import { ApiError, notFound, overloaded } from './errors.ts';
import { MAX_JSON_DEPTH } from '../util/depth.ts';
import { Gate } from './gate.ts';
import { namesMsg, type GrammarEntry, type ModelEntry, type Registry } from './registry.ts';

export interface ServerLimits {
  /** largest request body in bytes (default 1 MiB) */
  readonly bodyLimit?: number;
  /** wall-clock limit of one decode request in ms (default 30 000) */
  readonly timeLimitMs?: number;
  /** model/executor requests running at once (default 2) */
  readonly maxActive?: number;
  /** requests waiting for a slot before the server answers 503 (default 64) */
  readonly maxQueued?: number;
  /** executor runs (SQL, LF) at once, on their own gate so slow queries never hold model slots (default 2) */
  readonly execActive?: number;
  /** executor runs waiting before the server answers 503 (default 16) */
  readonly execQueued?: number;
}

/** Counters a server keeps (`app.treewrightStats`): for operators and tests. */
export interface ServerStats {
  /** decode requests answered (any status) */
  decoded: number;
  /** decodes stopped because the client closed the connection */
  stoppedGone: number;
  /** decodes stopped at the time limit */
  stoppedTime: number;
  /** requests refused with 503 */
  refused: number;
  /** requests holding a slot right now */
  readonly active: number;
}

export class ServerContext {
  readonly stats: ServerStats;

  constructor(
    readonly registry: Registry,
    readonly gate: Gate,
    readonly bodyLimit: number,
    readonly timeLimitMs: number,
    /** executors' own gate (SQL and LF runs) */
    readonly execGate: Gate = new Gate(2, 16),
  ) {
    this.stats = {
      decoded: 0,
      stoppedGone: 0,
      stoppedTime: 0,
      refused: 0,
      get active() {
        return gate.running;
      },
    };
  }

  /** The grammar a request names (`$.grammar`), or 404 listing the known ids. */
  grammarOf(id: string): GrammarEntry {
    const g = this.registry.grammar(id);
    if (!g) throw notFound('$.grammar', 'grammar', id, this.registry.grammarIds());
    return g;
  }

  /** The model a request names (`$.model`), the first one when absent; or 404. */
  modelOf(id: string | undefined): ModelEntry {
    const ids = [...this.registry.models.keys()];
    const m = id === undefined ? this.registry.models.get(ids[0]!) : this.registry.models.get(id);
    if (!m) throw notFound('$.model', 'model', id ?? '(default)', ids);
    return m;
  }

  /**
   * The grammar's bindings, with a request's `names` merged over them. Only whether every set is
   * bound is decided here; the request's members are checked against the grammar in the compile
   * worker that uses them (400 at `$.names…`, see jobError).
   */
  namesOf(g: GrammarEntry, override: NameBindings | undefined): NameBindings {
    if (override !== undefined) {
      const merged = this.registry.sharedNames({ ...(g.names ?? {}), ...override });
      const missing = g.grammar.nameSets.filter((n) => !(n.name in merged)).map((n) => n.name);
      if (missing.length > 0) throw new ApiError(400, 'unbound_names', `$.names: no bindings for ${missing.join(', ')}; expected {"${missing[0]}": [...]}`, '$.names');
      return merged;
    }
    if (g.names === null) throw new ApiError(400, 'unbound_names', `$.names: ${g.namesProblem}`, '$.names');
    return g.names;
  }

  /** A failure of work that involved a compile worker and then the main thread (a decode's constraint). */
  jobFailure(e: unknown): never {
    if (e instanceof JobFailed || e instanceof JobTimeout || e instanceof JobOutOfMemory || e instanceof JobsOverloaded) return jobError(e, '$.tree', null);
    return modelError(e);
  }

  /** Runs a compile-worker job (compiler.ts), its failures mapped to the documented errors (jobError). */
  async job<T>(job: Job, label: string, treeBase = '$.tree'): Promise<T> {
    try {
      // a startup grammar's parser and mask tables are the operator's work: built without the
      // time limit (a no-op once the worker has them), so the limit measures the request alone
      const startup = 'grammar' in job ? this.registry.startupEntry(job.grammar) : undefined;
      if (startup !== undefined) {
        const tokenizer = 'tokenizer' in job ? job.tokenizer : null;
        await this.registry.compiler.run({ kind: 'prepare', grammar: startup.ref, tokenizer, names: startup.names === null ? null : namesMsg(startup.names) }, 'preparing a startup grammar', false);
      }
      return await this.registry.compiler.run<T>(job, label);
    } catch (e) {
      return jobError(e, treeBase, null);
    }
  }

  /** Runs `work` holding one of the model gate's slots; 503 at once when the gate and its queue are full. */
  async withSlot<T>(work: () => Promise<T>, gate: Gate = this.gate): Promise<T> {
    const release = await gate.enter();
    if (release === null) {
      this.stats.refused++;
      throw overloaded(gate.running, gate.queued);
    }
    try {
      return await work();
    } finally {
      release();
    }
  }
}

/** Runs an executor holding one of the executors' slots (never a model slot); 503 when they are full. */
export function withExecSlot<T>(ctx: ServerContext, work: () => Promise<T>): Promise<T> {
  return ctx.withSlot(work, ctx.execGate);
}

/** A program text that does not parse: 422 at `file:line:col`. */
export function parseError(e: unknown): never {
  if (e instanceof ParseError) throw new ApiError(422, 'parse_error', e.message, `${e.file}:${e.line}:${e.column}`, { line: e.line, column: e.column });
  throw e;
}

/** A tree that does not fit the grammar: 422 at its JSON path under `base` (`$.tree`). */
export function treeError(e: unknown, base: string): never {
  if (e instanceof TreeError) {
    const path = base + e.issue.path.slice(1);
    throw new ApiError(422, 'invalid_tree', `${path}: ${e.issue.message}`, path);
  }
  throw e;
}

/** A grammar that cannot work with a model's tokenizer: 422; names the automaton cannot bind: 400 at `$.names…`. */
export function modelError(e: unknown): never {
  if (e instanceof BindError) {
    // names the request (or the server) bound that the automaton cannot take: a located 400
    const m = /^names\.([A-Za-z_][A-Za-z0-9_]*)/.exec(e.message);
    const path = m ? `$.names.${m[1]}` : '$.names';
    throw new ApiError(400, 'invalid_names', `$.${e.message}`, path);
  }
  if (e instanceof ModelError || e instanceof MaskError || e instanceof NamesError) throw new ApiError(422, 'grammar_model_mismatch', (e as Error).message, (e as ModelError).file);
  if (e instanceof RangeError) throw new ApiError(400, 'invalid_request', e.message);
  throw e;
}

/**
 * A compile-worker failure as the documented error: time limit → 504, memory limit → 422
 * resource_limit, a full queue → 503, and the stage errors the worker reports by class name as
 * the routes map them on the main thread (parseError, treeError, modelError, request names → 400).
 * `field` names the request field the work came from, when one does (`$.text` for a check).
 */
export function jobError(e: unknown, treeBase: string, field: string | null, what = 'input'): never {
  const at = field === null ? '' : `${field}: `;
  if (e instanceof JobTimeout) throw new ApiError(504, 'time_limit', `${at}${e.message} and was stopped; expected a smaller ${what}`, field ?? undefined);
  if (e instanceof JobOutOfMemory) throw new ApiError(422, 'resource_limit', `${at}${e.message}; expected a smaller ${what}`, field ?? undefined);
  if (e instanceof JobsOverloaded) throw new ApiError(503, 'overloaded', `the server is busy (${e.message}); retry later`);
  if (!(e instanceof JobFailed)) throw e;
  const x = e.error;
  switch (x.name) {
    case 'ParseError':
      throw new ApiError(422, 'parse_error', x.message, `${x.file}:${x.line}:${x.column}`, { line: x.line!, column: x.column! });
    case 'TreeError': {
      const path = treeBase + x.issue!.path.slice(1);
      throw new ApiError(422, 'invalid_tree', `${path}: ${x.issue!.message}`, path);
    }
    case 'PrintError':
      throw new ApiError(422, 'invalid_tree', `${treeBase}: ${x.message}`, treeBase);
    case 'NamesError':
      if (x.request) {
        const m = /^request: (\$[^:]*): (.*)$/s.exec(x.message);
        const path = m ? `$.names${m[1]!.slice(1)}` : '$.names';
        throw new ApiError(400, 'invalid_names', `${path}: ${m ? m[2] : x.message}`, path);
      }
      throw new ApiError(422, 'grammar_model_mismatch', x.message, x.file);
    case 'BindError': {
      const m = /^names\.([A-Za-z_][A-Za-z0-9_]*)/.exec(x.message);
      const path = m ? `$.names.${m[1]}` : '$.names';
      throw new ApiError(400, 'invalid_names', `$.${x.message}`, path);
    }
    case 'ModelError':
    case 'MaskError':
    case 'VocabularyError':
      throw new ApiError(422, 'grammar_model_mismatch', x.message, x.file);
    case 'AutomatonError':
    case 'RegexError':
    case 'RegexTooLargeError':
      throw new ApiError(422, 'automaton_error', x.message);
    case 'RangeError':
      if (/call stack/i.test(x.message)) throw new ApiError(400, 'too_deep', `request: nested too deeply to process (${x.message}); expected at most ${MAX_JSON_DEPTH} levels of JSON and programs within the parser's nesting limit`);
      throw new ApiError(400, 'invalid_request', x.message);
    default:
      throw new ApiError(500, 'internal', `internal error: ${x.message}`);
  }
}
