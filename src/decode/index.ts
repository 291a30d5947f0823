/**
 * decode/ — turns a question into a program with a seq2seq model (src/model/): greedy, beam search
 * (width, length penalty, early stop) or seeded nucleus sampling, each constrained by a
 * TokenConstraint (one persistent state per hypothesis; masks set disallowed logits to −Infinity;
 * the budget is the number of tokens left) or unconstrained; plus a logits processor that applies
 * the same masks inside @huggingface/transformers' own generate() (hook.ts; not re-exported here, its
 * own package entry `treewright/transformers`, so that importing decode/ never loads transformers.js).
 *
 * Produces: `DecodeResult` {text, tokens, tokenTexts, logprobs, finished, score, model_ms, mask_ms,
 * total_ms}; `generate()` adds {tree, valid, well_typed, parse_error} when given a grammar.
 *
 * Example:
 *   const model = await loadModel('models/coop');
 *   const grammar = loadGrammar('grammars/sql/sql.twg');
 *   const r = await generate(model, 'sql: which sheds hold elstar?', {
 *     grammar, names: namesFromDatabase('demo.db'), strategy: 'beam', beamWidth: 4 });
 *   r.text; r.tree; r.well_typed;                 // constrained: valid; names resolve (kinds: see README)
 *   for await (const t of decodeStream(model, q, { constraint })) process.stdout.write(t.text);
 *
 * Cost per step: one batched decoder call, plus per hypothesis one mask fill (the mask engine's
 * cost), one pass over the V logits to apply it and one to normalise; beam search also keeps the
 * 2·width best entries of each row (O(V · width) worst case, O(V) typical).
 * Cancellation: `signal` (an AbortSignal) in the options is checked before the encoder and before
 * every decoder step; once aborted the call rejects with the signal's reason (the server's time
 * limit and closed connections use it; `AbortSignal.timeout(ms)` gives a plain time limit).
 *
 * Limits: one question per call (no batching of questions); beam search streams only its final
 * result; log-probabilities are the model's (before masking), so a constrained sequence's score is
 * what the unconstrained model thinks of it; a constraint whose completion cannot fit the budget
 * ends the output early with finished = 'length'.
 */
import type { Grammar, NameBindings } from '../description/ir.ts';
import { compileMasks, MaskError, type MaskEngine } from '../masks/index.ts';
import { ModelError, type Seq2SeqModel } from '../model/index.ts';
import { createParser, validateTree, type Tree } from '../tree/index.ts';
import type { Vocabulary } from '../vocab/index.ts';
import { decode } from './search.ts';
import { warmUp } from './warm.ts';
import type { DecodeOptions, DecodeResult } from './types.ts';

export { decode, decodeStream, textOf } from './search.ts';
export type { DecodeOptions, DecodeResult, StreamToken, Strategy } from './types.ts';

export interface GenerateOptions extends DecodeOptions {
  /** the target language; with it the output is parsed and checked, and (unless `unconstrained`
   * or an explicit `constraint`) decoding is constrained by its masks */
  grammar?: Grammar | null;
  /** bindings of the grammar's open name sets */
  names?: NameBindings;
  /** decode without masks even though a grammar is given (the output is still parsed) */
  unconstrained?: boolean;
  /**
   * Warm the grammar's constraint up before its first question (see boundConstraint; default
   * true): worth it when the constraint serves many questions (a server, an evaluation); a process
   * answering one question (`treewright generate`) passes false and computes only the masks its
   * own steps need. The output is the same either way.
   */
  warm?: boolean;
}

export interface GenerateResult extends DecodeResult {
  /** the parsed tree, or null when the text does not parse (or no grammar was given) */
  tree: Tree | null;
  /** the text is a program of the grammar (the parser accepts it); the measure `valid` of metrics.json */
  valid: boolean;
  /** valid, and the tree passes validateTree with the bound names */
  well_typed: boolean;
  /** the parser's or validator's message when `well_typed` is false (null without a grammar) */
  parse_error: string | null;
}

const engines = new WeakMap<Grammar, WeakMap<Vocabulary, MaskEngine>>();

/** The mask engine of a grammar for a model's vocabulary, compiled once per pair and kept. */
export function maskEngine(model: Seq2SeqModel, grammar: Grammar): MaskEngine {
  let byVocab = engines.get(grammar);
  if (byVocab === undefined) engines.set(grammar, (byVocab = new WeakMap()));
  let engine = byVocab.get(model.vocabulary);
  if (engine === undefined) {
    try {
      engine = compileMasks(grammar, model.vocabulary);
    } catch (e) {
      // e.g. a byte the grammar needs has no single-byte token: name the tokenizer file
      if (e instanceof MaskError) throw new ModelError(`${model.dir}/tokenizer.json`, e.message);
      throw e;
    }
    byVocab.set(model.vocabulary, engine);
  }
  return engine;
}

const NO_NAMES: NameBindings = Object.freeze({});
const bindings = new WeakMap<MaskEngine, WeakMap<NameBindings, ReturnType<MaskEngine['bind']>>>();
const warmed = new WeakSet<ReturnType<MaskEngine['bind']>>();

/**
 * The engine bound to `names`, kept per bindings object: a constraint keeps the masks it has
 * computed, so reusing it across questions avoids recomputing them (a fresh bind starts cold).
 * Pass the same `names` object from call to call to profit from it. With `warm` (the default) a
 * fresh constraint is warmed up first; without it, masks are computed as the steps need them.
 */
export function boundConstraint(engine: MaskEngine, names: NameBindings, warm = true): ReturnType<MaskEngine['bind']> {
  let byNames = bindings.get(engine);
  if (byNames === undefined) bindings.set(engine, (byNames = new WeakMap()));
  let bound = byNames.get(names);
  if (bound === undefined) {
    bound = engine.bind(names);
    byNames.set(names, bound);
  }
  if (warm && !warmed.has(bound)) {
    // what would otherwise be computed during the first question's steps: every local mask, then
    // the masks along sampled programs (kept masks of lexeme states, compiled walker code)
    bound.prepare();
    warmUp(bound, engine.grammar, names);
    warmed.add(bound);
  }
  return bound;
}

/** Decodes a question (text, or token ids from `model.input`) and, given a grammar, parses and checks the output (see GenerateOptions). */
export async function generate(model: Seq2SeqModel, question: string | readonly number[], options: GenerateOptions = {}): Promise<GenerateResult> {
  const { grammar = null, names = NO_NAMES, unconstrained = false, warm = true, ...rest } = options;
  let constraint = rest.constraint ?? null;
  if (grammar !== null && !unconstrained && constraint === null) constraint = boundConstraint(maskEngine(model, grammar), names, warm);
  const result = await decode(model, question, { ...rest, constraint: unconstrained ? null : constraint });
  if (grammar === null) return { ...result, tree: null, valid: false, well_typed: false, parse_error: null };
  let tree: Tree;
  try {
    // syntax only here: scopes and kinds are part of well_typed (validateTree below)
    tree = createParser(grammar).parse(result.text, { file: '<output>', resolve: false });
  } catch (e) {
    return { ...result, tree: null, valid: false, well_typed: false, parse_error: (e as Error).message };
  }
  const issue = validateTree(grammar, tree, { names });
  return { ...result, tree, valid: true, well_typed: issue === null, parse_error: issue === null ? null : `${issue.path}: ${issue.message}` };
}
