/**
 * The decoders: greedy and sampling (one hypothesis, tokens streamed as chosen) and beam search
 * (hypotheses batched in one decoder call per step, the result streamed at the end). Constrained
 * decoding keeps one constraint state per hypothesis; states are persistent, so a beam fork is a
 * shared reference.
 */
import type { Seq2SeqModel } from '../model/index.ts';
import { ModelError } from '../model/index.ts';
import type { TokenConstraint } from '../util/constraint.ts';
import { applyMask, argmax, logSumExp, Prng, sampleRow } from './logits.ts';
import type { DecodeOptions, DecodeResult, StreamToken } from './types.ts';

interface Resolved {
  strategy: 'greedy' | 'beam' | 'sample';
  constraint: TokenConstraint<unknown> | null;
  maxTokens: number;
  beamWidth: number;
  lengthPenalty: number;
  earlyStop: boolean;
  temperature: number;
  topP: number;
  seed: number;
  signal: AbortSignal | null;
}

function fail(what: string, value: unknown, expected: string): never {
  throw new RangeError(`decode option ${what}: found ${JSON.stringify(value)}; expected ${expected}`);
}

export function resolveOptions(model: Seq2SeqModel, o: DecodeOptions): Resolved {
  const strategy = o.strategy ?? 'greedy';
  if (strategy !== 'greedy' && strategy !== 'beam' && strategy !== 'sample') fail('strategy', strategy, '"greedy", "beam" or "sample"');
  const limit = model.maxOutputTokens;
  const maxTokens = o.maxTokens ?? model.outputLimit();
  if (!Number.isInteger(maxTokens) || maxTokens < 1 || maxTokens > limit) fail('maxTokens', maxTokens, `an integer in 1 … ${limit}`);
  const beamWidth = o.beamWidth ?? 4;
  if (!Number.isInteger(beamWidth) || beamWidth < 1 || beamWidth > 64) fail('beamWidth', beamWidth, 'an integer in 1 … 64');
  const lengthPenalty = o.lengthPenalty ?? 1;
  if (!Number.isFinite(lengthPenalty)) fail('lengthPenalty', lengthPenalty, 'a finite number');
  const temperature = o.temperature ?? 1;
  if (!(temperature > 0) || !Number.isFinite(temperature)) fail('temperature', temperature, 'a finite number > 0');
  const topP = o.topP ?? 1;
  if (!(topP > 0 && topP <= 1)) fail('topP', topP, 'a number in (0, 1]');
  const seed = o.seed ?? 0;
  if (!Number.isInteger(seed)) fail('seed', seed, 'an integer');
  const constraint = o.constraint ?? null;
  if (constraint !== null && constraint.vocabSize !== model.vocabSize) {
    throw new ModelError(model.dir, `the token constraint covers ${constraint.vocabSize} token ids but the model has ${model.vocabSize}; expected a constraint built from this model's tokenizer.json`);
  }
  return { strategy, constraint, maxTokens, beamWidth, lengthPenalty, earlyStop: o.earlyStop ?? true, temperature, topP, seed, signal: o.signal ?? null };
}

const utf8 = new TextDecoder();

/** Output text of a token sequence: the bytes of its non-special tokens. */
export function textOf(model: Seq2SeqModel, ids: readonly number[]): string {
  const v = model.vocabulary;
  let n = 0;
  for (const id of ids) if (!v.isSpecial(id)) n += v.length(id);
  const buf = new Uint8Array(n);
  let at = 0;
  for (const id of ids) {
    if (v.isSpecial(id)) continue;
    buf.set(v.bytesOf(id), at);
    at += v.length(id);
  }
  const s = utf8.decode(buf);
  return v.stripsFirstSpace && s.startsWith(' ') ? s.slice(1) : s;
}

function stopIds(model: Seq2SeqModel, c: TokenConstraint<unknown> | null): Uint8Array {
  const stop = new Uint8Array(model.vocabSize);
  for (const id of model.config.eosIds) if (id < stop.length) stop[id] = 1;
  if (c !== null) for (const id of c.eosIds) if (id < stop.length) stop[id] = 1;
  return stop;
}

/** Greedy or sampling: one hypothesis; yields every token as chosen, returns the result. */
async function* single(model: Seq2SeqModel, question: string | readonly number[], o: Resolved): AsyncGenerator<StreamToken, DecodeResult> {
  const t0 = performance.now();
  o.signal?.throwIfAborted();
  const run = await model.start(question);
  const V = model.vocabSize;
  const c = o.constraint;
  const stop = stopIds(model, c);
  const mask = new Uint32Array((V + 31) >>> 5);
  const sampling = o.strategy === 'sample';
  const rng = new Prng(o.seed);
  const probs = sampling ? new Float64Array(V) : null;
  const order = sampling ? new Int32Array(V) : null;
  let state = c?.start();
  let maskMs = 0;
  const tokens: number[] = [];
  const logprobs: number[] = [];
  const tokenTexts: string[] = [];
  let score = 0;
  let finished: 'eos' | 'length' = 'length';
  let prev = model.config.decoderStartId;
  for (let i = 0; i < o.maxTokens; i++) {
    o.signal?.throwIfAborted();
    const logits = await run.step([prev], null);
    const lz = logSumExp(logits, 0, V);
    if (c !== null) {
      const m0 = performance.now();
      c.writeAllowed(state, o.maxTokens - i, mask);
      applyMask(logits, 0, V, mask);
      maskMs += performance.now() - m0;
    }
    const id = sampling ? sampleRow(logits, 0, V, o.temperature, o.topP, rng, probs!, order!) : argmax(logits, 0, V);
    if (id < 0) break; // constrained and nothing allowed (the budget cannot hold a completion)
    const lp = logits[id] - lz; // the chosen entry is unmasked, so it is still the raw logit
    score += lp;
    if (stop[id] === 1) {
      finished = 'eos';
      break;
    }
    if (c !== null) {
      const m0 = performance.now();
      state = c.advance(state, id);
      maskMs += performance.now() - m0;
    }
    tokens.push(id);
    logprobs.push(lp);
    const text = model.vocabulary.text(id);
    tokenTexts.push(text);
    yield { index: i, id, text, logprob: lp };
    prev = id;
  }
  return {
    text: textOf(model, tokens),
    tokens,
    tokenTexts,
    logprobs,
    finished,
    score,
    steps: run.steps,
    model_ms: run.modelMs,
    mask_ms: maskMs,
    total_ms: performance.now() - t0,
  };
}

/** A node of a hypothesis's token list (shared prefixes). */
interface Link {
  readonly id: number;
  readonly lp: number;
  readonly prev: Link | null;
}

interface Hyp {
  readonly link: Link | null;
  readonly sum: number;
  readonly len: number;
  readonly state: unknown;
}

interface Done {
  readonly link: Link | null;
  readonly len: number;
  readonly score: number;
  readonly finished: 'eos' | 'length';
}

function unlink(link: Link | null): { ids: number[]; lps: number[] } {
  const ids: number[] = [];
  const lps: number[] = [];
  for (let l = link; l !== null; l = l.prev) {
    ids.push(l.id);
    lps.push(l.lp);
  }
  return { ids: ids.reverse(), lps: lps.reverse() };
}

/**
 * Beam search. Each step scores, for every live hypothesis, its 2·width best allowed next tokens;
 * the best 2·width candidates overall are walked in order: an EOS candidate ranked below `width`
 * finishes its hypothesis (score sum / length^lengthPenalty, EOS counted), others become the next
 * live hypotheses until `width` are kept.
 */
async function beam(model: Seq2SeqModel, question: string | readonly number[], o: Resolved): Promise<DecodeResult> {
  const t0 = performance.now();
  o.signal?.throwIfAborted();
  const run = await model.start(question);
  const V = model.vocabSize;
  const W = o.beamWidth;
  const K = 2 * W;
  const c = o.constraint;
  const stop = stopIds(model, c);
  const words = (V + 31) >>> 5;
  const mask = new Uint32Array(words);
  const candScore = new Float64Array(W * K);
  const candLp = new Float64Array(W * K);
  const candId = new Int32Array(W * K);
  const candRow = new Int32Array(W * K);
  const candOrder: number[] = [];
  const norm = (sum: number, len: number) => sum / Math.pow(len, o.lengthPenalty);
  let maskMs = 0;
  let beams: Hyp[] = [{ link: null, sum: 0, len: 0, state: c?.start() }];
  let feed: number[] = [model.config.decoderStartId];
  let parents: number[] | null = null;
  const done: Done[] = [];
  let exhausted = true;
  for (let step = 0; step < o.maxTokens; step++) {
    o.signal?.throwIfAborted();
    const logits = await run.step(feed, parents);
    let nc = 0;
    for (let r = 0; r < beams.length; r++) {
      const off = r * V;
      const lz = logSumExp(logits, off, V);
      if (c !== null) {
        const m0 = performance.now();
        c.writeAllowed(beams[r].state, o.maxTokens - step, mask);
        applyMask(logits, off, V, mask);
        maskMs += performance.now() - m0;
      }
      // the K best entries of this row, by insertion into a sorted run (lower id first on ties)
      const start = nc;
      let filled = 0;
      for (let i = 0; i < V; i++) {
        const l = logits[off + i];
        if (l === -Infinity) continue;
        if (filled === K && l <= candLp[start + K - 1]) continue;
        let j = filled < K ? filled++ : K - 1;
        while (j > 0 && candLp[start + j - 1] < l) {
          candLp[start + j] = candLp[start + j - 1];
          candId[start + j] = candId[start + j - 1];
          j--;
        }
        candLp[start + j] = l;
        candId[start + j] = i;
      }
      for (let j = 0; j < filled; j++) {
        candLp[start + j] -= lz;
        candScore[start + j] = beams[r].sum + candLp[start + j];
        candRow[start + j] = r;
      }
      nc += filled;
    }
    candOrder.length = nc;
    for (let i = 0; i < nc; i++) candOrder[i] = i;
    candOrder.sort((a, b) => candScore[b] - candScore[a] || a - b);
    const next: Hyp[] = [];
    const nextFeed: number[] = [];
    const nextParents: number[] = [];
    for (let rank = 0; rank < Math.min(nc, K) && next.length < W; rank++) {
      const k = candOrder[rank];
      const r = candRow[k];
      const id = candId[k];
      const h = beams[r];
      const link: Link = { id, lp: candLp[k], prev: h.link };
      if (stop[id] === 1) {
        if (rank < W) done.push({ link: h.link, len: h.len + 1, score: norm(candScore[k], h.len + 1), finished: 'eos' });
        continue;
      }
      let state = h.state;
      if (c !== null) {
        const m0 = performance.now();
        state = c.advance(state, id);
        maskMs += performance.now() - m0;
      }
      next.push({ link, sum: candScore[k], len: h.len + 1, state });
      nextFeed.push(id);
      nextParents.push(r);
    }
    if (next.length === 0) {
      exhausted = false;
      break;
    }
    if (done.length >= W) {
      if (o.earlyStop) {
        exhausted = false;
        break;
      }
      const ranked = done.map((d) => d.score).sort((a, b) => b - a);
      const worstKept = ranked[W - 1];
      let bestBound = -Infinity;
      for (const h of next) {
        const bound = o.lengthPenalty > 0 ? norm(h.sum, o.maxTokens) : norm(h.sum, h.len + 1);
        if (bound > bestBound) bestBound = bound;
      }
      if (bestBound <= worstKept) {
        exhausted = false;
        break;
      }
    }
    beams = next;
    feed = nextFeed;
    parents = nextParents;
  }
  if (exhausted || done.length === 0) {
    for (const h of beams) done.push({ link: h.link, len: h.len, score: norm(h.sum, Math.max(1, h.len)), finished: 'length' });
  }
  let best = done[0];
  for (const d of done) if (d.score > best.score) best = d;
  const { ids, lps } = unlink(best.link);
  return {
    text: textOf(model, ids),
    tokens: ids,
    tokenTexts: ids.map((id) => model.vocabulary.text(id)),
    logprobs: lps,
    finished: best.finished,
    score: best.score,
    steps: run.steps,
    model_ms: run.modelMs,
    mask_ms: maskMs,
    total_ms: performance.now() - t0,
  };
}

/**
 * Decodes one question; yields tokens as they are chosen (greedy, sampling) or all at the end
 * (beam search), and returns the result.
 */
export async function* decodeStream(
  model: Seq2SeqModel,
  question: string | readonly number[],
  options: DecodeOptions = {},
): AsyncGenerator<StreamToken, DecodeResult> {
  const o = resolveOptions(model, options);
  if (o.strategy !== 'beam') return yield* single(model, question, o);
  const result = await beam(model, question, o);
  for (let i = 0; i < result.tokens.length; i++) {
    yield { index: i, id: result.tokens[i], text: result.tokenTexts[i], logprob: result.logprobs[i] };
  }
  return result;
}

/** Decodes one question (see DecodeOptions) and returns the result. */
export async function decode(model: Seq2SeqModel, question: string | readonly number[], options: DecodeOptions = {}): Promise<DecodeResult> {
  const o = resolveOptions(model, options);
  if (o.strategy === 'beam') return beam(model, question, o);
  const it = single(model, question, o);
  for (;;) {
    const r = await it.next();
    if (r.done) return r.value;
  }
}
