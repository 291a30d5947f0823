import { copyFileSync, cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { loadModel, ModelError, type Seq2SeqModel } from '../../src/model/index.ts';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const FIXTURE = 'test/fixtures/tiny-seq2seq';
const QUESTION = 'lf: which orchards does chen li own?';

let model: Seq2SeqModel;
let plain: Seq2SeqModel;
let scratch: string;

beforeAll(async () => {
  model = await loadModel(FIXTURE, { threads: 1 });
  plain = await loadModel(FIXTURE, { threads: 1, noCache: true });
  scratch = mkdtempSync(join(tmpdir(), 'tw-model-'));
});
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

/** A copy of the fixture folder, changed by `edit`, under the scratch folder. */
function variant(name: string, edit: (dir: string) => void): string {
  const dir = join(scratch, name);
  cpSync(FIXTURE, dir, { recursive: true });
  edit(dir);
  return dir;
}

async function loadError(dir: string): Promise<string> {
  try {
    await loadModel(dir, { threads: 1 });
  } catch (e) {
    expect(e).toBeInstanceOf(ModelError);
    return (e as Error).message;
  }
  throw new Error('expected loadModel to fail');
}

describe('loading', () => {
  it('reads the configuration, the tokenizer and the merged decoder', () => {
    expect(model.cached).toBe(true);
    expect(model.decoderFile).toBe('onnx/decoder_model_merged.onnx');
    expect(model.vocabSize).toBe(287);
    expect(model.config).toMatchObject({ encoderLayers: 2, decoderLayers: 2, heads: 4, dKv: 8, dModel: 32, padId: 0, eosIds: [1], decoderStartId: 0 });
    // the tokenizer appends </s> (id 1) as its post-processor template says
    expect(model.encodeQuestion(QUESTION).at(-1)).toBe(1);
  });

  it('falls back to decoder_model.onnx when the merged decoder is absent', async () => {
    const dir = variant('no-merged', (d) => rmSync(join(d, 'onnx', 'decoder_model_merged.onnx')));
    const m = await loadModel(dir, { threads: 1 });
    expect(m.cached).toBe(false);
    expect(m.decoderFile).toBe('onnx/decoder_model.onnx');
  });

  it('names the missing piece', async () => {
    expect(await loadError(join(scratch, 'nowhere'))).toBe(
      `${join(scratch, 'nowhere')}: not a folder; expected a model folder (a seq2seq model folder holds config.json, tokenizer.json, tokenizer_config.json, onnx/encoder_model.onnx and onnx/decoder_model_merged.onnx (or onnx/decoder_model.onnx))`,
    );
    const noEncoder = variant('no-encoder', (d) => rmSync(join(d, 'onnx', 'encoder_model.onnx')));
    expect(await loadError(noEncoder)).toBe(
      `${join(noEncoder, 'onnx', 'encoder_model.onnx')}: file is missing; expected it in the model folder (a seq2seq model folder holds config.json, tokenizer.json, tokenizer_config.json, onnx/encoder_model.onnx and onnx/decoder_model_merged.onnx (or onnx/decoder_model.onnx))`,
    );
    const noDecoder = variant('no-decoder', (d) => {
      rmSync(join(d, 'onnx', 'decoder_model_merged.onnx'));
      rmSync(join(d, 'onnx', 'decoder_model.onnx'));
    });
    expect(await loadError(noDecoder)).toBe(
      `${noDecoder}/onnx: neither decoder_model_merged.onnx nor decoder_model.onnx is present; expected one of them (decoder_model_merged.onnx gives cached decoding)`,
    );
  });

  it('rejects a corrupt ONNX file before decoding', async () => {
    const dir = variant('corrupt', (d) => {
      const f = join(d, 'onnx', 'decoder_model_merged.onnx');
      writeFileSync(f, readFileSync(f).subarray(0, 5000));
    });
    const msg = await loadError(dir);
    expect(msg.startsWith(`${join(dir, 'onnx', 'decoder_model_merged.onnx')}: not a loadable ONNX model (onnxruntime: `)).toBe(true);
    expect(msg.endsWith('); expected an ONNX file exported for this folder\'s config.json')).toBe(true);
  });

  it('rejects a graph from another model (missing inputs)', async () => {
    const dir = variant('swapped', (d) => copyFileSync(join(d, 'onnx', 'decoder_model.onnx'), join(d, 'onnx', 'decoder_model_merged.onnx')));
    expect(await loadError(dir)).toBe(
      `${join(dir, 'onnx', 'decoder_model_merged.onnx')}: the graph has no input "past_key_values.0.decoder.key"; expected it among the inputs (the graph has: input_ids, encoder_attention_mask, encoder_hidden_states)`,
    );
  });

  it('rejects a tokenizer whose size differs from the logits dimension', async () => {
    const dir = variant('bigger-tokenizer', (d) => {
      const f = join(d, 'tokenizer.json');
      const tok = JSON.parse(readFileSync(f, 'utf8'));
      tok.model.vocab.push(['▁extra', -20]);
      writeFileSync(f, JSON.stringify(tok));
    });
    expect(await loadError(dir)).toBe(
      `${join(dir, 'tokenizer.json')}: at $.model.vocab: the tokenizer has 288 tokens (added tokens included) but the logits of ${join(dir, 'onnx', 'decoder_model_merged.onnx')} have 287 entries; expected equal sizes — the tokenizer does not belong to this model`,
    );
  });

  it('rejects a config.json that is not a seq2seq configuration', async () => {
    const dir = variant('decoder-only', (d) => {
      const f = join(d, 'config.json');
      const c = JSON.parse(readFileSync(f, 'utf8'));
      c.is_encoder_decoder = false;
      writeFileSync(f, JSON.stringify(c));
    });
    expect(await loadError(dir)).toBe(`${join(dir, 'config.json')}: at $.is_encoder_decoder: found false; expected true (a seq2seq model)`);
  });
});

describe('input prefixes', () => {
  it('come from config.json treewright.prefixes, else "to <grammar>: "', async () => {
    expect(model.prefixFor('sql')).toBe('to sql: ');
    const dir = variant('prefixes', (d) => {
      const f = join(d, 'config.json');
      const c = JSON.parse(readFileSync(f, 'utf8'));
      c.treewright.prefixes = { sql: 'translate to SQL: ' };
      writeFileSync(f, JSON.stringify(c));
    });
    const m = await loadModel(dir, { threads: 1 });
    expect(m.prefixFor('sql')).toBe('translate to SQL: ');
    expect(m.prefixFor('lf')).toBe('to lf: ');
    const bad = variant('bad-prefixes', (d) => {
      const f = join(d, 'config.json');
      const c = JSON.parse(readFileSync(f, 'utf8'));
      c.treewright.prefixes = { sql: 3 };
      writeFileSync(f, JSON.stringify(c));
    });
    expect(await loadError(bad)).toBe(`${join(bad, 'config.json')}: at $.treewright.prefixes.sql: found 3; expected a string`);
  });
});

describe('the KV cache', () => {
  it('gives the same logits as re-running the uncached decoder, across beam reorderings', async () => {
    // Reference: decoder_model.onnx re-run on each row's whole prefix (no cache) — an independent graph.
    const a = await model.start(QUESTION);
    const b = await plain.start(QUESTION);
    const V = model.vocabSize;
    const plan: { tokens: number[]; parents: number[] | null }[] = [
      { tokens: [0], parents: null },
      { tokens: [26, 7, 10], parents: [0, 0, 0] },
      { tokens: [12, 12, 5], parents: [2, 0, 0] },
      { tokens: [8, 90], parents: [1, 1] },
      { tokens: [35, 36, 44], parents: [1, 0, 1] },
    ];
    let worst = 0;
    for (const { tokens, parents } of plan) {
      const la = await a.step(tokens, parents);
      const lb = await b.step(tokens, parents);
      expect(la.length).toBe(tokens.length * V);
      expect(lb.length).toBe(tokens.length * V);
      for (let i = 0; i < la.length; i++) worst = Math.max(worst, Math.abs(la[i] - lb[i]));
    }
    expect(worst).toBeLessThan(1e-4);
    expect(a.steps).toBe(5);
    expect(a.modelMs).toBeGreaterThan(0);
  });
});

describe('the model input and output lengths', () => {
  it('input() puts the target prefix before the question once, and refuses more tokens than the encoder has positions', () => {
    const a = model.input('which orchards?', 'lf');
    expect(a.text).toBe('to lf: which orchards?');
    expect(a.prefix).toBe('to lf: ');
    expect(a.ids).toEqual(model.encodeQuestion('to lf: which orchards?'));
    expect(model.input('to lf: which orchards?', 'lf')).toEqual({ ...a, prefix: '' });
    expect(model.input('which orchards?', 'lf', '').text).toBe('which orchards?');
    const long = 'pears '.repeat(model.config.maxPositions);
    const tokens = model.encodeQuestion('to lf: ' + long).length;
    expect(tokens).toBeGreaterThan(model.config.maxPositions);
    expect(() => model.input(long, 'lf')).toThrow(`the input has ${tokens} tokens (with the prefix "to lf: "); expected at most 128, the encoder's positions`);
  });

  it('start() refuses an input longer than the encoder positions before running anything', async () => {
    const ids = new Array<number>(model.config.maxPositions + 1).fill(5);
    await expect(model.start(ids)).rejects.toThrow('the input has 129 tokens (with the prefix ""); expected at most 128');
  });

  it('outputLimit(): 128 or the positions − 1 by default; more than positions − 1 refused', () => {
    expect(model.maxOutputTokens).toBe(127);
    expect(model.outputLimit()).toBe(127);
    expect(model.outputLimit(40)).toBe(40);
    expect(() => model.outputLimit(128)).toThrow("128 tokens to generate; expected at most 127, the decoder's positions − 1");
  });
});
