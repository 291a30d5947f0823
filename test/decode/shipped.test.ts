// The shipped demo model (models/coop) against the outside reference @huggingface/transformers
// (transformers.js) v4: AutoModelForSeq2SeqLM + AutoTokenizer on the folder, remote loading off.
// 50 questions of the test split, alternating the two targets ("to sql: " / "to lf: ").
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { AutoModelForSeq2SeqLM, AutoTokenizer, env, type PreTrainedModel, type PreTrainedTokenizer, type Tensor } from '@huggingface/transformers';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { generate, maskEngine } from '../../src/decode/index.ts';
import { TreewrightMaskHook } from '../../src/decode/hook.ts';
import { buildCoop } from '../../src/exec/coop.ts';
import { factNames } from '../../src/exec/facts.ts';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { namesFromDatabase } from '../../src/tree/index.ts';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 600_000, hookTimeout: 600_000 });

const MODEL = resolve('models/coop');
const MAX = 96;
interface Case {
  question: string;
  target: 'sql' | 'lf';
}
const cases: Case[] = readFileSync('models/coop/data/test.jsonl', 'utf8')
  .split('\n')
  .filter((l) => l.trim() !== '')
  .slice(0, 50)
  .map((l, i) => {
    const target = i % 2 === 0 ? 'sql' : 'lf';
    return { question: (target === 'sql' ? 'to sql: ' : 'to lf: ') + (JSON.parse(l) as { question: string }).question, target };
  });

let ours: Seq2SeqModel;
let theirs: PreTrainedModel;
let tokenizer: PreTrainedTokenizer;
let scratch: string;
const grammars: Record<string, Grammar> = {};
const names: Record<string, NameBindings> = {};

beforeAll(async () => {
  env.allowRemoteModels = false;
  ours = await loadModel(MODEL, { threads: 1 });
  tokenizer = await AutoTokenizer.from_pretrained(MODEL, { local_files_only: true });
  theirs = await AutoModelForSeq2SeqLM.from_pretrained(MODEL, { local_files_only: true, dtype: 'fp32', session_options: { intraOpNumThreads: 1 } });
  scratch = mkdtempSync(join(tmpdir(), 'tw-shipped-'));
  const { dbPath, facts } = buildCoop('grammars/sql/coop.sql', join(scratch, 'coop.db'));
  grammars.sql = loadGrammar('grammars/sql/sql.twg');
  grammars.lf = loadGrammar('grammars/lf/lf.twg');
  names.sql = namesFromDatabase(dbPath);
  names.lf = factNames(facts);
});
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

async function reference(question: string, processor: TreewrightMaskHook | null): Promise<number[]> {
  const out = (await theirs.generate({
    ...tokenizer(question),
    max_new_tokens: MAX,
    do_sample: false,
    ...(processor ? { logits_processor: [processor] as never } : {}),
  })) as Tensor;
  const ids = (out.tolist() as bigint[][])[0].map(Number).slice(1);
  const eos = ids.indexOf(ours.config.eosIds[0]);
  return eos < 0 ? ids : ids.slice(0, eos);
}

describe('the shipped model', () => {
  it('unconstrained greedy equals transformers.js token for token on 50 test questions', async () => {
    expect(cases.length).toBe(50);
    for (const c of cases) {
      const r = await generate(ours, c.question, { maxTokens: MAX });
      expect(r.tokens, c.question).toEqual(await reference(c.question, null));
    }
  });

  it('constrained greedy with the hook inside transformers.js equals our constrained greedy; outputs are well-typed', async () => {
    const hooks = {
      sql: new TreewrightMaskHook(maskEngine(ours, grammars.sql).bind(names.sql), { maxNewTokens: MAX }),
      lf: new TreewrightMaskHook(maskEngine(ours, grammars.lf).bind(names.lf), { maxNewTokens: MAX }),
    };
    for (const c of cases) {
      const r = await generate(ours, c.question, { grammar: grammars[c.target], names: names[c.target], maxTokens: MAX });
      expect(r.parse_error, c.question).toBeNull();
      expect(r.well_typed, c.question).toBe(true);
      expect(await reference(c.question, hooks[c.target]), c.question).toEqual(r.tokens);
    }
  });
});
