/**
 * The decoders: greedy and sampling (one hypothesis, tokens streamed as chosen) and beam search
 * (hypotheses batched in one decoder call per step, the result streamed at the end). Constrained
 * decoding keeps one constraint state per hypothesis; states are persistent, so a beam fork is a
 * shared reference.
 */
import type { Seq2SeqModel } from '../model/index.ts';
import { ModelError } from '../model/index.ts';
import type { TokenConstraint } from '../util/constraint.ts';
import { NO_NODE } from '../vocab/index.ts';
import { applyMask, argmax, forcedDraft, logSumExp, Prng, sampleRow } from './logits.ts';
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
  forcedRuns: boolean;
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
  return { strategy, constraint, maxTokens, beamWidth, lengthPenalty, earlyStop: o.earlyStop ?? true, temperature, topP, seed, signal: o.signal ?? null, forcedRuns: o.forcedRuns ?? true };
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

/** Longest run of forced tokens fed to the decoder in one call. */
const MAX_RUN = 32;

/** Grows `list` to hold index `k` (buffers allocated once per decode, on first need). */
function maskAt(list: Uint32Array[], k: number, nWords: number): Uint32Array {
  while (list.length <= k) list.push(new Uint32Array(nWords));
  return list[k];
}

/**
 * Greedy or sampling: one hypothesis; yields every token as chosen, returns the result.
 *
 * Forced runs (`forcedRuns`, constrained only): the mask of the next position is computed before
 * the decoder call. When every token it allows spells the same bytes, the grammar forces the
 * text; the highest such id is taken as a draft (forcedDraft), the state advances over it and the
 * next mask is computed, and so on — the whole run goes to the decoder in one call with several
 * positions. Each position's logits then go through the same masking and choice as a step of its
 * own; while the choice equals the draft the run is confirmed, and at the first difference the
 * choice is kept, the unconfirmed positions are rolled back from the decoder's cache, and decoding
 * continues from there. So tokens, log-probabilities and the sampler's draws are those of one call
 * per token.
 */
async function* single(model: Seq2SeqModel, question: string | readonly number[], o: Resolved): AsyncGenerator<StreamToken, DecodeResult> {
  const t0 = performance.now();
  o.signal?.throwIfAborted();
  const run = await model.start(question);
  const V = model.vocabSize;
  const nWords = (V + 31) >>> 5;
  const c = o.constraint;
  const stop = stopIds(model, c);
  const { tokenNode } = model.vocabulary.trie;
  /** per position of a call: its mask, and the state before its choice */
  const masks: Uint32Array[] = [new Uint32Array(nWords)];
  const states: unknown[] = [];
  const sampling = o.strategy === 'sample';
  const rng = new Prng(o.seed);
  const probs = sampling ? new Float64Array(V) : null;
  const order = sampling ? new Int32Array(V) : null;
  let state = c?.start();
  let maskMs = 0;
  let forced = 0;
  const tokens: number[] = [];
  const logprobs: number[] = [];
  const tokenTexts: string[] = [];
  const feed: number[] = [];
  let score = 0;
  let finished: 'eos' | 'length' = 'length';
  let prev = model.config.decoderStartId;
  let i = 0;
  let positions = 0;
  decoding: while (i < o.maxTokens) {
    o.signal?.throwIfAborted();
    feed.length = 0;
    feed.push(prev);
    states[0] = state;
    if (c !== null) {
      const m0 = performance.now();
      c.writeAllowed(state, o.maxTokens - i, masks[0]);
      // a forced run: advance over each draft now; the last position stays a free choice
      while (o.forcedRuns && feed.length <= MAX_RUN && i + feed.length < o.maxTokens) {
        const k = feed.length;
        const d = forcedDraft(masks[k - 1], nWords, tokenNode, NO_NODE);
        if (d < 0) break;
        states[k] = c.advance(states[k - 1], d);
        feed.push(d);
        c.writeAllowed(states[k], o.maxTokens - i - k, maskAt(masks, k, nWords));
      }
      maskMs += performance.now() - m0;
    }
    const T = feed.length;
    const logits = await run.step(feed, null, T);
    for (let p = 0; p < T; p++) {
      const off = p * V;
      const lz = logSumExp(logits, off, V);
      if (c !== null) {
        const m0 = performance.now();
        applyMask(logits, off, V, masks[p]);
        if (p < T - 1 || forcedDraft(masks[p], nWords, tokenNode, NO_NODE) >= 0) forced++;
        maskMs += performance.now() - m0;
      }
      positions++;
      const id = sampling ? sampleRow(logits, off, V, o.temperature, o.topP, rng, probs!, order!) : argmax(logits, off, V);
      if (id < 0) break decoding; // constrained and nothing allowed (the budget cannot hold a completion)
      const lp = logits[off + id] - lz; // the chosen entry is unmasked, so it is still the raw logit
      score += lp;
      if (stop[id] === 1) {
        finished = 'eos';
        break decoding;
      }
      tokens.push(id);
      logprobs.push(lp);
      const text = model.vocabulary.text(id);
      tokenTexts.push(text);
      yield { index: i, id, text, logprob: lp };
      prev = id;
      i++;
      if (p < T - 1 && id === feed[p + 1]) {
        state = states[p + 1]; // the draft confirmed
        continue;
      }
      if (c !== null) {
        const m0 = performance.now();
        state = c.advance(states[p], id);
        maskMs += performance.now() - m0;
      }
      run.rollback(T - 1 - p); // drafts after this position were not confirmed
      break;
    }
  }
  return {
    text: textOf(model, tokens),
    tokens,
    tokenTexts,
    logprobs,
    finished,
    score,
    steps: run.steps,
    positions,
    forced,
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

/** Longest forced run of beam search (masks are kept per row and position: W × this many). */
const MAX_BEAM_RUN = 16;

/**
 * Beam search. Each step scores, for every live hypothesis, its 2·width best allowed next tokens;
 * the best 2·width candidates overall are walked in order: an EOS candidate ranked below `width`
 * finishes its hypothesis (score sum / length^lengthPenalty, EOS counted), others become the next
 * live hypotheses until `width` are kept.
 *
 * Forced runs: the masks of the live rows are computed before the decoder call. While every row's
 * mask forces its text (see single), each row's draft is advanced over, and the common run goes
 * to the decoder in one call with several positions per row. The positions are then scored and
 * ranked one by one exactly as separate steps; a step confirms the run when each of its new
 * hypotheses continues a different row of the call with that row's draft (the ranking may reorder
 * them: `src` says which row of the call each hypothesis continues). At the first step that does
 * not, its hypotheses are kept, the unconfirmed positions are rolled back, and decoding continues.
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
  const nWords = (V + 31) >>> 5;
  const { tokenNode } = model.vocabulary.trie;
  /** per row of a call, per position: mask, state before the choice, fed token */
  const rowMasks: Uint32Array[][] = Array.from({ length: W }, () => [new Uint32Array(nWords)]);
  const rowStates: unknown[][] = Array.from({ length: W }, () => []);
  const rowFeed: number[][] = Array.from({ length: W }, () => []);
  const candScore = new Float64Array(W * K);
  const candLp = new Float64Array(W * K);
  const candId = new Int32Array(W * K);
  const candRow = new Int32Array(W * K);
  const candOrder: number[] = [];
  const tokensIn: number[] = [];
  const norm = (sum: number, len: number) => sum / Math.pow(len, o.lengthPenalty);
  let maskMs = 0;
  let forced = 0;
  let beams: Hyp[] = [{ link: null, sum: 0, len: 0, state: c?.start() }];
  let feed: number[] = [model.config.decoderStartId];
  let parents: number[] | null = null;
  const done: Done[] = [];
  let exhausted = true;

  /** The K best allowed entries of one (masked) row into the candidate arrays at `start` (insertion into a sorted run, lower id first on ties); returns how many. */
  const rowCandidates = (logits: Float32Array, off: number, lz: number, start: number, r: number, sum: number): number => {
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
      candScore[start + j] = sum + candLp[start + j];
      candRow[start + j] = r;
    }
    return filled;
  };
  const allDrafted = (rows: number, p: number): boolean => {
    for (let r = 0; r < rows; r++) if (forcedDraft(rowMasks[r][p], nWords, tokenNode, NO_NODE) < 0) return false;
    return true;
  };

  let step = 0;
  decoding: while (step < o.maxTokens) {
    o.signal?.throwIfAborted();
    const rows = beams.length;
    let T = 1;
    for (let r = 0; r < rows; r++) {
      rowFeed[r].length = 0;
      rowFeed[r].push(feed[r]);
      rowStates[r][0] = beams[r].state;
    }
    if (c !== null) {
      const m0 = performance.now();
      for (let r = 0; r < rows; r++) c.writeAllowed(beams[r].state, o.maxTokens - step, rowMasks[r][0]);
      // while every row's text is forced: advance each row over its draft
      while (o.forcedRuns && T <= MAX_BEAM_RUN && step + T < o.maxTokens && allDrafted(rows, T - 1)) {
        for (let r = 0; r < rows; r++) {
          const d = forcedDraft(rowMasks[r][T - 1], nWords, tokenNode, NO_NODE);
          rowStates[r][T] = c.advance(rowStates[r][T - 1], d);
          rowFeed[r].push(d);
          c.writeAllowed(rowStates[r][T], o.maxTokens - step - T, maskAt(rowMasks[r], T, nWords));
        }
        T++;
      }
      maskMs += performance.now() - m0;
    }
    tokensIn.length = 0;
    for (let r = 0; r < rows; r++) for (let p = 0; p < T; p++) tokensIn.push(rowFeed[r][p]);
    const logits = await run.step(tokensIn, parents, T);
    /** per hypothesis: the row of this call it continues */
    let src: number[] = Array.from({ length: rows }, (_, r) => r);
    for (let p = 0; p < T; p++) {
      if (c !== null) {
        const m0 = performance.now();
        if (p < T - 1 || allDrafted(rows, p)) forced++;
        maskMs += performance.now() - m0;
      }
      let nc = 0;
      for (let r = 0; r < beams.length; r++) {
        const b = src[r];
        const off = (b * T + p) * V;
        const lz = logSumExp(logits, off, V); // the model's own distribution, before masking
        if (c !== null) {
          const m0 = performance.now();
          applyMask(logits, off, V, rowMasks[b][p]);
          maskMs += performance.now() - m0;
        }
        nc += rowCandidates(logits, off, lz, nc, r, beams[r].sum);
      }
      candOrder.length = nc;
      for (let i = 0; i < nc; i++) candOrder[i] = i;
      candOrder.sort((a, b) => candScore[b] - candScore[a] || a - b);
      const next: Hyp[] = [];
      const nextFeed: number[] = [];
      const nextSrc: number[] = [];
      let confirmed = p < T - 1;
      const used = new Uint8Array(rows);
      for (let rank = 0; rank < Math.min(nc, K) && next.length < W; rank++) {
        const k = candOrder[rank];
        const r = candRow[k];
        const id = candId[k];
        const h = beams[r];
        const link: Link = { id, lp: candLp[k], prev: h.link };
        if (stop[id] === 1) {
          if (rank < W) done.push({ link: h.link, len: h.len + 1, score: norm(candScore[k], h.len + 1), finished: 'eos' });
          confirmed = false;
          continue;
        }
        const b = src[r];
        let state = h.state;
        if (p < T - 1 && id === rowFeed[b][p + 1] && used[b] === 0) {
          state = rowStates[b][p + 1]; // this row's draft, state computed before the call
          used[b] = 1;
        } else {
          confirmed = false;
          if (c !== null) {
            const m0 = performance.now();
            state = c.advance(state, id);
            maskMs += performance.now() - m0;
          }
        }
        next.push({ link, sum: candScore[k], len: h.len + 1, state });
        nextFeed.push(id);
        nextSrc.push(b);
      }
      step++;
      if (next.length === 0) {
        exhausted = false;
        break decoding;
      }
      if (done.length >= W) {
        if (o.earlyStop) {
          exhausted = false;
          break decoding;
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
          break decoding;
        }
      }
      beams = next;
      if (confirmed) {
        src = nextSrc;
        continue;
      }
      run.rollback(T - 1 - p); // positions after this one were not confirmed
      feed = nextFeed;
      parents = nextSrc;
      break;
    }
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
    positions: step,
    forced,
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
