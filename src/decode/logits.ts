/**
 * Allocation-free helpers over one row of logits (`row` starts at `off`, `n` entries).
 * Keep in sync with src/decode/hook.ts, which applies the same mask to transformers.js tensors.
 */
import { mulberry32 } from '../util/random.ts';

/** Sets every entry whose bit is clear in `mask` to −Infinity (bit `i & 31` of word `i >>> 5`). */
export function applyMask(logits: Float32Array, off: number, n: number, mask: Uint32Array): void {
  const nw = (n + 31) >>> 5;
  for (let w = 0; w < nw; w++) {
    const bits = mask[w];
    if (bits === 0xffffffff) continue;
    const base = w << 5;
    const end = Math.min(32, n - base);
    if (bits === 0) {
      for (let b = 0; b < end; b++) logits[off + base + b] = -Infinity;
      continue;
    }
    for (let b = 0; b < end; b++) if ((bits & (1 << b)) === 0) logits[off + base + b] = -Infinity;
  }
}

/**
 * log Σ exp(row) (−Infinity for an all −Infinity row). Entries more than 40 below the maximum are
 * skipped: together they add less than n · e⁻⁴⁰ (relative), far below float32 resolution, and a
 * trained model's row is mostly such entries, so most Math.exp calls are saved.
 */
export function logSumExp(logits: Float32Array, off: number, n: number): number {
  let mx = -Infinity;
  for (let i = 0; i < n; i++) if (logits[off + i] > mx) mx = logits[off + i];
  if (mx === -Infinity) return -Infinity;
  const floor = mx - 40;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const x = logits[off + i];
    if (x > floor) s += Math.exp(x - mx);
  }
  return mx + Math.log(s);
}

/** Index (within the row) of the first maximum; −1 when every entry is −Infinity. */
export function argmax(logits: Float32Array, off: number, n: number): number {
  let best = -1;
  let mx = -Infinity;
  for (let i = 0; i < n; i++) {
    if (logits[off + i] > mx) {
      mx = logits[off + i];
      best = i;
    }
  }
  return best;
}

/**
 * A seeded PRNG (mulberry32; common practice, no source): 32-bit state, uniform doubles in [0, 1).
 * The tree stage's generator, wrapped so the decoder holds one reproducible stream per call.
 */
export class Prng {
  private readonly draw: () => number;
  constructor(seed: number) {
    this.draw = mulberry32(seed);
  }
  next(): number {
    return this.draw();
  }
}

/**
 * Draws a token from softmax(row / temperature) restricted to the most probable tokens whose mass
 * reaches `topP` (ties broken by lower id). −Infinity entries are never drawn; −1 when all are.
 * `probs` and `order` are caller-owned scratch arrays of length ≥ n.
 */
export function sampleRow(
  logits: Float32Array,
  off: number,
  n: number,
  temperature: number,
  topP: number,
  rng: Prng,
  probs: Float64Array,
  order: Int32Array,
): number {
  let mx = -Infinity;
  for (let i = 0; i < n; i++) if (logits[off + i] > mx) mx = logits[off + i];
  if (mx === -Infinity) return -1;
  let sum = 0;
  let count = 0;
  for (let i = 0; i < n; i++) {
    const l = logits[off + i];
    const p = l === -Infinity ? 0 : Math.exp((l - mx) / temperature);
    probs[i] = p;
    sum += p;
    if (p > 0) order[count++] = i;
  }
  let kept = count;
  let mass = sum;
  if (topP < 1) {
    order.subarray(0, count).sort((a, b) => probs[b] - probs[a] || a - b);
    let cum = 0;
    kept = 0;
    while (kept < count) {
      cum += probs[order[kept++]];
      if (cum >= topP * sum) break;
    }
    mass = cum;
  }
  let r = rng.next() * mass;
  for (let k = 0; k < kept; k++) {
    r -= probs[order[k]];
    if (r < 0) return order[k];
  }
  return order[kept - 1];
}

/**
 * The token a mask forces, as a draft: when every allowed id spells the same bytes (one trie node
 * in `tokenNode`, e.g. a letter and its byte-fallback token `<0xNN>`), the highest of those ids —
 * in sentencepiece vocabularies the byte-fallback tokens come first, so this is the piece the
 * tokenizer itself writes (common practice, no source); −1 when nothing is allowed, when two
 * allowed ids spell different bytes, or when an allowed id is not in the trie (EOS, special).
 * The decoders verify a draft against the model's choice. Stops at the first id of another node.
 */
export function forcedDraft(mask: Uint32Array, nWords: number, tokenNode: Uint32Array, noNode: number): number {
  let node = -1;
  let best = -1;
  for (let w = 0; w < nWords; w++) {
    let bits = mask[w];
    while (bits !== 0) {
      const low = bits & -bits;
      const id = (w << 5) + (31 - Math.clz32(low));
      bits ^= low;
      const n = tokenNode[id];
      if (n === noNode || (node >= 0 && n !== node)) return -1;
      node = n;
      best = id;
    }
  }
  return best;
}
