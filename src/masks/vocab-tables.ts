/**
 * Vocabulary tables the walkers index, built once per grammar × vocabulary (no binding involved):
 * - `byteToken`: byte → its single-byte token id (−1 when the vocabulary has none);
 * - `wordStart`: the bitset of tokens whose first byte is a word byte ([A-Za-z0-9_]);
 * - `wide` / `wideChild`: direct 256-entry child tables for trie nodes with ≥ WIDE children (the
 *   root, " ", …), so `childOf` is one lookup there and a short scan elsewhere;
 * - `firstByte`: per trie node, the first byte of its string (the word rule at kept pop points);
 * - the space tables: `spaceBytes`, `wsNode` (node strings made only of space bytes), `wsTokenIds`
 *   (tokens made only of space bytes) and `wsChildren[b]` (the nodes "one or more spaces, then b").
 * Cost: O(trie nodes) time and one Int32 per node (plus 1 KiB per wide node).
 */
import type { Grammar } from '../description/ir.ts';
import type { TokenTrie, Vocabulary } from '../vocab/index.ts';
import { WORD, type Rtn } from '../automaton/internal.ts';
import { MaskError } from './errors.ts';

/** Trie nodes with at least this many children get a direct 256-entry child table. */
export const WIDE = 24;

export class VocabTables {
  readonly trie: TokenTrie;
  /** bitset words per mask: ⌈vocabSize / 32⌉ */
  readonly nWords: number;
  /** single-byte token id per byte, -1 when none */
  readonly byteToken: Int32Array;
  /** tokens whose first byte is a word byte */
  readonly wordStart: Uint32Array;
  /** per trie node: index of its direct child table, or -1 (fewer than WIDE children) */
  readonly wide: Int32Array;
  readonly wideChild: Int32Array;
  /** per trie node: the first byte of its string */
  readonly firstByte: Uint8Array;
  /** the grammar's space bytes, ascending */
  readonly spaceBytes: Uint8Array;
  /** per trie node: 1 when its string is one or more space bytes */
  readonly wsNode: Uint8Array;
  /** tokens made only of space bytes */
  readonly wsTokenIds: Uint32Array;
  /** per non-space byte b: trie nodes for "one or more spaces, then b" */
  readonly wsChildren: Int32Array[];

  constructor(readonly vocab: Vocabulary, space: Uint8Array) {
    const trie = vocab.trie;
    this.trie = trie;
    this.nWords = (vocab.vocabSize + 31) >>> 5;
    this.byteToken = new Int32Array(256).fill(-1);
    for (let c = trie.end[0] > 1 ? 1 : trie.nodeCount; c < trie.nodeCount; c = trie.end[c]) {
      if (trie.tokStart[c + 1] > trie.tokStart[c]) this.byteToken[trie.byte[c]] = trie.tokens[trie.tokStart[c]];
    }
    this.wordStart = new Uint32Array(this.nWords);
    for (let c = 1; c < trie.nodeCount; c = trie.end[c]) {
      if (!WORD[trie.byte[c]]) continue;
      for (let i = trie.tokStart[c]; i < trie.tokStart[trie.end[c]]; i++) {
        const id = trie.tokens[i];
        this.wordStart[id >>> 5] |= 1 << (id & 31);
      }
    }
    this.wide = new Int32Array(trie.nodeCount).fill(-1);
    let nWide = 0;
    for (let n = 0; n < trie.nodeCount; n++) {
      if (trie.end[n] === n + 1) continue;
      let k = 0;
      for (let c = n + 1; c < trie.end[n] && k < WIDE; c = trie.end[c]) k++;
      if (k >= WIDE) this.wide[n] = nWide++;
    }
    this.wideChild = new Int32Array(nWide * 256).fill(-1);
    for (let n = 0; n < trie.nodeCount; n++) {
      const w = this.wide[n];
      if (w < 0) continue;
      for (let c = n + 1; c < trie.end[n]; c = trie.end[c]) this.wideChild[w * 256 + trie.byte[c]] = c;
    }
    this.firstByte = new Uint8Array(trie.nodeCount);
    for (let n = 1; n < trie.nodeCount; n++) this.firstByte[n] = trie.depth[n] === 1 ? trie.byte[n] : this.firstByte[n - 1];
    this.spaceBytes = Uint8Array.from([...Array(256).keys()].filter((b) => space[b]));
    // the space-only part of the trie: its tokens, and per byte the children that leave it
    const wsIds: number[] = [];
    const wsOut: number[][] = Array.from({ length: 256 }, () => []);
    this.wsNode = new Uint8Array(trie.nodeCount);
    const visitWs = (n: number): void => {
      for (let c = n + 1; c < trie.end[n]; c = trie.end[c]) {
        const b = trie.byte[c];
        if (space[b]) {
          this.wsNode[c] = 1;
          for (let i = trie.tokStart[c]; i < trie.tokStart[c + 1]; i++) wsIds.push(trie.tokens[i]);
          visitWs(c);
        } else if (n !== 0) wsOut[b].push(c);
      }
    };
    visitWs(0);
    this.wsTokenIds = Uint32Array.from(wsIds);
    this.wsChildren = wsOut.map((l) => Int32Array.from(l));
  }

  /** The child of trie node x along byte b, or -1. */
  childOf(x: number, b: number): number {
    const w = this.wide[x];
    if (w >= 0) return this.wideChild[w * 256 + b];
    const trie = this.trie;
    const byte = trie.byte;
    const end = trie.end;
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const cb = byte[c];
      if (cb === b) return c;
      if (cb > b) return -1;
    }
    return -1;
  }

  /**
   * Throws MaskError unless every byte of a shortest lexeme / literal of `rtn` has a single-byte
   * token: the length budget's bound assumes every remaining byte can be emitted on its own.
   */
  checkBytes(rtn: Rtn, grammar: Grammar): void {
    const need = new Map<number, string>();
    for (const t of rtn.terminals) {
      const s = t.dfa.shortest;
      if (!s) continue;
      for (const b of s) if (!need.has(b)) need.set(b, t.kind === 'lit' ? `the keyword ${JSON.stringify(t.name)}` : `token class ${t.name}`);
    }
    for (const [b, what] of need) {
      if (this.byteToken[b] < 0) {
        throw new MaskError(`${this.vocab.fileHash ? 'tokenizer' : ''} vocabulary has no single-byte token for byte 0x${b.toString(16).padStart(2, '0')} (${JSON.stringify(String.fromCharCode(b))}), needed by ${what} of grammar ${grammar.name} (${grammar.file}); expected a tokenizer that can spell every byte (byte-level BPE or byte fallback)`);
      }
    }
  }
}
