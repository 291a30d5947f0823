/**
 * Bad input and the cache: clear errors (file and JSON path / what was expected), never a crash.
 * The tokenizer files here are tiny byte-level BPE files in the Hugging Face tokenizer.json format
 * (the format is the outside reference: pieces are GPT-2 byte↔unicode characters).
 */
import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { compileDescription } from '../../src/description/index.ts';
import { compileMasks, loadOrCompile, MaskError } from '../../src/masks/index.ts';
import { BYTE_LEVEL_CHAR_TO_BYTE, VocabularyError } from '../../src/vocab/index.ts';
import { grammar, rng, ROOT, smallVocabulary } from './helpers.ts';

const utf8 = new TextEncoder();
const BYTE_TO_CHAR = new Map<number, string>();
for (const [c, b] of BYTE_LEVEL_CHAR_TO_BYTE) BYTE_TO_CHAR.set(b, String.fromCharCode(c));
const piece = (s: string) => [...utf8.encode(s)].map((b) => BYTE_TO_CHAR.get(b)!).join('');

/** A byte-level BPE tokenizer.json: all 256 bytes, a few merged pieces, an EOS added token. */
function tinyTokenizer(extra: string[]): object {
  const vocab: Record<string, number> = {};
  for (let b = 0; b < 256; b++) vocab[BYTE_TO_CHAR.get(b)!] = b;
  for (const s of extra) vocab[piece(s)] = Object.keys(vocab).length;
  const eos = Object.keys(vocab).length;
  return {
    version: '1.0',
    added_tokens: [{ id: eos, content: '<|endoftext|>', special: true, single_word: false, lstrip: false, rstrip: false, normalized: false }],
    normalizer: null,
    pre_tokenizer: { type: 'ByteLevel', add_prefix_space: false, trim_offsets: true, use_regex: true },
    post_processor: null,
    decoder: { type: 'ByteLevel', add_prefix_space: true, trim_offsets: true, use_regex: true },
    model: { type: 'BPE', dropout: null, unk_token: null, continuing_subword_prefix: null, end_of_word_suffix: null, fuse_unk: false, byte_fallback: false, vocab, merges: [] },
  };
}

const dir = mkdtempSync(join(tmpdir(), 'tw-mask-errors-'));
const tinyPath = join(dir, 'tokenizer.json');
writeFileSync(tinyPath, JSON.stringify(tinyTokenizer(['{"', '":', '",', ' [', 'true', 'null', ', ', '}]'])));
const jsonGrammar = grammar('json');
const jsonText = readFileSync(jsonGrammar.file, 'utf8');

describe('vocabulary / grammar mismatch', () => {
  it('a vocabulary without a byte the grammar needs is refused, naming the byte and its use', () => {
    const pieces = [...'0123456789+-*/^ ,abc'].map((ch) => utf8.encode(ch)); // no "(" nor ")"
    expect(() => compileMasks(grammar('arith'), smallVocabulary(pieces))).toThrow(
      new MaskError(
        `tokenizer vocabulary has no single-byte token for byte 0x28 ("("), needed by the keyword "(" of grammar arith (${grammar('arith').file}); expected a tokenizer that can spell every byte (byte-level BPE or byte fallback)`,
      ),
    );
  });
});

describe('decoding errors', () => {
  const { engine } = loadOrCompile(jsonGrammar, jsonText, tinyPath, false);
  const c = engine.bind({});
  const id = (s: string) => engine.vocab.idsOf(s)[0];
  it('EOS before the program is complete, tokens that are not allowed, special ids', () => {
    const s = c.advance(c.start(), id('['));
    expect(() => c.advance(s, engine.vocab.eosIds[0])).toThrow(`end of sequence (token ${engine.vocab.eosIds[0]}) before the program is complete`);
    expect(() => c.advance(s, id('}'))).toThrow(`token ${id('}')} ("}") is not allowed here: the text would not be a prefix of any program`);
    expect(() => c.advance(s, 99999)).toThrow('token 99999 is out of range; never allowed as program text');
    const done = c.advance(c.advance(s, id(']')), engine.vocab.eosIds[0]);
    expect(c.isComplete(done)).toBe(true);
    expect(() => c.advance(done, id(' '))).toThrow(`token ${id(' ')} after the end of sequence; expected nothing more`);
  });
});

describe('malformed tokenizer files (fuzzed from a valid one)', () => {
  it('every damaged file either loads or fails with a VocabularyError naming the file', () => {
    const base = JSON.stringify(tinyTokenizer(['{"', 'true']));
    const rand = rng(2026);
    let refused = 0;
    for (let i = 0; i < 200; i++) {
      let text = base;
      const kind = i % 4;
      const k = Math.floor(rand() * text.length);
      if (kind === 0) text = text.slice(0, k); // truncated
      else if (kind === 1) text = text.slice(0, k) + '{[,"0:}'[Math.floor(rand() * 7)] + text.slice(k + 1); // one character replaced
      else if (kind === 2) text = text.replace(/"(model|vocab|type|added_tokens|decoder|id)"/, (m) => (rand() < 0.5 ? '"x' + m.slice(1) : m)); // a key renamed
      else text = text.replace(/: ?(\{|\[|"BPE"|\d+)/, rand() < 0.5 ? ': 7' : ': "?"'); // a value of the wrong type
      const file = join(dir, `fuzz-${i}.json`);
      writeFileSync(file, text);
      try {
        const { engine } = loadOrCompile(jsonGrammar, jsonText, file, false);
        expect(engine.vocab.vocabSize).toBeGreaterThan(0);
      } catch (e) {
        if (e instanceof MaskError) continue; // loaded, but lost bytes the grammar needs
        expect(e).toBeInstanceOf(VocabularyError);
        expect((e as Error).message).toContain(file);
        refused++;
      }
    }
    expect(refused).toBeGreaterThan(50);
  }, 60_000); // 200 engines: about 5 s on a loaded 2-core machine, over vitest's default limit
});

describe('the cache', () => {
  it('a cached engine gives the same masks; a damaged cache file is reported and rebuilt', () => {
    const cacheDir = join(dir, 'cache');
    const first = loadOrCompile(jsonGrammar, jsonText, tinyPath, cacheDir);
    expect(first.fromCache).toBe(false);
    const second = loadOrCompile(jsonGrammar, jsonText, tinyPath, cacheDir);
    expect(second.fromCache).toBe(true);
    const a = first.engine.bind({});
    const b = second.engine.bind({});
    const ma = new Uint32Array((a.vocabSize + 31) >>> 5);
    const mb = new Uint32Array(ma.length);
    for (const prefix of ['', '{"a', '{"a": [1, tr', '"x\\u00', '[1, 2', '{"a": 1} ']) {
      for (const budget of [Infinity, 6, 3]) {
        a.writeAllowed(a.advanceBytes(a.start(), utf8.encode(prefix)), budget, ma);
        b.writeAllowed(b.advanceBytes(b.start(), utf8.encode(prefix)), budget, mb);
        expect(Array.from(mb), `${prefix} / ${budget}`).toEqual(Array.from(ma));
      }
    }
    const data = readFileSync(first.file!);
    data[data.length - 100] ^= 0xff;
    writeFileSync(first.file!, data);
    const third = loadOrCompile(jsonGrammar, jsonText, tinyPath, cacheDir);
    expect(third.fromCache).toBe(false);
    expect(third.warning).toBe(`${first.file}: its seal does not match this cache folder's secret; expected a file this user's treewright wrote here (it may have been edited, copied from elsewhere or planted); rebuilt it`);
    expect(loadOrCompile(jsonGrammar, jsonText, tinyPath, cacheDir).fromCache).toBe(true);
  });
});

describe('the cache and changed token classes', () => {
  it('a cache written for a description with unbounded digits is never used for the bounded one', () => {
    const cacheDir = join(dir, 'cache-digits');
    const arith = grammar('arith');
    const boundedText = readFileSync(arith.file, 'utf8');
    const unboundedText = boundedText.replace('/[0-9]{1,9}(?:\\.[0-9]{1,6})?/', '/[0-9]+(?:\\.[0-9]+)?/');
    expect(unboundedText).not.toBe(boundedText);
    const unbounded = compileDescription(unboundedText, arith.file).grammar!;
    const old = loadOrCompile(unbounded, unboundedText, tinyPath, cacheDir);
    const now = loadOrCompile(arith, boundedText, tinyPath, cacheDir);
    expect(now.fromCache).toBe(false);
    expect(now.file).not.toBe(old.file);
    const zero = '0'.charCodeAt(0); // the tiny tokenizer's id of a byte is the byte
    const digitAfterNine = (r: ReturnType<typeof loadOrCompile>) => {
      const c = r.engine.bind({ Func: ['max'] });
      const m = new Uint32Array((c.vocabSize + 31) >>> 5);
      c.writeAllowed(c.advanceBytes(c.start(), utf8.encode('123456789')), Infinity, m);
      return ((m[zero >>> 5] >>> (zero & 31)) & 1) === 1;
    };
    expect(digitAfterNine(old)).toBe(true);
    expect(digitAfterNine(now)).toBe(false);
    const again = loadOrCompile(arith, boundedText, tinyPath, cacheDir);
    expect(again.fromCache).toBe(true);
    expect(digitAfterNine(again)).toBe(false);
  });
});

describe('treewright mask (CLI contract)', () => {
  const cli = (args: string[]) => {
    try {
      return { out: execFileSync(process.execPath, [join(ROOT, 'src/cli/treewright.mjs'), ...args], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] }), code: 0, err: '' };
    } catch (e: any) {
      return { out: e.stdout as string, code: e.status as number, err: e.stderr as string };
    }
  };
  it('--json prints {viable, complete, allowed_count, allowed_ids}', () => {
    const { out, code } = cli(['mask', '--grammar', 'json', '--tokenizer', tinyPath, '--prefix', '[1', '--json', '--no-cache']);
    expect(code).toBe(0);
    const r = JSON.parse(out);
    expect(Object.keys(r)).toEqual(['viable', 'complete', 'allowed_count', 'allowed_ids']);
    expect(r.viable).toBe(true);
    expect(r.complete).toBe(false);
    expect(r.allowed_count).toBe(r.allowed_ids.length);
    const { engine } = loadOrCompile(jsonGrammar, jsonText, tinyPath, false);
    const c = engine.bind({});
    const m = new Uint32Array((c.vocabSize + 31) >>> 5);
    c.writeAllowed(c.advanceBytes(c.start(), utf8.encode('[1')), Infinity, m);
    const ids: number[] = [];
    for (let i = 0; i < c.vocabSize; i++) if ((m[i >>> 5] >>> (i & 31)) & 1) ids.push(i);
    expect(r.allowed_ids).toEqual(ids);
  }, 60_000);
  it('unbound names: exit 1 and the message on stderr', () => {
    const { code, err } = cli(['mask', '--grammar', 'sql', '--tokenizer', tinyPath, '--no-cache']);
    expect(code).toBe(1);
    expect(err).toBe('names: the name set Table is not bound; expected a list of Ident lexemes for it (--names FILE with {"Table": [...]} or --db FILE)\n');
  }, 60_000);
});
