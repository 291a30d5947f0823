// Outside reference: @huggingface/transformers (transformers.js) v4 loading the same folder with
// AutoModelForSeq2SeqLM + AutoTokenizer, remote loading off, and running its own generate().
import { resolve } from 'node:path';
import { AutoModelForCausalLM, AutoModelForSeq2SeqLM, AutoTokenizer, env, Tensor, type PreTrainedModel, type PreTrainedTokenizer } from '@huggingface/transformers';
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { decode } from '../../src/decode/search.ts';
import { TreewrightMaskHook } from '../../src/decode/hook.ts';
import { applyMask, argmax } from '../../src/decode/logits.ts';
import { FiniteSetConstraint } from './toy-constraint.ts';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const FIXTURE = resolve('test/fixtures/tiny-seq2seq');
const QUESTIONS = [
  'lf: which orchards does chen li own?',
  'sql: how many tonnes of elstar were stored in shed b?',
  'lf: what is the largest orchard by hectares?',
  'sql: which growers planted morello after 2019?',
  'lf: does fenna dekker manage a cold room?',
  'sql: list the varieties grown at river bend',
  'lf: how many lots of conference pears were harvested in 2021?',
  'sql: what is the temperature of the north store?',
];
const TARGETS = [
  ' lambda $x. orchard($x)',
  ' lambda $x. grower($x) & owns($x, hillcrest)',
  ' value: count $x. (shed($x))',
  ' holds: tonnes(elstar) >= 12',
  ' value: 7',
];

let ours: Seq2SeqModel;
let theirs: PreTrainedModel;
let tokenizer: PreTrainedTokenizer;

beforeAll(async () => {
  env.allowRemoteModels = false;
  ours = await loadModel(FIXTURE, { threads: 1 });
  tokenizer = await AutoTokenizer.from_pretrained(FIXTURE, { local_files_only: true });
  theirs = await AutoModelForSeq2SeqLM.from_pretrained(FIXTURE, { local_files_only: true, dtype: 'fp32', session_options: { intraOpNumThreads: 1 } });
});

/** transformers.js greedy generate(); returns the ids after the decoder start token, EOS removed. */
async function reference(question: string, maxNewTokens: number, processor: TreewrightMaskHook | null): Promise<number[]> {
  const inputs = tokenizer(question);
  const out = (await theirs.generate({
    ...inputs,
    max_new_tokens: maxNewTokens,
    do_sample: false,
    ...(processor ? { logits_processor: [processor] as never } : {}),
  })) as Tensor;
  const ids = (out.tolist() as bigint[][])[0].map(Number);
  expect(ids[0]).toBe(ours.config.decoderStartId);
  const body = ids.slice(1);
  const eos = body.indexOf(ours.config.eosIds[0]);
  return eos < 0 ? body : body.slice(0, eos);
}

describe('against transformers.js generate()', () => {
  it('the question is tokenized identically', () => {
    for (const q of QUESTIONS) expect(ours.encodeQuestion(q)).toEqual(tokenizer.encode(q));
  });

  it('unconstrained greedy output equals ours token for token', async () => {
    for (const q of QUESTIONS) {
      const mine = await decode(ours, q, { maxTokens: 16 });
      expect(mine.tokens).toEqual(await reference(q, 16, null));
    }
  });

  it('with the hook, constrained greedy output equals our constrained greedy', async () => {
    const c = new FiniteSetConstraint(ours.vocabulary, TARGETS);
    const hook = new TreewrightMaskHook(c, { maxNewTokens: 40 });
    for (const q of QUESTIONS) {
      const mine = await decode(ours, q, { constraint: c, maxTokens: 40 });
      expect(mine.finished).toBe('eos');
      // one processor instance serves successive generate() calls
      expect(await reference(q, 40, hook)).toEqual(mine.tokens);
    }
    expect(hook.maskMs).toBeGreaterThan(0);
  });

  it('with the hook, transformers.js sampling only produces allowed programs', async () => {
    const c = new FiniteSetConstraint(ours.vocabulary, TARGETS);
    const hook = new TreewrightMaskHook(c, { maxNewTokens: 40 });
    for (const q of QUESTIONS.slice(0, 4)) {
      const out = (await theirs.generate({ ...tokenizer(q), max_new_tokens: 40, do_sample: true, top_k: 0, temperature: 1.5, logits_processor: [hook] as never })) as Tensor;
      const ids = (out.tolist() as bigint[][])[0].map(Number).slice(1);
      expect(ids.at(-1)).toBe(1);
      expect(TARGETS).toContain(ids.slice(0, -1).map((id) => ours.vocabulary.text(id)).join(''));
    }
  });

  it('the hook keeps the token budget of max_new_tokens', async () => {
    const c = new FiniteSetConstraint(ours.vocabulary, TARGETS);
    const fewest = Math.min(...TARGETS.map((_, i) => c.fewestTokens(i)));
    const hook = new TreewrightMaskHook(c, { maxNewTokens: fewest + 1 });
    for (const q of QUESTIONS.slice(0, 3)) {
      const ids = await reference(q, fewest + 1, hook);
      expect(ids).toEqual((await decode(ours, q, { constraint: c, maxTokens: fewest + 1 })).tokens);
      expect(ids.length).toBe(fewest);
    }
  });
});

describe('the hook called directly', () => {
  it('tracks rows across calls and starts over on new row arrays, even one token longer', () => {
    const c = new FiniteSetConstraint(ours.vocabulary, [' value: 7']);
    const hook = new TreewrightMaskHook(c, { maxNewTokens: 10 });
    const V = c.vocabSize;
    const allowed = (t: Tensor, row: number) => {
      const d = t.data as Float32Array;
      const ids: number[] = [];
      for (let i = 0; i < V; i++) if (d[row * V + i] !== -Infinity) ids.push(i);
      return ids;
    };
    const start = new Uint32Array((V + 31) >>> 5);
    c.writeAllowed(c.start(), 10, start);
    const startIds = [...Array(V).keys()].filter((i) => (start[i >>> 5] & (1 << (i & 31))) !== 0);
    const rows = [[5n, 6n, 7n], [5n, 6n, 7n]];
    const first = hook(rows, new Tensor('float32', new Float32Array(2 * V), [2, V])) as Tensor;
    expect(allowed(first, 0)).toEqual(startIds);
    // transformers.js appends the chosen token to the same arrays
    const pick = startIds[0];
    rows[0].push(BigInt(pick));
    rows[1].push(BigInt(pick));
    const second = hook(rows, new Tensor('float32', new Float32Array(2 * V), [2, V])) as Tensor;
    const after = new Uint32Array((V + 31) >>> 5);
    c.writeAllowed(c.advance(c.start(), pick), 9, after);
    expect(allowed(second, 1)).toEqual([...Array(V).keys()].filter((i) => (after[i >>> 5] & (1 << (i & 31))) !== 0));
    // a new generation whose prompt happens to be one token longer: new arrays, so a fresh start
    const fresh = hook([[1n, 2n, 3n, 4n, 5n], [1n, 2n, 3n, 4n, 5n]], new Tensor('float32', new Float32Array(2 * V), [2, V])) as Tensor;
    expect(allowed(fresh, 0)).toEqual(startIds);
    expect(allowed(fresh, 1)).toEqual(startIds);
  });
});

describe('the hook on a decoder-only model (transformers.js AutoModelForCausalLM)', () => {
  it('constrained greedy with the KV cache equals masked arg-max over uncached forward passes', async () => {
    // Reference: the same transformers.js model called without cache on the whole sequence at every
    // step, with the constraint's mask applied by hand to the last row of logits.
    const dir = resolve('test/fixtures/tiny-decoder-only');
    const tok = await AutoTokenizer.from_pretrained(dir, { local_files_only: true });
    const lm = await AutoModelForCausalLM.from_pretrained(dir, { local_files_only: true, dtype: 'fp32', session_options: { intraOpNumThreads: 1 } });
    const c = new FiniteSetConstraint(ours.vocabulary, TARGETS);
    const budget = 40;
    const hook = new TreewrightMaskHook(c, { maxNewTokens: budget });
    const V = c.vocabSize;
    const mask = new Uint32Array((V + 31) >>> 5);
    for (const prompt of ['question: which orchards does chen li own? answer:', 'question: is elstar stored in shed a? answer:']) {
      const inputs = tok(prompt);
      const promptIds = (inputs.input_ids.tolist() as bigint[][])[0].map(Number);
      const out = (await lm.generate({ ...inputs, max_new_tokens: budget, do_sample: false, logits_processor: [hook] as never })) as Tensor;
      const got = (out.tolist() as bigint[][])[0].map(Number).slice(promptIds.length);
      const ids = [...promptIds];
      let state = c.start();
      const want: number[] = [];
      for (let step = 0; step < budget; step++) {
        const t = new Tensor('int64', BigInt64Array.from(ids.map(BigInt)), [1, ids.length]);
        const { logits } = await lm({ input_ids: t, attention_mask: new Tensor('int64', BigInt64Array.from(ids.map(() => 1n)), [1, ids.length]) });
        const row = Float32Array.from((logits.data as Float32Array).subarray((ids.length - 1) * V, ids.length * V));
        c.writeAllowed(state, budget - step, mask);
        applyMask(row, 0, V, mask);
        const id = argmax(row, 0, V);
        want.push(id);
        if (c.eosIds.includes(id)) break;
        state = c.advance(state, id);
        ids.push(id);
      }
      expect(got).toEqual(want);
      expect(want.at(-1)).toBe(1); // ended with EOS within the budget
      const text = want.slice(0, -1).map((id) => ours.vocabulary.text(id)).join('');
      expect(TARGETS).toContain(text);
    }
  });
});
