// Forced runs: tokens the grammar forces are fed to the decoder in one call with several positions
// (drafts verified against the model's own choice, unconfirmed positions rolled back). The
// reference is the same decoder with one call per token (forcedRuns: false): outputs must be
// identical, log-probabilities equal up to float rounding of the batched call.
import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { generate, type GenerateOptions } from '../../src/decode/index.ts';
import { openDatabaseFile } from '../../src/exec/database.ts';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { loadNames, namesFromDatabase } from '../../src/tree/index.ts';

// model runs share two cores with other work: generous limits, no timing assertions
vi.setConfig({ testTimeout: 300_000, hookTimeout: 120_000 });

const STRATEGIES: GenerateOptions[] = [
  { strategy: 'greedy' },
  { strategy: 'beam', beamWidth: 4 },
  { strategy: 'beam', beamWidth: 3, earlyStop: false, lengthPenalty: 0.5 },
  { strategy: 'sample', seed: 7, temperature: 1.3 },
];

async function compare(model: Seq2SeqModel, grammar: Grammar, names: NameBindings, questions: string[], maxTokens: number) {
  let forcedSteps = 0;
  let savedCalls = 0;
  for (const q of questions) {
    for (const opts of STRATEGIES) {
      const ref = await generate(model, q, { grammar, names, maxTokens, ...opts, forcedRuns: false });
      const run = await generate(model, q, { grammar, names, maxTokens, ...opts, forcedRuns: true });
      const what = `${opts.strategy} ${JSON.stringify(q)}`;
      expect(run.tokens, what).toEqual(ref.tokens);
      expect(run.finished, what).toBe(ref.finished);
      expect(run.text, what).toBe(ref.text);
      expect(run.forced, what).toBe(ref.forced);
      expect(run.logprobs.length).toBe(ref.logprobs.length);
      for (let i = 0; i < ref.logprobs.length; i++) expect(Math.abs(run.logprobs[i] - ref.logprobs[i]), `${what} token ${i}`).toBeLessThan(1e-4);
      expect(Math.abs(run.score - ref.score)).toBeLessThan(1e-4);
      expect(run.steps).toBeLessThanOrEqual(ref.steps);
      forcedSteps += ref.forced;
      savedCalls += ref.steps - run.steps;
    }
  }
  return { forcedSteps, savedCalls };
}

describe('forced runs give the outputs of one call per token', () => {
  let demo: Seq2SeqModel;
  let fixture: Seq2SeqModel;
  beforeAll(async () => {
    demo = await loadModel('models/coop', { threads: 1 });
    fixture = await loadModel('test/fixtures/tiny-seq2seq', { threads: 1 });
  });

  it('demo model, SQL: greedy, beam (early stop or not), sampling', async () => {
    const grammar = loadGrammar('grammars/sql/sql.twg');
    const db = openDatabaseFile('grammars/sql/coop.sql');
    const names = namesFromDatabase(db.path);
    db.dispose();
    const questions = readFileSync('models/coop/data/test.jsonl', 'utf8').split('\n').filter(Boolean).slice(0, 6).map((l) => `to sql: ${JSON.parse(l).question}`);
    const { forcedSteps, savedCalls } = await compare(demo, grammar, names, questions, 96);
    // the demo tokenizer spells keywords letter by letter: there are forced runs to feed
    expect(forcedSteps).toBeGreaterThan(0);
    expect(savedCalls).toBeGreaterThan(0);
  });

  it('tiny fixture model, logical forms (tight budgets included)', async () => {
    const grammar = loadGrammar('grammars/lf/lf.twg');
    const names = loadNames('grammars/lf/samples/names.json', grammar);
    const questions = ['lf: which orchards does chen li own?', 'lf: how many lots of conference pears were harvested in 2021?'];
    await compare(fixture, grammar, names, questions, 48);
    await compare(fixture, grammar, names, questions, 20);
  });

  it('a step with several positions gives the logits of one step per position; rollback forgets positions', async () => {
    const ids = [5, 17, 23, 9];
    const a = await fixture.start('lf: which growers grow elstar?');
    const b = await fixture.start('lf: which growers grow elstar?');
    const V = fixture.vocabSize;
    const many = await a.step([fixture.config.decoderStartId, ...ids], null, ids.length + 1);
    let prev = fixture.config.decoderStartId;
    for (let p = 0; p <= ids.length; p++) {
      const one = await b.step([prev], null);
      let diff = 0;
      for (let i = 0; i < V; i++) diff = Math.max(diff, Math.abs(one[i] - many[p * V + i]));
      expect(diff, `position ${p}`).toBeLessThan(1e-4);
      prev = ids[p];
    }
    // roll back the last two positions of `a`, feed something else: equals a fresh run fed the same
    a.rollback(2);
    const after = await a.step([31], null);
    const c = await fixture.start('lf: which growers grow elstar?');
    const fresh = await c.step([fixture.config.decoderStartId, 5, 17, 31], null, 4);
    let diff = 0;
    for (let i = 0; i < V; i++) diff = Math.max(diff, Math.abs(after[i] - fresh[3 * V + i]));
    expect(diff).toBeLessThan(1e-4);
    expect(() => a.rollback(1000)).toThrow(/rollback: 1000 positions, the cache holds/);
  });
});
