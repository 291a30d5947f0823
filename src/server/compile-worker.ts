/**
 * Worker thread doing every piece of work a request's description, program text, tree or names
 * need: compiling descriptions (notation, checks), binding and checking names, building parsers,
 * parsing, printing, automata and mask tables (see compiler.ts for the main thread's side: time
 * limit, memory limits, restarts).
 *
 * Messages: {ready} once loaded; then {id, job} → {id, ok: result} or {id, err: {name, message,
 * …fields}}. Grammars travel as their description text and file label and are compiled here once
 * per (file, text) (kept while the worker lives); vocabularies are read from the tokenizer files of
 * the models the server loaded (paths given by the main thread, never by a request).
 */
import { createHash } from 'node:crypto';
import { readlinkSync } from 'node:fs';
import { getPriority, setPriority } from 'node:os';
import { dirname } from 'node:path';
import { parentPort, workerData } from 'node:worker_threads';
import { boundConstraint, maskEngine } from '../decode/index.ts';
import { compileDescription } from '../description/index.ts';
import type { Grammar, NameBindings, NameFacts } from '../description/ir.ts';
import { serializeEngine } from '../masks/index.ts';
import type { Seq2SeqModel } from '../model/index.ts';
import { assertTree, checkNames, createParser, printTree, validateTree, withFacts, type Tree } from '../tree/index.ts';
import { loadVocabulary, type Vocabulary } from '../vocab/index.ts';
import { treeView } from './steps.ts';

/** A grammar as sent between threads: its description text and file label. */
export interface GrammarRef {
  readonly text: string;
  readonly file: string;
}

/** Name bindings as sent between threads (owners and kinds ride under a symbol key that postMessage drops). */
export interface NamesMsg {
  readonly members: Record<string, readonly string[]>;
  readonly facts: NameFacts | null;
}

export type Job =
  | { kind: 'check'; text: string; file: string }
  | { kind: 'prepare'; grammar: GrammarRef; tokenizer: string | null; names: NamesMsg | null }
  | { kind: 'names'; grammar: GrammarRef; names: NamesMsg; source: string }
  | { kind: 'parse'; grammar: GrammarRef; text: string; file: string; names: NamesMsg; request: NamesMsg | null }
  | { kind: 'print'; grammar: GrammarRef; tree: unknown }
  | { kind: 'program'; grammar: GrammarRef; tree: unknown; names: NamesMsg }
  | { kind: 'output'; grammar: GrammarRef; text: string; names: NamesMsg; request: NamesMsg | null; view: boolean }
  | { kind: 'mask'; grammar: GrammarRef; tokenizer: string; names: NamesMsg; request: NamesMsg | null; prefix: string; sample: number }
  | { kind: 'engine'; grammar: GrammarRef; tokenizer: string; names: NamesMsg; request: NamesMsg | null; tables: boolean };

/** An error as sent back: its class name, message and the fields the main thread maps to a status. */
export interface JobError {
  readonly name: string;
  readonly message: string;
  readonly file?: string;
  readonly line?: number;
  readonly column?: number;
  readonly issue?: { path: string; message: string };
  /** the error came from checking the request's own names */
  readonly request?: boolean;
}

const grammars = new Map<string, Grammar>();
const GRAMMARS_KEPT = 128;

function grammarOf(ref: GrammarRef): Grammar {
  const key = createHash('sha256').update(ref.file).update('\0').update(ref.text).digest('hex');
  let g = grammars.get(key);
  if (g === undefined) {
    const r = compileDescription(ref.text, ref.file);
    if (r.grammar === null) throw new Error(`${ref.file}: the description no longer compiles`);
    g = r.grammar;
    if (grammars.size >= GRAMMARS_KEPT) grammars.delete(grammars.keys().next().value!);
    grammars.set(key, g);
  }
  return g;
}

/** Bindings by content, so that equal names from different requests share one bound constraint. */
const bindings = new Map<string, NameBindings>();
const BINDINGS_KEPT = 16;

function namesOf(m: NamesMsg): NameBindings {
  const key = createHash('sha256').update(JSON.stringify([m.members, m.facts])).digest('hex');
  let n = bindings.get(key);
  if (n === undefined) {
    n = m.facts === null ? { ...m.members } : withFacts({ ...m.members }, m.facts);
    if (bindings.size >= BINDINGS_KEPT) bindings.delete(bindings.keys().next().value!);
    bindings.set(key, n);
  }
  return n;
}

/** The request's own names, checked against the grammar (errors marked as the request's). */
function checkRequest(g: Grammar, m: NamesMsg | null): void {
  if (m === null) return;
  try {
    checkNames(g, namesOf(m), 'request');
  } catch (e) {
    (e as { request?: boolean }).request = true;
    throw e;
  }
}

const models = new Map<string, Seq2SeqModel>();

/** A model's vocabulary by its tokenizer file, as the stand-in model maskEngine reads (`vocabulary`, `dir`). */
function model(tokenizer: string): Seq2SeqModel {
  let m = models.get(tokenizer);
  if (m === undefined) {
    const vocabulary: Vocabulary = loadVocabulary(tokenizer);
    models.set(tokenizer, (m = { vocabulary, dir: dirname(tokenizer) } as Seq2SeqModel));
  }
  return m;
}

function run(job: Job): unknown {
  switch (job.kind) {
    case 'check': {
      const r = compileDescription(job.text, job.file);
      return { grammar: r.grammar, diagnostics: r.diagnostics };
    }
    case 'prepare': {
      // a startup grammar's own work (trusted, run without a time limit before a timed job):
      // its parser, and its mask tables bound to the server's names for one tokenizer
      const g = grammarOf(job.grammar);
      createParser(g);
      if (job.tokenizer !== null) {
        const engine = maskEngine(model(job.tokenizer), g);
        if (job.names !== null) boundConstraint(engine, namesOf(job.names));
      }
      return null;
    }
    case 'names': {
      checkNames(grammarOf(job.grammar), namesOf(job.names), job.source);
      return null;
    }
    case 'parse': {
      const g = grammarOf(job.grammar);
      checkRequest(g, job.request);
      return { tree: createParser(g).parse(job.text, { file: job.file, names: namesOf(job.names) }) };
    }
    case 'print':
      return { text: printTree(grammarOf(job.grammar), job.tree) };
    case 'program': {
      // the tree route gets the text route's checks: the server's bindings, then its print parsed again
      const g = grammarOf(job.grammar);
      const names = namesOf(job.names);
      assertTree(g, job.tree, { names });
      const text = printTree(g, job.tree);
      return { text, tree: createParser(g).parse(text, { file: '<printed tree>', names }) };
    }
    case 'output': {
      // a decoder's output: syntax first (scopes and kinds are part of well_typed)
      const g = grammarOf(job.grammar);
      checkRequest(g, job.request);
      const names = namesOf(job.names);
      let tree: Tree;
      try {
        tree = createParser(g).parse(job.text, { file: '<output>', resolve: false });
      } catch (e) {
        return { tree: null, valid: false, well_typed: false, parse_error: (e as Error).message, canonical: null, tree_view: null };
      }
      const issue = validateTree(g, tree, { names });
      const ok = issue === null;
      return {
        tree, valid: true, well_typed: ok, parse_error: ok ? null : `${issue.path}: ${issue.message}`,
        canonical: ok ? printTree(g, tree) : null,
        tree_view: ok && job.view ? treeView(g, tree) : null,
      };
    }
    case 'mask': {
      const g = grammarOf(job.grammar);
      checkRequest(g, job.request);
      const m = model(job.tokenizer);
      const c = boundConstraint(maskEngine(m, g), namesOf(job.names));
      const state = c.advanceBytes(c.start(), new TextEncoder().encode(job.prefix));
      const viable = c.viable(state);
      const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
      if (viable) c.writeAllowed(state, Infinity, mask);
      let count = 0;
      const allowed: number[] = [];
      for (let id = 0; id < c.vocabSize; id++) {
        if ((mask[id >>> 5]! & (1 << (id & 31))) === 0) continue;
        count++;
        if (allowed.length < job.sample) allowed.push(id);
      }
      return { viable, complete: viable && c.isComplete(state), allowed_count: count, vocab_size: c.vocabSize, tokens_to_complete: viable ? c.tokensToComplete(state) : null, allowed };
    }
    case 'engine': {
      // the tables a decode needs, compiled and bound here under the time limit; the main thread
      // receives them as bytes (the cache format, bounds-checked when read)
      const g = grammarOf(job.grammar);
      checkRequest(g, job.request);
      const engine = maskEngine(model(job.tokenizer), g);
      boundConstraint(engine, namesOf(job.names));
      return job.tables ? { tables: serializeEngine(engine, g.hash) } : {};
    }
  }
}

function errorOf(e: unknown): JobError {
  const x = e as Error & { file?: unknown; line?: unknown; column?: unknown; issue?: { path: string; message: string }; request?: boolean };
  const out: { -readonly [K in keyof JobError]: JobError[K] } = { name: x?.constructor?.name ?? 'Error', message: String(x?.message ?? e) };
  if (typeof x?.file === 'string') out.file = x.file;
  if (typeof x?.line === 'number') out.line = x.line;
  if (typeof x?.column === 'number') out.column = x.column;
  if (x?.issue !== undefined) out.issue = { path: x.issue.path, message: x.issue.message };
  if (x?.request === true) out.request = true;
  return out;
}

parentPort!.on('message', (m: { id: number; job: Job }) => {
  let reply: { id: number; ok?: unknown; err?: JobError };
  try {
    reply = { id: m.id, ok: run(m.job) };
  } catch (e) {
    reply = { id: m.id, err: errorOf(e) };
  }
  const transfer: ArrayBuffer[] = [];
  const tables = (reply.ok as { tables?: Buffer } | undefined)?.tables;
  if (tables !== undefined) {
    // a fresh buffer of its own, moved to the main thread rather than copied
    const own = new Uint8Array(tables.length);
    own.set(tables);
    (reply.ok as { tables: Uint8Array }).tables = own;
    transfer.push(own.buffer);
  }
  parentPort!.postMessage(reply, transfer);
});

// Below the main thread's priority (Linux: a thread id taken as a process id by setpriority(2)
// names that thread only): on a busy machine the main thread, which answers every request,
// gets the cores first. Elsewhere the worker keeps its priority.
try {
  const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
  if (Number.isInteger(tid) && tid > 0) setPriority(tid, Math.min(19, getPriority(tid) + 10));
} catch {
  // no /proc/thread-self (not Linux): same priority as the main thread
}

// Warm-up before {ready} (the time limits start after it): the startup grammars' parsers and
// mask tables for every model, so requests on them never pay for that.
const warm = (workerData ?? {}) as { grammars?: GrammarRef[]; tokenizers?: string[]; names?: NamesMsg[] };
compileDescription('grammar warm\nstart S\nspace " "\nsort S { one() = "1"; }\n', 'warm-up.twg');
for (const [i, ref] of (warm.grammars ?? []).entries()) {
  try {
    const g = grammarOf(ref);
    createParser(g);
    for (const t of warm.tokenizers ?? []) {
      const names = warm.names?.[i];
      const engine = maskEngine(model(t), g);
      if (names !== undefined) boundConstraint(engine, namesOf(names));
    }
  } catch {
    // a pair that cannot work fails again, located, in the request that uses it
  }
}
parentPort!.postMessage({ ready: true });
