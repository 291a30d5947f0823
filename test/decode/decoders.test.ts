import { beforeAll, describe, expect, it, vi } from 'vitest';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { decode, decodeStream } from '../../src/decode/search.ts';
import { Prng, sampleRow } from '../../src/decode/logits.ts';
import { FiniteSetConstraint, type ToyState } from './toy-constraint.ts';
import * as ort from 'onnxruntime-node';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const FIXTURE = 'test/fixtures/tiny-seq2seq';
const QUESTIONS = [
  'lf: which orchards does chen li own?',
  'sql: how many tonnes of elstar were stored in shed b?',
  'lf: what is the largest orchard by hectares?',
  'sql: which growers planted morello after 2019?',
];
// Targets in raw token-byte space (the tokenizer's decoder drops the leading space).
const TARGETS = [
  ' lambda $x. orchard($x)',
  ' lambda $x. grower($x) & owns($x, hillcrest)',
  ' value: count $x. (shed($x))',
  ' holds: tonnes(elstar) >= 12',
  ' value: 7',
];

let model: Seq2SeqModel;
let plain: Seq2SeqModel;
beforeAll(async () => {
  model = await loadModel(FIXTURE, { threads: 1 });
  plain = await loadModel(FIXTURE, { threads: 1, noCache: true });
});

/** Sum of the model's log-probabilities of `ids` followed by EOS, computed by one call of the uncached decoder graph. */
async function sequenceLogprob(m: Seq2SeqModel, question: string, ids: number[], withEos = true): Promise<number> {
  const enc = m.encodeQuestion(question);
  const i64 = (a: number[], dims: number[]) => new ort.Tensor('int64', BigInt64Array.from(a.map(BigInt)), dims);
  const { last_hidden_state } = await m.encoder.run({ input_ids: i64(enc, [1, enc.length]), attention_mask: i64(enc.map(() => 1), [1, enc.length]) });
  const input = [m.config.decoderStartId, ...ids];
  const out = await m.decoder.run({
    input_ids: i64(input, [1, input.length]),
    encoder_attention_mask: i64(enc.map(() => 1), [1, enc.length]),
    encoder_hidden_states: last_hidden_state,
  });
  const logits = out.logits.data as Float32Array;
  const V = m.vocabSize;
  const next = withEos ? [...ids, m.config.eosIds[0]] : ids;
  let sum = 0;
  for (let t = 0; t < next.length; t++) {
    const row = logits.subarray(t * V, (t + 1) * V);
    let mx = -Infinity;
    for (const x of row) mx = Math.max(mx, x);
    let z = 0;
    for (const x of row) z += Math.exp(x - mx);
    sum += row[next[t]] - mx - Math.log(z);
  }
  return sum;
}

/** Every token sequence the constraint accepts (depth-first over its masks). */
function enumerate(c: FiniteSetConstraint, budget: number): number[][] {
  const out: number[][] = [];
  const walk = (s: ToyState, path: number[]) => {
    const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
    c.writeAllowed(s, budget - path.length, mask);
    for (let id = 0; id < c.vocabSize; id++) {
      if ((mask[id >>> 5] & (1 << (id & 31))) === 0) continue;
      if (c.eosIds.includes(id)) out.push(path);
      else walk(c.advance(s, id), [...path, id]);
    }
  };
  walk(c.start(), []);
  return out;
}

describe('greedy', () => {
  it('picks the arg-max of each step, and the cached and uncached runtimes agree', async () => {
    for (const q of QUESTIONS) {
      const a = await decode(model, q, { maxTokens: 12 });
      const b = await decode(plain, q, { maxTokens: 12 });
      expect(a.tokens).toEqual(b.tokens);
      expect(a.tokens.length + (a.finished === 'eos' ? 1 : 0)).toBeLessThanOrEqual(12);
      expect(a.tokenTexts).toEqual(a.tokens.map((id) => model.vocabulary.text(id)));
      // the reported log-probabilities are the model's: their sum matches an independent scoring
      // (an unfinished sequence is scored up to its last token)
      expect(a.score).toBeCloseTo(await sequenceLogprob(plain, q, a.tokens, a.finished === 'eos'), 3);
      expect(a.logprobs.reduce((x, y) => x + y, 0)).toBeCloseTo(await sequenceLogprob(plain, q, a.tokens, false), 3);
      expect(a.model_ms).toBeGreaterThan(0);
      expect(a.mask_ms).toBe(0);
    }
  });

  it('constrained: every output is one of the allowed programs, within the token budget', async () => {
    const c = new FiniteSetConstraint(model.vocabulary, TARGETS);
    for (const q of QUESTIONS) {
      const r = await decode(model, q, { constraint: c, maxTokens: 40 });
      expect(r.finished).toBe('eos');
      expect(TARGETS.map((t) => t.slice(1))).toContain(r.text);
      expect(r.mask_ms).toBeGreaterThan(0);
    }
    // budget: with exactly enough tokens for the shortest target(s) plus EOS, the output is one of them
    const fewest = TARGETS.map((_, i) => c.fewestTokens(i));
    const least = Math.min(...fewest);
    const shortest = TARGETS.filter((_, i) => fewest[i] === least).map((t) => t.slice(1));
    expect(shortest.length).toBeLessThan(TARGETS.length);
    for (const q of QUESTIONS) {
      const r = await decode(model, q, { constraint: c, maxTokens: least + 1 });
      expect(r.finished).toBe('eos');
      expect(shortest).toContain(r.text);
    }
  });

  it('streams each token as it is chosen', async () => {
    const seen: number[] = [];
    const it = decodeStream(model, QUESTIONS[1], { maxTokens: 9 });
    let r = await it.next();
    while (!r.done) {
      expect(r.value.index).toBe(seen.length);
      seen.push(r.value.id);
      r = await it.next();
    }
    expect(seen).toEqual(r.value.tokens);
    expect(seen.length).toBeGreaterThan(0);
  });
});

describe('beam search', () => {
  it('width 1 is greedy', async () => {
    const c = new FiniteSetConstraint(model.vocabulary, TARGETS);
    for (const q of QUESTIONS) {
      expect((await decode(model, q, { strategy: 'beam', beamWidth: 1, maxTokens: 12 })).tokens).toEqual((await decode(model, q, { maxTokens: 12 })).tokens);
      expect((await decode(model, q, { strategy: 'beam', beamWidth: 1, constraint: c, maxTokens: 40 })).tokens).toEqual(
        (await decode(model, q, { constraint: c, maxTokens: 40 })).tokens,
      );
    }
  });

  it('finds the exact best sequence when the beam holds every hypothesis', async () => {
    // Reference: exhaustive enumeration of every token sequence a small constraint accepts, each
    // scored by one call of the uncached decoder graph (independent of the cached runtime).
    const c = new FiniteSetConstraint(model.vocabulary, [' $x', ' 12', ' (1)', ' ~$y', ' tonnes']);
    const all = enumerate(c, 8);
    expect(all.length).toBeGreaterThan(10);
    expect(all.length).toBeLessThanOrEqual(32); // the beam below can hold them all
    for (const q of QUESTIONS.slice(0, 2)) {
      const scored = await Promise.all(all.map(async (ids) => ({ ids, sum: await sequenceLogprob(plain, q, ids) })));
      for (const alpha of [0, 1]) {
        const norm = (s: { ids: number[]; sum: number }) => s.sum / Math.pow(s.ids.length + 1, alpha);
        const best = scored.reduce((a, b) => (norm(b) > norm(a) ? b : a));
        const r = await decode(model, q, { strategy: 'beam', beamWidth: 64, lengthPenalty: alpha, earlyStop: false, constraint: c, maxTokens: 8 });
        expect(r.tokens).toEqual(best.ids);
        expect(r.score).toBeCloseTo(norm(best), 3);
        const u = await decode(plain, q, { strategy: 'beam', beamWidth: 64, lengthPenalty: alpha, earlyStop: false, constraint: c, maxTokens: 8 });
        expect(u.tokens).toEqual(best.ids);
      }
    }
  });

  it('constrained beam outputs are allowed programs; cached and uncached agree', async () => {
    const c = new FiniteSetConstraint(model.vocabulary, TARGETS);
    for (const q of QUESTIONS) {
      const a = await decode(model, q, { strategy: 'beam', beamWidth: 4, constraint: c, maxTokens: 40 });
      const b = await decode(plain, q, { strategy: 'beam', beamWidth: 4, constraint: c, maxTokens: 40 });
      expect(a.tokens).toEqual(b.tokens);
      expect(a.finished).toBe('eos');
      expect(TARGETS.map((t) => t.slice(1))).toContain(a.text);
      expect(a.logprobs.length).toBe(a.tokens.length);
    }
  });
});

describe('sampling', () => {
  it('is reproducible from its seed and constrained outputs are allowed programs', async () => {
    const c = new FiniteSetConstraint(model.vocabulary, TARGETS);
    const texts = new Set<string>();
    for (let seed = 1; seed <= 6; seed++) {
      const a = await decode(model, QUESTIONS[0], { strategy: 'sample', seed, temperature: 1.5, constraint: c, maxTokens: 40 });
      const b = await decode(model, QUESTIONS[0], { strategy: 'sample', seed, temperature: 1.5, constraint: c, maxTokens: 40 });
      expect(a.tokens).toEqual(b.tokens);
      expect(a.finished).toBe('eos');
      expect(TARGETS.map((t) => t.slice(1))).toContain(a.text);
      texts.add(a.tokens.join(','));
    }
    expect(texts.size).toBeGreaterThan(1); // different seeds, different draws
  });

  it('a tiny nucleus is greedy', async () => {
    for (const q of QUESTIONS) {
      const s = await decode(model, q, { strategy: 'sample', topP: 1e-9, seed: 3, maxTokens: 10 });
      expect(s.tokens).toEqual((await decode(model, q, { maxTokens: 10 })).tokens);
    }
  });

  it('draws tokens with the softmax probabilities of the nucleus', () => {
    // Reference: the definitions of softmax with temperature and of nucleus (top-p) truncation
    // (common practice, no source); frequencies must lie within 5 standard errors.
    const logits = Float32Array.from([2, 1, 0.5, -Infinity, 0, 1.5, -1]);
    const n = logits.length;
    const probs = new Float64Array(n);
    const order = new Int32Array(n);
    for (const [temperature, topP] of [[1, 1], [0.7, 1], [1, 0.8]] as const) {
      const w = Array.from(logits, (l) => (l === -Infinity ? 0 : Math.exp(l / temperature)));
      const idx = w.map((_, i) => i).sort((a, b) => w[b] - w[a]);
      const total = w.reduce((a, b) => a + b, 0);
      const keep = new Array<number>(n).fill(0);
      let cum = 0;
      for (const i of idx) {
        if (w[i] === 0) break;
        keep[i] = w[i];
        cum += w[i];
        if (cum >= topP * total) break;
      }
      const expected = keep.map((x) => x / cum);
      const draws = 40000;
      const counts = new Array<number>(n).fill(0);
      const rng = new Prng(12345);
      for (let k = 0; k < draws; k++) counts[sampleRow(logits, 0, n, temperature, topP, rng, probs, order)]++;
      for (let i = 0; i < n; i++) {
        const p = expected[i];
        const se = Math.sqrt((p * (1 - p)) / draws);
        expect(Math.abs(counts[i] / draws - p)).toBeLessThanOrEqual(5 * se + 1e-12);
      }
    }
  });
});

describe('options', () => {
  it('rejects bad values with the expected range', async () => {
    await expect(decode(model, 'x', { maxTokens: 0 })).rejects.toThrow('decode option maxTokens: found 0; expected an integer in 1 … 127');
    await expect(decode(model, 'x', { strategy: 'sample', temperature: 0 })).rejects.toThrow('decode option temperature: found 0; expected a finite number > 0');
    await expect(decode(model, 'x', { strategy: 'sample', topP: 1.5 })).rejects.toThrow('decode option topP: found 1.5; expected a number in (0, 1]');
    await expect(decode(model, 'x', { strategy: 'beam', beamWidth: 0 })).rejects.toThrow('decode option beamWidth: found 0; expected an integer in 1 … 64');
    const wrong = { ...new FiniteSetConstraint(model.vocabulary, TARGETS), vocabSize: 300 } as unknown as FiniteSetConstraint;
    await expect(decode(model, 'x', { constraint: wrong })).rejects.toThrow(
      `${model.dir}: the token constraint covers 300 token ids but the model has 287; expected a constraint built from this model's tokenizer.json`,
    );
  });
});
