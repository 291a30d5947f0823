/**
 * The contract between the mask engine (automaton + vocabulary index) and the decoders.
 *
 * A decoder keeps one state per hypothesis (beam). States are persistent values: `advance`
 * returns a new state and never changes the old one, so forking a beam is sharing a reference.
 *
 * Bitset convention (common practice, no source): bit `id & 31` of word `id >>> 5` is token `id`.
 */
export interface TokenConstraint<S = unknown> {
  /** Number of token ids the masks cover (the tokenizer's vocabulary, added tokens included). */
  readonly vocabSize: number;
  /** Token ids that end a sequence; allowed exactly when the program is complete. */
  readonly eosIds: readonly number[];
  /** The state before any token was emitted. */
  start(): S;
  /**
   * Writes into `mask` (length ≥ ceil(vocabSize / 32), overwritten completely) the tokens allowed
   * after `state`. `budget` is the number of tokens that may still be emitted, the one being chosen
   * included (EOS counts as one); tokens after which the shortest completion cannot fit are not
   * allowed. Called once per decoding step and hypothesis: implementations should not allocate per
   * call (the mask engine's measured allocation per call: src/masks/constraint.ts).
   */
  writeAllowed(state: S, budget: number, mask: Uint32Array): void;
  /** The state after emitting token `id`; throws if `id` is not allowed in `state`. */
  advance(state: S, id: number): S;
  /** True when the text emitted so far is a complete program (so an EOS id is allowed). */
  isComplete(state: S): boolean;
  /**
   * Optional: a number of tokens (EOS included) that surely suffices to finish from `state`. With
   * `budget ≥ tokensToComplete(start)` at the first step, every output ends complete within the
   * budget (the mask engine's bound: see docs/design/length-budget.md).
   */
  tokensToComplete?(state: S): number;
  /** Optional: false when no program starts with the text so far (e.g. after raw text was forced). */
  viable?(state: S): boolean;
}
