/**
 * The vocabulary index: token id → exact bytes, flags and the token trie, all in flat typed arrays.
 * Immutable after construction.
 */
import { createHash } from 'node:crypto';
import { has, wordsFor } from '../util/bitset.ts';
import { VocabularyError } from './errors.ts';
import { buildTrie, NO_NODE, TokenTrie } from './trie.ts';

export type ModelType = 'BPE' | 'Unigram' | 'WordPiece' | 'WordLevel';
const MODEL_TYPES: readonly ModelType[] = ['BPE', 'Unigram', 'WordPiece', 'WordLevel'];

export interface VocabularyParts {
  vocabSize: number;
  bytes: Uint8Array;
  offsets: Uint32Array;
  special: Uint32Array;
  absent: Uint32Array;
  eosIds: readonly number[];
  bosIds: readonly number[];
  unkId: number;
  stripsFirstSpace: boolean;
  modelType: ModelType;
  fileHash: string;
  hash: string;
  trie?: TokenTrie;
}

const decoder = new TextDecoder('utf-8', { ignoreBOM: true });

export class Vocabulary {
  /** Max token id + 1 over the model vocabulary and the added tokens. */
  readonly vocabSize: number;
  /** All token byte strings, concatenated in id order. */
  readonly bytes: Uint8Array;
  /** Token id's bytes are bytes[offsets[id] .. offsets[id + 1]); length vocabSize + 1. */
  readonly offsets: Uint32Array;
  /** Bitset (src/util/bitset.ts convention) of special tokens: added tokens marked special, the
   * unknown token, and every EOS / BOS id. Never allowed as program text. */
  readonly special: Uint32Array;
  /** Bitset of ids below vocabSize that no token uses. Never allowed. */
  readonly absent: Uint32Array;
  /** Ids that end a sequence. */
  readonly eosIds: readonly number[];
  /** Ids that start a sequence (informative; decoders may feed them to the model). */
  readonly bosIds: readonly number[];
  /** The unknown token's id, or -1. */
  readonly unkId: number;
  /** True when the tokenizer's decoder drops one leading space of the whole text (Metaspace with a
   * prefix space, WordPiece, Strip after Fuse, no decoder). Token bytes keep that space. */
  readonly stripsFirstSpace: boolean;
  readonly modelType: ModelType;
  /** sha256 (hex) of the tokenizer.json text. */
  readonly fileHash: string;
  /** sha256 (hex) over fileHash, the EOS and BOS ids and the index format: the cache key. */
  readonly hash: string;
  /** Bitset of the normal ids (present, not special, at least one byte): the ids a mask may allow
   * as program text. Exactly the ids in the trie. */
  readonly normal: Uint32Array;
  private trieCache: TokenTrie | undefined;

  constructor(p: VocabularyParts) {
    this.vocabSize = p.vocabSize;
    this.bytes = p.bytes;
    this.offsets = p.offsets;
    this.special = p.special;
    this.absent = p.absent;
    this.eosIds = Object.freeze([...p.eosIds]);
    this.bosIds = Object.freeze([...p.bosIds]);
    this.unkId = p.unkId;
    this.stripsFirstSpace = p.stripsFirstSpace;
    this.modelType = p.modelType;
    this.fileHash = p.fileHash;
    this.hash = p.hash;
    this.trieCache = p.trie;
    this.normal = new Uint32Array(wordsFor(this.vocabSize));
    for (let id = 0; id < this.vocabSize; id++) {
      if (this.offsets[id + 1] > this.offsets[id] && !has(this.special, id) && !has(this.absent, id)) this.normal[id >>> 5] |= 1 << (id & 31);
    }
  }

  /** Byte length of token `id`. */
  length(id: number): number {
    return this.offsets[id + 1] - this.offsets[id];
  }

  /** Byte `i` of token `id` (no bounds check beyond the typed array's). */
  byteAt(id: number, i: number): number {
    return this.bytes[this.offsets[id] + i];
  }

  /** A view of token `id`'s bytes (allocates the view object; keep it out of hot loops). */
  bytesOf(id: number): Uint8Array {
    if (!(id >= 0 && id < this.vocabSize)) throw new RangeError(`token id ${id} is outside 0 … ${this.vocabSize - 1}`);
    return this.bytes.subarray(this.offsets[id], this.offsets[id + 1]);
  }

  /** Token `id` as text (U+FFFD for partial UTF-8). For messages and debugging. */
  text(id: number): string {
    return decoder.decode(this.bytesOf(id));
  }

  isSpecial(id: number): boolean {
    return has(this.special, id);
  }

  isAbsent(id: number): boolean {
    return has(this.absent, id);
  }

  /** True for ids that can stand for program text: present, not special, at least one byte. */
  isNormal(id: number): boolean {
    return id >= 0 && id < this.vocabSize && has(this.normal, id);
  }

  /** The token trie over all normal ids; built on first use (then kept). */
  get trie(): TokenTrie {
    if (this.trieCache === undefined) {
      this.trieCache = buildTrie(this.vocabSize, this.bytes, this.offsets, (id) => has(this.normal, id));
    }
    return this.trieCache;
  }

  /** The normal ids whose bytes are exactly `bytes` (a string is taken as UTF-8). Allocates. */
  idsOf(bytes: Uint8Array | string): number[] {
    const b = typeof bytes === 'string' ? new TextEncoder().encode(bytes) : bytes;
    const node = this.trie.find(b);
    return node === NO_NODE ? [] : Array.from(this.trie.tokensAt(node));
  }

  /** The whole index (trie included) as one compact binary; see `deserializeVocabulary`. */
  serialize(): Uint8Array {
    const t = this.trie;
    const modelCode = MODEL_TYPES.indexOf(this.modelType);
    const header = [
      this.vocabSize, this.bytes.length, t.nodeCount, t.tokens.length, this.eosIds.length, this.bosIds.length,
      (this.stripsFirstSpace ? 1 : 0) | (modelCode << 1), this.unkId + 1,
    ];
    const parts: Uint8Array[] = [];
    const u32 = (a: ArrayLike<number>) => parts.push(new Uint8Array(Uint32Array.from(a).buffer));
    const u8 = (a: Uint8Array) => {
      parts.push(a);
      const pad = (4 - (a.length & 3)) & 3;
      if (pad) parts.push(new Uint8Array(pad));
    };
    parts.push(MAGIC);
    u32(header);
    parts.push(Buffer.from(this.fileHash, 'hex'), Buffer.from(this.hash, 'hex'));
    u32(this.offsets); u32(this.special); u32(this.absent); u32(this.eosIds); u32(this.bosIds);
    u8(this.bytes);
    u8(t.byte); u32(t.depth); u32(t.end); u32(t.tokStart); u32(t.tokens); u32(t.tokenNode);
    const body = Buffer.concat(parts);
    const sum = createHash('sha256').update(body).digest();
    return new Uint8Array(Buffer.concat([body, sum]));
  }
}

const MAGIC = new TextEncoder().encode('TWVOCAB1');

/**
 * Reads what `Vocabulary.serialize` wrote. A damaged or foreign file is a VocabularyError naming
 * `file` (checksum, magic and every length are checked).
 */
export function deserializeVocabulary(data: Uint8Array, file = '<cache>'): Vocabulary {
  const fail = (what: string): never => {
    throw new VocabularyError(file, 'byte 0', `not a vocabulary index (${what}); expected a file written by Vocabulary.serialize (format TWVOCAB1)`);
  };
  if (data.length < 8 + 32 + 64 + 32) fail('too short');
  for (let i = 0; i < 8; i++) if (data[i] !== MAGIC[i]) fail('wrong magic');
  const body = data.subarray(0, data.length - 32);
  const sum = createHash('sha256').update(body).digest();
  if (Buffer.compare(sum, data.subarray(data.length - 32)) !== 0) fail('checksum mismatch');
  let pos = 8;
  const readU32 = (n: number): Uint32Array => {
    if (pos + 4 * n > body.length) fail('truncated');
    const a = new Uint32Array(n);
    new Uint8Array(a.buffer).set(body.subarray(pos, pos + 4 * n));
    pos += 4 * n;
    return a;
  };
  const readU8 = (n: number): Uint8Array => {
    if (pos + n > body.length) fail('truncated');
    const a = body.slice(pos, pos + n);
    pos += (n + 3) & ~3;
    return a;
  };
  const [vocabSize, nBytes, nodeCount, nTokens, nEos, nBos, flags, unk1] = readU32(8);
  if (vocabSize > 1 << 22 || nodeCount < 1 || nodeCount > nBytes + 1 || nTokens > vocabSize) fail('bad header');
  const fileHash = Buffer.from(readU8(32)).toString('hex');
  const hash = Buffer.from(readU8(32)).toString('hex');
  const offsets = readU32(vocabSize + 1);
  const special = readU32(wordsFor(vocabSize));
  const absent = readU32(wordsFor(vocabSize));
  const eosIds = Array.from(readU32(nEos));
  const bosIds = Array.from(readU32(nBos));
  const bytes = readU8(nBytes);
  const tByte = readU8(nodeCount);
  const depth = readU32(nodeCount);
  const end = readU32(nodeCount);
  const tokStart = readU32(nodeCount + 1);
  const tokens = readU32(nTokens);
  const tokenNode = readU32(vocabSize);
  if (pos !== body.length) fail('trailing data');
  if (offsets[vocabSize] !== nBytes) fail('offsets do not match the byte store');
  for (const id of [...eosIds, ...bosIds]) if (id >= vocabSize) fail('EOS/BOS id out of range');
  const modelType = MODEL_TYPES[flags >>> 1];
  if (modelType === undefined) fail('bad model type');
  return new Vocabulary({
    vocabSize, bytes, offsets, special, absent, eosIds, bosIds, unkId: unk1 - 1,
    stripsFirstSpace: (flags & 1) === 1, modelType, fileHash, hash,
    trie: new TokenTrie(nodeCount, tByte, depth, end, tokStart, tokens, tokenNode),
  });
}
