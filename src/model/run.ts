/**
 * One decoding run: the encoder output of one question and the decoder's KV cache for a batch of
 * hypotheses (beams). Each `step` feeds one new token per row and returns the next-token logits of
 * every row; `parents` says which previous row each new row continues (beam reordering), so the
 * cache is gathered along the batch dimension before the call. Rows share the question, so the
 * encoder-side inputs (hidden states, mask, cross-attention K/V) are the same row tiled.
 *
 * Without a merged decoder (decoder_model.onnx only) each step re-runs the decoder on every row's
 * whole prefix — O(T²) per sequence instead of O(T).
 */
import type * as ort from 'onnxruntime-node';
import { onnxRuntime } from '../util/optional.ts';

/** What a run needs of a loaded model (Seq2SeqModel in load.ts is one). */
export interface RunnableModel {
  readonly encoder: ort.InferenceSession;
  readonly decoder: ort.InferenceSession;
  /** true when `decoder` is decoder_model_merged.onnx (KV cache) */
  readonly cached: boolean;
  /** the logits dimension */
  readonly vocabSize: number;
}

function int64(values: ArrayLike<number>, dims: readonly number[]): ort.Tensor {
  const a = new BigInt64Array(values.length);
  for (let i = 0; i < values.length; i++) a[i] = BigInt(values[i]);
  return new (onnxRuntime().Tensor)('int64', a, dims);
}

/** `rows` copies of a tensor whose first dimension is 1. */
function tile(t: ort.Tensor, rows: number): ort.Tensor {
  if (rows === 1) return t;
  const src = t.data as Float32Array | BigInt64Array;
  const n = src.length;
  const out = src instanceof Float32Array ? new Float32Array(n * rows) : new BigInt64Array(n * rows);
  for (let r = 0; r < rows; r++) out.set(src as never, r * n);
  return new (onnxRuntime().Tensor)(t.type as 'float32', out as Float32Array, [rows, ...t.dims.slice(1)]);
}

/** Rows `parents[0]`, `parents[1]`, … of a float tensor (first dimension = batch). */
function gather(t: ort.Tensor, parents: ArrayLike<number>): ort.Tensor {
  const src = t.data as Float32Array;
  const per = src.length / t.dims[0];
  const out = new Float32Array(per * parents.length);
  for (let r = 0; r < parents.length; r++) out.set(src.subarray(parents[r] * per, (parents[r] + 1) * per), r * per);
  return new (onnxRuntime().Tensor)('float32', out, [parents.length, ...t.dims.slice(1)]);
}

function isIdentity(parents: ArrayLike<number>, rows: number): boolean {
  if (parents.length !== rows) return false;
  for (let i = 0; i < rows; i++) if (parents[i] !== i) return false;
  return true;
}

export class DecoderRun {
  /** milliseconds spent in onnxruntime and in preparing its inputs (encoder included) */
  modelMs = 0;
  /** decoder calls made so far */
  steps = 0;
  private rows = 0;
  private readonly tiled = new Map<number, Record<string, ort.Tensor>>();
  /** cached decoding: self-attention past per name (batch = rows); encoder past of one row */
  private past: Record<string, ort.Tensor> = {};
  private encoderPast: Record<string, ort.Tensor> | null = null;
  /** uncached decoding: every row's prefix */
  private prefixes: number[][] = [];

  private constructor(
    readonly model: RunnableModel,
    private readonly hidden: ort.Tensor,
    private readonly mask: ort.Tensor,
  ) {}

  static async create(model: RunnableModel, ids: readonly number[]): Promise<DecoderRun> {
    const t0 = performance.now();
    const inputIds = int64(ids, [1, ids.length]);
    const mask = int64(new Array<number>(ids.length).fill(1), [1, ids.length]);
    const feeds: Record<string, ort.Tensor> = { input_ids: inputIds };
    if (model.encoder.inputNames.includes('attention_mask')) feeds.attention_mask = mask;
    const out = await model.encoder.run(feeds);
    const run = new DecoderRun(model, out.last_hidden_state, mask);
    run.modelMs += performance.now() - t0;
    return run;
  }

  /**
   * Forgets the last `n` positions of every row (the tokens of a speculative run that the
   * decoder did not confirm): the next step continues as if they had never been fed.
   */
  rollback(n: number): void {
    if (n === 0) return;
    const t0 = performance.now();
    if (!Number.isInteger(n) || n < 0) throw new RangeError(`rollback: found ${n}; expected a count of positions ≥ 0`);
    if (this.model.cached) {
      for (const [name, t] of Object.entries(this.past)) {
        // self-attention past [batch, heads, length, d_kv]: keep the first length − n positions
        const [B, H, L, K] = t.dims;
        if (n > L) throw new RangeError(`rollback: ${n} positions, the cache holds ${L}`);
        const src = t.data as Float32Array;
        const keep = L - n;
        const out = new Float32Array(B * H * keep * K);
        for (let bh = 0; bh < B * H; bh++) out.set(src.subarray(bh * L * K, bh * L * K + keep * K), bh * keep * K);
        this.past[name] = new (onnxRuntime().Tensor)('float32', out, [B, H, keep, K]);
      }
    } else {
      for (const p of this.prefixes) {
        if (n > p.length) throw new RangeError(`rollback: ${n} positions, the prefix holds ${p.length}`);
        p.length -= n;
      }
    }
    this.modelMs += performance.now() - t0;
  }

  /** Number of rows of the last step (0 before the first). */
  get batch(): number {
    return this.rows;
  }

  /** Encoder-side inputs tiled to `rows` rows (cached per row count). */
  private shared(rows: number): Record<string, ort.Tensor> {
    let t = this.tiled.get(rows);
    if (t === undefined) {
      t = { encoder_hidden_states: tile(this.hidden, rows), encoder_attention_mask: tile(this.mask, rows) };
      if (this.encoderPast !== null) for (const [k, v] of Object.entries(this.encoderPast)) t[k] = tile(v, rows);
      this.tiled.set(rows, t);
    }
    return t;
  }

  /**
   * Feeds `tokens[r]` as the next token of row r, where row r continues previous row `parents[r]`
   * (null: row r continues row r; on the first step every row starts from scratch and `tokens`
   * are normally the decoder start id). Returns the logits, row r at `r * vocabSize`.
   * The returned array is owned by the caller (may be modified in place).
   *
   * `positions` > 1 feeds several tokens per row in one call (a run of tokens the grammar forces):
   * `tokens` is row-major [rows × positions], and the result holds the logits after each of them,
   * row r position p at `(r * positions + p) * vocabSize` — the same logits as `positions` calls of
   * one token each, up to float rounding (the graph's causal mask sees key j from query i iff
   * j ≤ i + past length).
   */
  async step(tokens: ArrayLike<number>, parents: ArrayLike<number> | null, positions = 1): Promise<Float32Array> {
    const t0 = performance.now();
    const m = this.model;
    const T = positions;
    if (!Number.isInteger(T) || T < 1 || tokens.length % T !== 0) throw new RangeError(`step: ${tokens.length} tokens for ${T} positions per row; expected a multiple`);
    const rows = tokens.length / T;
    const dec = m.decoder;
    const feeds: Record<string, ort.Tensor> = {};
    let logits: Float32Array;
    if (m.cached) {
      const first = this.steps === 0;
      if (first) {
        // empty past, shaped from the graph's metadata: batch_size → rows, other symbols → 0
        for (const meta of dec.inputMetadata) {
          if (!meta.name.startsWith('past_key_values.') || !meta.isTensor) continue;
          const shape = meta.shape.map((d) => (typeof d === 'number' ? d : d === 'batch_size' ? rows : 0));
          feeds[meta.name] = new (onnxRuntime().Tensor)('float32', new Float32Array(0), shape);
        }
      } else {
        const reorder = parents !== null && !isIdentity(parents, this.rows);
        for (const [name, t] of Object.entries(this.past)) feeds[name] = reorder ? gather(t, parents!) : t;
        Object.assign(feeds, this.shared(rows));
      }
      if (first) {
        feeds.encoder_hidden_states = tile(this.hidden, rows);
        feeds.encoder_attention_mask = tile(this.mask, rows);
      }
      feeds.input_ids = int64(tokens, [rows, T]);
      if (dec.inputNames.includes('use_cache_branch')) feeds.use_cache_branch = new (onnxRuntime().Tensor)('bool', [!first], [1]);
      const picked: Record<string, ort.Tensor> = {};
      for (const n of dec.inputNames) picked[n] = feeds[n];
      const out = await dec.run(picked);
      const past: Record<string, ort.Tensor> = {};
      for (const name of dec.outputNames) {
        if (!name.startsWith('present.')) continue;
        const pastName = 'past_key_values.' + name.slice('present.'.length);
        if (name.includes('.encoder.')) {
          if (first) {
            this.encoderPast ??= {};
            this.encoderPast[pastName] = rows === 1 ? out[name] : gather(out[name], [0]);
          }
        } else past[pastName] = out[name];
      }
      this.past = past;
      logits = out.logits.data as Float32Array;
    } else {
      const prev = this.prefixes;
      const next: number[][] = [];
      for (let r = 0; r < rows; r++) {
        const base = this.steps === 0 ? [] : prev[parents === null ? r : parents[r]];
        const row = [...base];
        for (let p = 0; p < T; p++) row.push(tokens[r * T + p]);
        next.push(row);
      }
      this.prefixes = next;
      const len = next[0].length;
      const flat: number[] = [];
      for (const p of next) flat.push(...p);
      Object.assign(feeds, this.shared(rows));
      feeds.input_ids = int64(flat, [rows, len]);
      const picked: Record<string, ort.Tensor> = {};
      for (const n of dec.inputNames) picked[n] = feeds[n];
      const out = await dec.run(picked);
      const all = out.logits.data as Float32Array;
      const v = m.vocabSize;
      logits = new Float32Array(rows * T * v);
      for (let r = 0; r < rows; r++) logits.set(all.subarray((r * len + len - T) * v, (r * len + len) * v), r * T * v);
    }
    this.rows = rows;
    this.steps++;
    this.modelMs += performance.now() - t0;
    return logits;
  }
}
