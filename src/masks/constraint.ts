/**
 * The TokenConstraint implementation (src/util/constraint.ts) for one binding of the open name
 * sets: allowed-token bits, advance, end of sequence, length budget.
 *
 * A state is the automaton's persistent runtime state (automaton/pda.ts) plus `ended` after EOS.
 * `writeAllowed` walks each thread of the state with the trie walkers (walk.ts) on the constraint's
 * live walk context, using kept masks (kept.ts) where the grammar allows them. EOS ids are added
 * exactly when the state is complete. Special and absent ids are never in the trie, so never
 * allowed.
 *
 * Budget (tokens, the chosen one included): a token is allowed only if the shortest completion
 * after it, L bytes (an achievable upper bound, see automaton/pda.ts), satisfies L + 1 ≤ budget − 1:
 * every remaining byte can be emitted as a single-byte token (checked when the engine is built
 * for every byte of every shortest lexeme and literal) and EOS takes one more. Induction: the
 * start state needs L₀ + 1 tokens; if budget ≥ L₀ + 1 then at each step the first byte of a
 * shortest completion (a single-byte token) stays allowed, so every constrained output is
 * complete within the budget.
 *
 * Allocation per `writeAllowed` (V8 heap bytes; the bench's `mask_alloc_bytes`, measured by
 * measure.ts; figures in docs/figures.md, `npx treewright bench --all --write-figures`, and
 * `--grammar lf` for lf): the walks build no threads for BETWEEN positions and push frames only
 * where a walk continues below a lexeme end, so grammars without variables (kept masks) allocate
 * almost nothing (a few masks build a frame or two); lf allocates far more: its masks depend on
 * the variables in scope (no kept masks), and variable lexemes are walked by stepping threads
 * byte by byte, each step a new thread, its frames and variable list. `advance` allocates its new
 * state.
 */
import { INF, type AutomatonInstance, type PdaState } from '../automaton/internal.ts';
import type { TokenConstraint } from '../util/constraint.ts';
import type { Vocabulary } from '../vocab/index.ts';
import type { ClassTables } from './class-tables.ts';
import { WalkContext } from './context.ts';
import { MaskError } from './errors.ts';
import { KeptMasks } from './kept.ts';
import type { VocabTables } from './vocab-tables.ts';
import { TrieWalker } from './walk.ts';

/** A decoding state: the automaton state, plus `ended` after EOS. */
export interface MaskState extends PdaState {
  readonly ended?: boolean;
}

export class MaskConstraint implements TokenConstraint<MaskState> {
  readonly vocabSize: number;
  readonly eosIds: readonly number[];
  private readonly walker: TrieWalker;
  /** kept masks, or null for grammars with variables (`new` / `bound` fields) */
  private readonly kept: KeptMasks | null;
  /** the walk context of `writeAllowed`, reused for every mask */
  private readonly live: WalkContext;

  constructor(
    readonly vocab: Vocabulary,
    tables: VocabTables,
    classes: readonly (ClassTables | null)[],
    /** the automaton under this binding of the open name sets */
    readonly pda: AutomatonInstance,
    /** keep the mask of popping each frame with the frame (engine.ts BindOptions) */
    frameMasks = true,
  ) {
    this.vocabSize = vocab.vocabSize;
    this.eosIds = vocab.eosIds;
    this.walker = new TrieWalker(pda, tables, classes, vocab);
    const variables = pda.automaton.rtn.terminals.some((t) => t.kind === 'newvar' || t.kind === 'boundvar');
    // name scopes: kept masks leave out the options whose effect depends on the scope state and
    // the walk takes them live (kept.ts, docs/design/scope-masks.md)
    // kinds: kept masks know no kind state, so a grammar whose kinds are enforced walks live
    this.kept = variables || pda.kinds !== null ? null : new KeptMasks(this.walker, frameMasks);
    this.walker.kept = this.kept;
    this.live = new WalkContext(tables, true);
  }

  /** Computes every local mask now (otherwise each is computed on first use). Returns the count. */
  prepare(): number {
    return this.kept === null ? 0 : this.kept.prepare();
  }

  start(): MaskState {
    return this.pda.start;
  }

  isComplete(state: MaskState): boolean {
    return state.ended === true || this.pda.isComplete(state);
  }

  viable(state: MaskState): boolean {
    return state.threads.length !== 0;
  }

  /** The state before the last advance (the start state is its own previous state): one step undone. */
  previous(state: MaskState): MaskState {
    return state.prev ?? state;
  }

  /** Shortest completion of the state in bytes (an achievable upper bound). */
  shortestBytes(state: MaskState): number {
    return state.ended ? 0 : this.pda.shortestCompletion(state);
  }

  /**
   * Fewest tokens that surely complete the program, EOS included: completion bytes as single-byte
   * tokens + 1. This is the bound the budget uses.
   */
  tokensToComplete(state: MaskState): number {
    return state.ended ? 0 : this.pda.shortestCompletion(state) + 1;
  }

  advance(state: MaskState, id: number): MaskState {
    const v = this.vocab;
    if (state.ended) throw new MaskError(`token ${id} after the end of sequence; expected nothing more`);
    if (this.eosIds.includes(id)) {
      if (!this.pda.isComplete(state)) throw new MaskError(`end of sequence (token ${id}) before the program is complete`);
      return { threads: state.threads, prevWord: state.prevWord, prev: state, ended: true };
    }
    if (!v.isNormal(id)) throw new MaskError(`token ${id} is ${id < 0 || id >= v.vocabSize ? 'out of range' : 'special or absent'}; never allowed as program text`);
    const next = this.pda.advanceBytes(state, v.bytesOf(id));
    if (next.threads.length === 0) throw new MaskError(`token ${id} (${JSON.stringify(v.text(id))}) is not allowed here: the text would not be a prefix of any program`);
    return next;
  }

  /** Advances by raw bytes (no token); a dead state when not viable. */
  advanceBytes(state: MaskState, bytes: Uint8Array): MaskState {
    return this.pda.advanceBytes(state, bytes);
  }

  writeAllowed(state: MaskState, budget: number, mask: Uint32Array): void {
    mask.fill(0);
    if (state.ended || budget < 1) return;
    if (budget >= 2) {
      const ctx = this.live;
      ctx.beginLive(mask, budget === Infinity ? INF : budget - 2, state.prevWord);
      const threads = state.threads;
      for (let i = 0; i < threads.length; i++) this.walker.maskThread(ctx, threads[i]);
      ctx.end();
    }
    if (this.pda.isComplete(state)) for (const id of this.eosIds) mask[id >>> 5] |= 1 << (id & 31);
  }

  /** Reference implementation: tries every token with the same automaton (the naive baseline). */
  writeAllowedNaive(state: MaskState, budget: number, mask: Uint32Array): void {
    mask.fill(0);
    if (state.ended || budget < 1) return;
    const v = this.vocab;
    const lim = budget === Infinity ? INF : budget - 2;
    if (budget >= 2) {
      for (let id = 0; id < v.vocabSize; id++) {
        if (!v.isNormal(id)) continue;
        const next = this.pda.advanceBytes(state, v.bytesOf(id));
        if (next.threads.length !== 0 && this.pda.shortestCompletion(next) <= lim) mask[id >>> 5] |= 1 << (id & 31);
      }
    }
    if (this.pda.isComplete(state)) for (const id of this.eosIds) mask[id >>> 5] |= 1 << (id & 31);
  }
}
