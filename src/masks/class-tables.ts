/**
 * Per-lexical-state tables that do not depend on the parser stack, for each token class:
 *
 * For a class T with DFA states 1…n−1 (0 dead) we add one state W0 = n: "any run of spaces, then
 * a lexeme of T" (W0 loops on space bytes and otherwise moves like T's start). For every state d
 * (W0 included):
 * - `inside[d]`: the tokens t such that reading t from d keeps the DFA alive (t stays inside the
 *   lexeme, possibly ending exactly where the lexeme could end). From a thread in state d, with any
 *   stack, all of them are viable (every live DFA state can reach acceptance and every thread is
 *   viable — see automaton/pda.ts), so they are OR-ed into the mask without further work.
 * - `le[d][k]`: the tokens of `inside[d]` after which the lexeme needs ≤ k more bytes
 *   (k < kmax[d]); the length budget selects one of these bitsets instead of `inside[d]`.
 * - `exits[d]`: trie nodes x (x ≠ root) where the lexeme may end after the string of x and x has a
 *   child whose byte could follow a lexeme of T (a space, or a first byte of some terminal, minus
 *   word bytes when x ends with a word byte). The rest of those tokens is resolved at run time by
 *   walking x's subtree with the thread's continuation; nothing else can leave the lexeme.
 *
 * Cost: O(live (node, state) pairs): the states are scanned 32 at a time in one pre-order pass over
 * the trie, skipping subtrees where none is alive. Memory: (1 + kmax) bitsets of ⌈V/32⌉ words per state, each stored once per engine when
 * equal bitsets recur (`BitsetPool`): states of one class often share them (a bounded string's
 * positions far from both bounds, the levels above a state's longest need), and so do classes.
 * (`test/masks/cache-pool.test.ts` checks that sharing happens on the shed_commands description.)
 */
import type { TokenTrie } from '../vocab/index.ts';
import type { ByteDfa } from '../automaton/internal.ts';

/** Longest budget threshold kept as a bitset; larger needs fall back to per-token checks. */
export const MAX_LE = 24;

export interface ClassTables {
  /** the class's DFA with state W0 = stateCount appended; transitions of W0 in `w0` */
  readonly dfa: ByteDfa;
  readonly w0: number;
  /** W0's transitions (space bytes loop to W0) */
  readonly w0Trans: Int32Array;
  /** per state (0..w0): inside bitset (empty for state 0) */
  readonly inside: Uint32Array[];
  /** per state: le[d][k] for k < kmax[d] */
  readonly le: Uint32Array[][];
  readonly kmax: Int32Array;
  /** per state: exit trie nodes */
  readonly exits: Uint32Array[];
}

/** The DFA state after reading `b` from `s`, where s may be W0. */
export function wStep(t: ClassTables, s: number, b: number): number {
  return s === t.w0 ? t.w0Trans[b] : t.dfa.trans[s * 256 + b];
}

/**
 * Bytes to finish the lexeme from state s. W0 is reached only after at least one space, so the
 * lexeme needs no separating space (keep in sync with AutomatonInstance.betweenDist in automaton/pda.ts).
 */
export function wMinAccept(t: ClassTables, s: number): number {
  return s === t.w0 ? t.dfa.minAccept[t.dfa.start] : t.dfa.minAccept[s];
}

/**
 * Equal bitsets stored once: `intern` returns the stored bitset equal to `b` (or stores `b`).
 * Interned bitsets are shared between states and classes, so nothing may write into them.
 */
export class BitsetPool {
  readonly sets: Uint32Array[] = [];
  private readonly byHash = new Map<number, Uint32Array[]>();

  intern(b: Uint32Array): Uint32Array {
    let h = 0x811c9dc5 ^ b.length;
    for (let i = 0; i < b.length; i++) h = Math.imul(h ^ b[i]!, 0x01000193);
    const bucket = this.byHash.get(h);
    if (bucket === undefined) this.byHash.set(h, [b]);
    else {
      for (const x of bucket) if (sameWords(x, b)) return x;
      bucket.push(b);
    }
    this.sets.push(b);
    return b;
  }
}

function sameWords(a: Uint32Array, b: Uint32Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/**
 * Builds the tables of one class. `space[b]` = 1 for space bytes; `follow[b]` = 1 for bytes that
 * may follow a lexeme (spaces and first bytes of terminals); `words` = bitset words per mask.
 */
export function buildClassTables(dfa: ByteDfa, trie: TokenTrie, space: Uint8Array, follow: Uint8Array, word: Uint8Array, nWords: number, pool: BitsetPool = new BitsetPool()): ClassTables {
  const w0 = dfa.stateCount;
  const w0Trans = new Int32Array(256);
  for (let b = 0; b < 256; b++) w0Trans[b] = space[b] ? w0 : dfa.trans[dfa.start * 256 + b];
  const inside: Uint32Array[] = [new Uint32Array(0)];
  const le: Uint32Array[][] = [[]];
  const kmax = new Int32Array(w0 + 1);
  const exits: Uint32Array[] = [new Uint32Array(0)];
  const nodeCount = trie.nodeCount;
  const { byte, depth, end, tokStart, tokens } = trie;
  const T = tokens.length;
  const { trans, minAccept, accept } = dfa;
  const startNeed = minAccept[dfa.start];
  // States are scanned CHUNK at a time in one pass over the trie: at each node, the threads still
  // alive (start state slot j, current state) of its parent are stepped; a subtree is skipped when
  // none is left. Same tables as one scan per state, with the trie walked w0/CHUNK times.
  const liveJ = new Int32Array(MAX_DEPTH * CHUNK);
  const liveS = new Int32Array(MAX_DEPTH * CHUNK);
  const liveN = new Int32Array(MAX_DEPTH);
  const tokK = new Uint8Array(CHUNK * T); // per slot and token position: bytes still needed (capped), 255 = not inside
  for (let first = 1; first <= w0; first += CHUNK) {
    const n = Math.min(CHUNK, w0 - first + 1);
    const bits: Uint32Array[] = [];
    const ex: number[][] = [];
    for (let j = 0; j < n; j++) {
      bits.push(new Uint32Array(nWords));
      ex.push([]);
      liveJ[j] = j;
      liveS[j] = first + j;
    }
    const maxK = new Int32Array(n);
    tokK.fill(255, 0, n * T);
    liveN[0] = n;
    let c = 1;
    while (c < nodeCount) {
      const dep = depth[c];
      if (dep >= MAX_DEPTH) {
        c = end[c];
        continue;
      }
      const b = byte[c];
      const from = (dep - 1) * CHUNK;
      const count = liveN[dep - 1];
      const base = dep * CHUNK;
      let m = 0;
      for (let q = 0; q < count; q++) {
        const p = liveS[from + q];
        const s = p === w0 ? w0Trans[b] : trans[p * 256 + b];
        if (s !== 0) {
          liveJ[base + m] = liveJ[from + q];
          liveS[base + m] = s;
          m++;
        }
      }
      if (m === 0) {
        c = end[c];
        continue;
      }
      liveN[dep] = m;
      const t0 = tokStart[c];
      const t1 = tokStart[c + 1];
      // can a lexeme that ends after this node's string be followed by one of its children's bytes?
      let exitable = -1;
      for (let q = 0; q < m; q++) {
        const j = liveJ[base + q];
        const s = liveS[base + q];
        const k = s === w0 ? startNeed : minAccept[s];
        if (k > maxK[j]) maxK[j] = k;
        if (t0 < t1) {
          const bj = bits[j];
          const kk = k < 254 ? k : 254;
          const row = j * T;
          for (let i = t0; i < t1; i++) {
            const id = tokens[i];
            bj[id >>> 5] |= 1 << (id & 31);
            tokK[row + i] = kk;
          }
        }
        if (s !== w0 && accept[s] === 1) {
          if (exitable < 0) exitable = canExit(trie, c, space, follow, word) ? 1 : 0;
          if (exitable === 1) ex[j].push(c);
        }
      }
      c++;
    }
    for (let j = 0; j < n; j++) {
      const d = first + j;
      inside.push(pool.intern(bits[j]));
      exits.push(Uint32Array.from(ex[j]));
      const km = Math.min(maxK[j], MAX_LE);
      const levels: Uint32Array[] = [];
      for (let k = 0; k < km; k++) levels.push(new Uint32Array(nWords));
      if (km > 0) {
        const row = j * T;
        for (let i = 0; i < T; i++) {
          const k = tokK[row + i];
          if (k >= km) continue;
          const id = tokens[i];
          levels[k][id >>> 5] |= 1 << (id & 31);
        }
        // level x holds the tokens needing ≤ x more bytes: each level takes in the one below it
        for (let x = 1; x < km; x++) {
          const lo = levels[x - 1];
          const hi = levels[x];
          for (let w = 0; w < nWords; w++) hi[w] |= lo[w];
        }
      }
      le.push(levels.map((l) => pool.intern(l)));
      kmax[d] = maxK[j];
    }
  }
  return { dfa, w0, w0Trans, inside, le, kmax, exits };
}

/** Start states scanned together in one pass over the trie. */
const CHUNK = 32;
/** Tokens longer than this many bytes are left out of the tables (none of the shipped tokenizers has one). */
const MAX_DEPTH = 1024;

/** Has node c a child whose byte may follow a lexeme ending at c (a space, or a terminal's first byte; not a word byte after a word byte)? */
function canExit(trie: TokenTrie, c: number, space: Uint8Array, follow: Uint8Array, word: Uint8Array): boolean {
  const { byte, end } = trie;
  if (end[c] <= c + 1) return false;
  const wordEnd = word[byte[c]] === 1;
  for (let ch = c + 1; ch < end[c]; ch = end[ch]) {
    const b = byte[ch];
    if (follow[b] && !(wordEnd && word[b] && !space[b])) return true;
  }
  return false;
}
