/**
 * Options and results shared by the decoders.
 */
import type { TokenConstraint } from '../util/constraint.ts';

export type Strategy = 'greedy' | 'beam' | 'sample';

export interface DecodeOptions {
  /** default 'greedy' */
  strategy?: Strategy;
  /** the mask engine's constraint (or any TokenConstraint over the model's token ids); null/absent: unconstrained */
  constraint?: TokenConstraint<unknown> | null;
  /** most tokens generated, the end-of-sequence token included (default 128, at most the model's positions − 1) */
  maxTokens?: number;
  /** beam: number of hypotheses kept (default 4) */
  beamWidth?: number;
  /** beam: a finished hypothesis scores sum(logprob) / length^lengthPenalty (default 1) */
  lengthPenalty?: number;
  /** beam: stop as soon as `beamWidth` hypotheses have finished (default true); when false, stop only
   * when no live hypothesis can still beat the worst of the best `beamWidth` finished ones */
  earlyStop?: boolean;
  /** sample: softmax temperature, > 0 (default 1) */
  temperature?: number;
  /** sample: nucleus size; only the most probable tokens whose mass reaches topP are kept (default 1) */
  topP?: number;
  /** sample: PRNG seed (default 0); the same seed gives the same output */
  seed?: number;
  /**
   * Stops decoding: checked before the encoder runs and before every decoder step; once aborted,
   * decoding rejects with `signal.reason` (e.g. a time limit via `AbortSignal.timeout(ms)`, or a
   * client that went away).
   */
  signal?: AbortSignal;
  /**
   * Constrained decoding: feed a run of tokens the grammar forces (exactly one allowed, not EOS;
   * for beam search, forced in every live hypothesis) to the decoder in one call with several
   * positions, instead of one call per token (default true). The output is the same either way;
   * false is the one-call-per-token reference.
   */
  forcedRuns?: boolean;
}

/** One token as it is chosen (streaming). */
export interface StreamToken {
  /** position in the output, from 0 */
  readonly index: number;
  readonly id: number;
  /** the token's text (its bytes as UTF-8; a partial character shows as U+FFFD) */
  readonly text: string;
  /** the model's log-probability of the token (before masking) */
  readonly logprob: number;
}

export interface DecodeResult {
  /** the output text: the bytes of the non-special tokens, one leading space dropped when the
   * tokenizer's decoder drops it */
  text: string;
  /** generated token ids, without the decoder start token and without the final EOS */
  tokens: number[];
  /** each token's text (see StreamToken.text) */
  tokenTexts: string[];
  /** each token's log-probability under the model (log-softmax of the raw logits, before masking) */
  logprobs: number[];
  /** 'eos' when the model ended the sequence; 'length' when maxTokens ran out (or, constrained, no
   * token was allowed) */
  finished: 'eos' | 'length';
  /** beam: the winning hypothesis's length-normalised score; otherwise the sum of logprobs (EOS included) */
  score: number;
  /** decoder calls made (one per step, or one per forced run; a beam step decodes every live hypothesis in one call) */
  steps: number;
  /** decoding positions processed: tokens chosen, EOS included (beam: steps of the search); equals
   * `steps` without forced runs */
  positions: number;
  /** steps whose token the grammar forced (greedy, sampling: one allowed token, not EOS; beam: so in
   * every live hypothesis), the EOS step excluded; 0 unconstrained */
  forced: number;
  /** milliseconds in onnxruntime (encoder, decoder, cache handling) */
  model_ms: number;
  /** milliseconds computing masks, applying them to logits and advancing constraint states */
  mask_ms: number;
  total_ms: number;
}
