// byteFallbackIds: the `<0xNN>` pieces are byte tokens only when the decoder has a ByteFallback step
// (the Hugging Face tokenizers' decoder of that name turns such a piece into the byte NN — from
// memory of its documentation; the shipped demo tokenizer is such a Unigram model).
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { byteFallbackIds } from '../../src/vocab/index.ts';

const unigram = (decoder: unknown) => ({
  model: { type: 'Unigram', vocab: [['<unk>', 0], ['<0x61>', -1], ['a', -2], ['<0x6>', -3], ['<0xFF>', -4]] },
  decoder,
});

describe('byteFallbackIds', () => {
  it('marks <0xNN> pieces when the decoder has ByteFallback', () => {
    const seq = { type: 'Sequence', decoders: [{ type: 'ByteFallback' }, { type: 'Fuse' }] };
    expect([...byteFallbackIds(unigram(seq), 't.json')].sort()).toEqual([1, 4]);
  });
  it('marks none without it (then `<0x61>` is six characters)', () => {
    expect(byteFallbackIds(unigram({ type: 'Fuse' }), 't.json').size).toBe(0);
    expect(byteFallbackIds(unigram(null), 't.json').size).toBe(0);
  });
  it('reads object vocabularies (BPE) too', () => {
    const bpe = { model: { type: 'BPE', vocab: { a: 0, '<0x0A>': 1 }, merges: [] }, decoder: { type: 'ByteFallback' } };
    expect([...byteFallbackIds(bpe, 't.json')]).toEqual([1]);
  });
  it('the demo tokenizer has the 256 byte pieces', () => {
    const json = JSON.parse(readFileSync('models/coop/tokenizer.json', 'utf8'));
    const ids = byteFallbackIds(json, 'models/coop/tokenizer.json');
    expect(ids.size).toBe(256);
    for (const id of ids) expect(json.model.vocab[id][0]).toMatch(/^<0x[0-9A-F]{2}>$/);
  });
});
