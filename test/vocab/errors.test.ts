/** Whole error messages of the vocabulary loader, word for word. */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadVocabulary, VocabularyError } from '../../src/vocab/index.ts';

const ok = {
  model: { type: 'BPE', vocab: { a: 0, b: 1, ab: 2 }, merges: [['a', 'b']] },
  added_tokens: [{ id: 3, content: '</s>', special: true }],
  decoder: { type: 'ByteLevel' },
};
type J = Record<string, any>;
const withChange = (f: (j: J) => void): string => {
  const j = structuredClone(ok) as J;
  f(j);
  return JSON.stringify(j);
};
const message = (source: string | object, options = {}): string => {
  try {
    loadVocabulary(source, { file: 'fruit/tokenizer.json', config: null, ...options });
  } catch (e) {
    expect(e).toBeInstanceOf(VocabularyError);
    return (e as Error).message;
  }
  return 'loaded';
};

describe('vocabulary errors', () => {
  it('accepts the base file', () => {
    expect(message(ok)).toBe('loaded');
  });

  it('names the JSON path, the file and what was expected', () => {
    const cases: [string, string][] = [
      [withChange((j) => (j.model.type = 'Xyz')), 'fruit/tokenizer.json: $.model.type: unsupported model "Xyz"; expected BPE, Unigram or WordLevel (or WordPiece)'],
      [withChange((j) => (j.model.vocab.b = 0)), 'fruit/tokenizer.json: $.model.vocab.b: duplicate id 0 (also $.model.vocab.a); expected unique ids'],
      [withChange((j) => (j.model.vocab['a b'] = 2 ** 40)), 'fruit/tokenizer.json: $.model.vocab["a b"]: expected an integer id from 0 to 4194303, found number 1099511627776'],
      [withChange((j) => (j.model.vocab = [])), 'fruit/tokenizer.json: $.model.vocab: expected an object mapping token strings to ids, found an array'],
      [withChange((j) => (j.added_tokens[0].id = '3')), 'fruit/tokenizer.json: $.added_tokens[0].id: expected an integer id from 0 to 4194303, found the string "3"'],
      [withChange((j) => j.added_tokens.push({ id: 3, content: 'x' })), 'fruit/tokenizer.json: $.added_tokens[1].id: duplicate id 3 (also an earlier added token); expected unique ids'],
      [withChange((j) => (j.decoder = { type: 'CTC' })), 'fruit/tokenizer.json: $.decoder.type: unsupported decoder "CTC"; expected ByteLevel, Metaspace, Replace, ByteFallback, Fuse, Strip, WordPiece, BPEDecoder or Sequence'],
      [
        withChange((j) => (j.decoder = { type: 'Sequence', decoders: [{ type: 'Replace', pattern: { Regex: '▁+' }, content: ' ' }] })),
        'fruit/tokenizer.json: $.decoder.decoders[0].pattern: unsupported pattern {"Regex":"▁+"}; expected {"String": "…"} (regex patterns in decoders are not supported)',
      ],
      [withChange((j) => (j.model = { type: 'Unigram', vocab: [['a', 0], ['b']] })), 'fruit/tokenizer.json: $.model.vocab[1]: expected a [piece, score] pair (string, number), found an array'],
      [withChange((j) => delete j.model), 'fruit/tokenizer.json: $.model: expected an object, found nothing'],
      ['{"model": {"type": "BPE",\n  "vocab": {"a": 0,}}}', 'fruit/tokenizer.json: 2:20: malformed JSON; expected a string key'],
      ['{"model": {"type": "BPE", "vocab": {"a": 0}}', 'fruit/tokenizer.json: 1:45: malformed JSON; expected \',\' or \'}\''],
    ];
    for (const [text, expected] of cases) expect(message(text)).toBe(expected);
  });

  it('reports a missing file, an unknown EOS override and a config EOS that is not a token', () => {
    expect(message('/nonexistent/tokenizer.json', { file: undefined })).toMatch(
      /^\/nonexistent\/tokenizer\.json: \$: cannot read the file \(ENOENT.*\); expected a readable tokenizer\.json$/,
    );
    expect(message(ok, { eos: ['<eos>'] })).toBe(
      'fruit/tokenizer.json: options.eos[0]: "<eos>" is not a token of this vocabulary; expected a token content or an id below 4',
    );
    const dir = mkdtempSync(join(tmpdir(), 'tw-vocab-'));
    writeFileSync(join(dir, 'tokenizer.json'), JSON.stringify(ok));
    writeFileSync(join(dir, 'tokenizer_config.json'), JSON.stringify({ eos_token: '<|eot|>' }));
    expect(() => loadVocabulary(join(dir, 'tokenizer.json'))).toThrow(
      `${join(dir, 'tokenizer_config.json')}: $.eos_token: "<|eot|>" is not a token of ${join(dir, 'tokenizer.json')}; expected one of its tokens`,
    );
    writeFileSync(join(dir, 'tokenizer_config.json'), JSON.stringify({ eos_token: { content: '</s>', __type: 'AddedToken' } }));
    expect(loadVocabulary(join(dir, 'tokenizer.json')).eosIds).toEqual([3]);
  });
});
