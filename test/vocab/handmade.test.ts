/**
 * Small tokenizers: the hand-made Unigram + Metaspace + byte-fallback and WordPiece files in
 * test/cases/vocab/, and the demo fixture's sentencepiece-converted tokenizer. The outside reference
 * is @huggingface/transformers' PreTrainedTokenizer built from the same file.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { has } from '../../src/util/bitset.ts';
import { loadVocabulary, NO_NODE } from '../../src/vocab/index.ts';
import { ourText, referenceTokenizer, rng } from './helpers.ts';

const UNIGRAM = 'test/cases/vocab/unigram-fruit.json';
const WORDPIECE = 'test/cases/vocab/wordpiece-fruit.json';
const FIXTURE = 'test/fixtures/tiny-seq2seq/tokenizer.json';

describe('hand-made Unigram tokenizer with Metaspace and byte fallback (test/cases/vocab/unigram-fruit.json)', () => {
  const v = loadVocabulary(UNIGRAM);
  const ref = referenceTokenizer(UNIGRAM);
  const raw = JSON.parse(readFileSync(UNIGRAM, 'utf8'));

  it('decodes every id like the reference (first-token space dropped by the decoder)', () => {
    // Reference: PreTrainedTokenizer.decode([id]); its Strip decoder drops the text's first space.
    expect(v.stripsFirstSpace).toBe(true);
    for (let id = 0; id < v.vocabSize; id++) expect([id, ourText(v, [id])]).toEqual([id, ref.decode([id], { skip_special_tokens: false })]);
  });

  it('decodes a token after another one with its leading space', () => {
    // Reference: PreTrainedTokenizer.decode([a, b]) keeps b's space when b is not first.
    const pear = raw.model.vocab.findIndex((e: [string, number]) => e[0] === '▁pear');
    expect(v.text(pear)).toBe(' pear');
    for (let id = 0; id < v.vocabSize; id++) {
      if (v.isNormal(id)) expect(ourText(v, [pear, id])).toBe(ref.decode([pear, id]));
    }
  });

  it('spells 500 random texts with the reference encoding', () => {
    // Reference: PreTrainedTokenizer.encode (words inside the vocabulary's alphabet).
    const words = ['apple', 'pear', 'plum', 'harvest', 'Gala', 'Müller', 'SELECT', 'FROM', 'WHERE', '=', "'Bosc';", '(kg)', 'crates', 'ripeness', 'é', 'x7', '{"row": [1, 2]}'];
    const r = rng(3);
    for (let k = 0; k < 500; k++) {
      const n = 1 + Math.floor(r() * 8);
      const parts: string[] = [];
      for (let i = 0; i < n; i++) parts.push(words[Math.floor(r() * words.length)]);
      const s = parts.join(r() < 0.8 ? ' ' : '  '); // never starts with a space (see below)
      const ids = ref.encode(s, { add_special_tokens: false });
      for (const id of ids) expect(v.isNormal(id)).toBe(true);
      expect(ourText(v, ids)).toBe(s);
    }
  });

  it('joins byte pieces into characters as the reference decoder does', () => {
    // Reference: PreTrainedTokenizer.decode with the file's ByteFallback decoder. (transformers.js's
    // Unigram encoder has no byte fallback, so the ids are spelled here: UTF-8 bytes → <0xNN> pieces.)
    const r = rng(4);
    const chars = ['梨', '🍐', 'ß', '€', 'a', '👩‍🌾', 'ё'];
    const pear = raw.model.vocab.findIndex((e: [string, number]) => e[0] === '▁pear');
    for (let k = 0; k < 200; k++) {
      const ids: number[] = [];
      let s = '';
      for (let i = 0; i < 1 + Math.floor(r() * 5); i++) {
        if (r() < 0.3) {
          ids.push(pear);
          s += ' pear';
        } else {
          const c = chars[Math.floor(r() * chars.length)];
          for (const b of new TextEncoder().encode(c)) ids.push(3 + b);
          s += c;
        }
      }
      const expected = s.startsWith(' ') ? s.slice(1) : s;
      expect(ref.decode(ids)).toBe(expected);
      expect(ourText(v, ids)).toBe(expected);
    }
  });

  it('loses a text\'s own leading space, exactly as the reference does (documented Metaspace limit)', () => {
    // Reference: PreTrainedTokenizer round trip of " pear" gives "pear".
    const ids = ref.encode(' pear', { add_special_tokens: false });
    expect(ref.decode(ids)).toBe('pear');
    expect(ourText(v, ids)).toBe('pear');
  });

  it('maps byte pieces to one byte, flags specials and the unknown piece, and finds EOS in the post-processor', () => {
    // Reference: the file's own pieces and added_tokens; post_processor.single ends with </s>.
    for (let b = 0; b < 256; b++) {
      const id = 3 + b; // the file lists <0x00> … <0xFF> right after the three specials
      expect(raw.model.vocab[id][0]).toBe(`<0x${b.toString(16).toUpperCase().padStart(2, '0')}>`);
      expect(Array.from(v.bytesOf(id))).toEqual([b]);
    }
    expect([0, 1, 2].map((id) => has(v.special, id))).toEqual([true, true, true]);
    expect(v.unkId).toBe(2);
    expect(v.eosIds).toEqual([1]);
    expect(v.bosIds).toEqual([]);
    const label = raw.added_tokens.find((a: { special: boolean }) => !a.special);
    expect(v.text(label.id)).toBe('<crate_label>');
    expect(v.isNormal(label.id)).toBe(true);
    expect(v.trie.tokenNode[label.id]).not.toBe(NO_NODE);
  });

  it('takes EOS and BOS overrides by content or id', () => {
    const w = loadVocabulary(UNIGRAM, { eos: ['</s>', 0], bos: ['<pad>'] });
    expect(w.eosIds).toEqual([1, 0]);
    expect(w.bosIds).toEqual([0]);
    expect(w.hash).not.toBe(v.hash);
    expect(w.fileHash).toBe(v.fileHash);
  });
});

describe('hand-made WordPiece tokenizer (test/cases/vocab/wordpiece-fruit.json)', () => {
  const v = loadVocabulary(WORDPIECE);
  const ref = referenceTokenizer(WORDPIECE);
  const apple = JSON.parse(readFileSync(WORDPIECE, 'utf8')).model.vocab.apple as number;

  it('decodes every id after a word like the reference', () => {
    // Reference: PreTrainedTokenizer.decode([apple, id]): "##x" joins, other pieces get a space.
    expect(v.text(apple)).toBe(' apple');
    for (let id = 0; id < v.vocabSize; id++) {
      if (!v.isNormal(id)) continue;
      expect(ourText(v, [apple, id])).toBe(ref.decode([apple, id], { clean_up_tokenization_spaces: false }));
    }
  });

  it('spells reference encodings of 200 random phrases as the reference decodes them', () => {
    // Reference: PreTrainedTokenizer.encode then .decode without clean-up (WordPiece puts a space before
    // punctuation; the clean-up that removes it is a text-level step we do not model).
    const words = ['apple', 'apples', 'pear', 'plum', 'crate', 'crates', 'harvested', 'orchard', 'grower', 'growing', 'zesty', ',', '.', '!'];
    const r = rng(9);
    for (let k = 0; k < 200; k++) {
      const n = 1 + Math.floor(r() * 7);
      const s = Array.from({ length: n }, () => words[Math.floor(r() * words.length)]).join(' ');
      const ids = ref.encode(s, { add_special_tokens: false });
      expect(ourText(v, ids)).toBe(ref.decode(ids, { clean_up_tokenization_spaces: false }));
    }
  });

  it('takes EOS and BOS from the post-processor template and flags [UNK]', () => {
    // Reference: post_processor.single is [CLS] A [SEP]; model.unk_token is [UNK].
    expect(v.eosIds.map((id) => v.text(id))).toEqual(['[SEP]']);
    expect(v.bosIds.map((id) => v.text(id))).toEqual(['[CLS]']);
    expect(v.text(v.unkId)).toBe('[UNK]');
    expect(v.modelType).toBe('WordPiece');
  });
});

describe('the demo fixture tokenizer (test/fixtures/tiny-seq2seq, sentencepiece Unigram + Metaspace)', () => {
  const v = loadVocabulary(FIXTURE);
  const ref = referenceTokenizer(FIXTURE, FIXTURE.replace('tokenizer.json', 'tokenizer_config.json'));

  it('decodes every id and every reference encoding like the reference', () => {
    // Reference: PreTrainedTokenizer.decode / .encode built from the fixture's files.
    for (let id = 0; id < v.vocabSize; id++) {
      expect(ourText(v, [id])).toBe(ref.decode([id], { skip_special_tokens: false, clean_up_tokenization_spaces: false }));
    }
    const r = rng(1);
    const pieces: string[] = [];
    for (let id = 0; id < v.vocabSize; id++) if (v.isNormal(id)) pieces.push(v.text(id));
    for (let k = 0; k < 300; k++) {
      const s = Array.from({ length: 1 + Math.floor(r() * 10) }, () => pieces[Math.floor(r() * pieces.length)]).join('').trimStart();
      const ids = ref.encode(s, { add_special_tokens: false });
      expect(ourText(v, ids)).toBe(ref.decode(ids, { clean_up_tokenization_spaces: false }));
      if (!ids.includes(v.unkId)) expect(ourText(v, ids)).toBe(s);
    }
    expect(v.eosIds.map((id) => v.text(id))).toEqual(['</s>']);
    expect(v.stripsFirstSpace).toBe(true);
  });
});
