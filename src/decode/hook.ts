/**
 * A logits processor for `generate()` of @huggingface/transformers v4 that applies a
 * TokenConstraint's masks, so a model the user already runs through transformers.js — seq2seq or
 * decoder-only — only emits token sequences the constraint accepts.
 *
 *   const guard = new TreewrightMaskHook(constraint, { maxNewTokens: 64 });
 *   const out = await model.generate({ ...inputs, max_new_tokens: 64, logits_processor: [guard] });
 *
 * How it follows the rows: transformers.js calls the processor once per step with every row's ids
 * so far (`bigint[][]`) and the next-token logits (`Tensor` [rows, vocab]). On the first call of a
 * generation the current length of each row is taken as its prompt (for seq2seq models: the
 * decoder start token; for decoder-only models: the prompt); every later token is fed to that
 * row's constraint state. A call whose rows are not exactly one token longer than the previous
 * call's, or that are not the same row arrays (transformers.js appends each new token to the same
 * arrays during one generation), starts a new generation, so one processor can serve successive
 * `generate()` calls (not concurrent ones). A row that has emitted an end-of-sequence id is held at that id (transformers.js
 * keeps stepping finished rows until every row is done).
 *
 * Budget: the constraint only allows tokens after which a complete program still fits in
 * `maxNewTokens` (pass the same number as `max_new_tokens`), so outputs end with EOS in time.
 * Logits wider than the constraint's vocabulary (padded embedding matrices) get −Infinity beyond it.
 * Greedy, sampling and transformers.js's own processors all see the masked logits.
 */
import { LogitsProcessor, type Tensor } from '@huggingface/transformers';
import type { TokenConstraint } from '../util/constraint.ts';
import { applyMask } from './logits.ts';

export interface HookOptions {
  /** the `max_new_tokens` given to generate(); the constraint's budget counts down from it (default 512) */
  maxNewTokens?: number;
}

export class TreewrightMaskHook extends LogitsProcessor {
  private readonly constraint: TokenConstraint<unknown>;
  private readonly maxNewTokens: number;
  private readonly mask: Uint32Array;
  private readonly eos: Uint8Array;
  private states: unknown[] = [];
  private promptLength: number[] = [];
  private lastLength: number[] = [];
  /** the row arrays of the previous call (transformers.js appends to the same arrays each step) */
  private rows: bigint[][] = [];
  private done: number[] = [];
  /** milliseconds spent in writeAllowed / advance / applying masks, over the processor's life */
  maskMs = 0;

  constructor(constraint: TokenConstraint<unknown>, options: HookOptions = {}) {
    super();
    this.constraint = constraint;
    this.maxNewTokens = options.maxNewTokens ?? 512;
    if (!Number.isInteger(this.maxNewTokens) || this.maxNewTokens < 1) {
      throw new RangeError(`TreewrightMaskHook maxNewTokens: found ${this.maxNewTokens}; expected an integer ≥ 1`);
    }
    this.mask = new Uint32Array((constraint.vocabSize + 31) >>> 5);
    this.eos = new Uint8Array(constraint.vocabSize);
    for (const id of constraint.eosIds) this.eos[id] = 1;
  }

  private startGeneration(inputIds: bigint[][]): void {
    const c = this.constraint;
    this.states = inputIds.map(() => c.start());
    this.promptLength = inputIds.map((r) => r.length);
    this.lastLength = inputIds.map((r) => r.length);
    this.rows = inputIds.slice();
    this.done = inputIds.map(() => -1);
  }

  private continues(inputIds: bigint[][]): boolean {
    if (inputIds.length !== this.lastLength.length) return false;
    for (let r = 0; r < inputIds.length; r++) {
      if (inputIds[r] !== this.rows[r] || inputIds[r].length !== this.lastLength[r] + 1) return false;
    }
    return true;
  }

  override _call(inputIds: bigint[][], logits: Tensor): Tensor {
    const t0 = performance.now();
    const c = this.constraint;
    const V = c.vocabSize;
    const width = logits.dims[logits.dims.length - 1];
    if (width < V) {
      throw new RangeError(`TreewrightMaskHook: the logits have ${width} entries but the constraint covers ${V} token ids; expected at least ${V} (a constraint built from this model's tokenizer)`);
    }
    const data = logits.data as Float32Array;
    if (this.continues(inputIds)) {
      for (let r = 0; r < inputIds.length; r++) {
        const id = Number(inputIds[r][inputIds[r].length - 1]);
        this.lastLength[r]++;
        if (this.done[r] >= 0) continue;
        if (id < V && this.eos[id] === 1) this.done[r] = id;
        else this.states[r] = c.advance(this.states[r], id);
      }
    } else this.startGeneration(inputIds);
    for (let r = 0; r < inputIds.length; r++) {
      const off = r * width;
      if (this.done[r] >= 0) {
        const keep = this.done[r];
        const v = data[off + keep];
        data.fill(-Infinity, off, off + width);
        data[off + keep] = Number.isFinite(v) ? v : 0;
        continue;
      }
      const used = inputIds[r].length - this.promptLength[r];
      c.writeAllowed(this.states[r], Math.max(0, this.maxNewTokens - used), this.mask);
      applyMask(data, off, V, this.mask);
      if (width > V) data.fill(-Infinity, off + V, off + width);
    }
    this.maskMs += performance.now() - t0;
    return logits;
  }
}
