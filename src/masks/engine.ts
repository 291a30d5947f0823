/**
 * The mask engine: automaton × vocabulary → per-binding `TokenConstraint`s.
 *
 * Mask of a state = union over its threads (a token is allowed iff some parse can read it):
 * - a thread inside a token-class lexeme at DFA state d: `inside[d]` (precomputed, budget-
 *   filtered), plus a walk of the trie below each precomputed exit node x with the thread's
 *   continuation, plus — when the lexeme may end here — the BETWEEN mask of the continuation;
 * - a BETWEEN thread: for every next terminal that is a token class, `inside[W0]` (spaces, then
 *   that class; word-start tokens removed when the previous byte was a word byte) and its exits;
 *   the finite terminals (literals, name-set members, variables) and space-only tokens by a trie
 *   walk from the root that prunes at the first byte no terminal can read;
 * - other lexemes (literals, names, variables): a trie walk from the root.
 * EOS ids are added exactly when the state is complete. Special and absent ids are never in the
 * trie, so never allowed.
 *
 * Budget (tokens, the chosen one included): a token is allowed only if the shortest completion
 * after it, L bytes (an achievable upper bound, see automaton/pda.ts), satisfies L + 1 ≤ budget − 1:
 * every remaining byte can be emitted as a single-byte token (checked at compile time for every
 * byte of every shortest lexeme and literal) and EOS takes one more. Induction: the start state
 * needs L₀ + 1 tokens; if budget ≥ L₀ + 1 then at each step the first byte of a shortest completion
 * (a single-byte token) stays allowed, so every constrained output is complete within the budget.
 */
import type { NameBindings, Grammar } from '../description/ir.ts';
import type { TokenConstraint } from '../util/constraint.ts';
import { popcount32 } from '../util/bitset.ts';
import { Automaton, AutomatonInstance, Env, Frame, Thread, WORD, INF, type PdaState, type Dispatch } from '../automaton/pda.ts';
import type { Vocabulary, TokenTrie } from '../vocab/index.ts';
import { buildClassTables, MAX_LE, wMinAccept, wStep, type ClassTables } from './precompute.ts';

export class MaskError extends Error {}

/** The frame standing for "the rest of the stack" while a local mask is computed. */
const SENTINEL = new Frame(-1, null, null, 0);

/** The set bits as an id list when that is shorter than half the words (else null: OR word by word). */
function sparseIds(bits: Uint32Array): Uint32Array | null {
  let n = 0;
  for (let w = 0; w < bits.length; w++) if (bits[w] !== 0) n += popcount32(bits[w]);
  if (n * 2 > bits.length) return null;
  const out = new Uint32Array(n);
  let k = 0;
  for (let w = 0; w < bits.length; w++) {
    let word = bits[w];
    while (word !== 0) {
      const low = word & -word;
      out[k++] = (w << 5) + (31 - Math.clz32(low));
      word ^= low;
    }
  }
  return out;
}

interface LocalMask {
  readonly bits: Uint32Array;
  readonly ids: Uint32Array | null;
  readonly maxDist: number;
  readonly pops: Uint32Array;
}

interface LexLocal {
  readonly bits: Uint32Array;
  readonly ids: Uint32Array | null;
  readonly rootBits: Uint32Array | null;
  readonly rootIds: Uint32Array | null;
  readonly maxDist: number;
  readonly popsLex: Uint32Array;
  readonly popsRoot: Uint32Array;
}

interface SubLocal {
  readonly ids: Uint32Array;
  readonly maxDist: number;
  readonly pops: Uint32Array;
}

/** Trie nodes with at least this many children get a direct 256-entry child table. */
const WIDE = 24;

/** A decoding state: the automaton state, plus `ended` after EOS. */
export interface MaskState extends PdaState {
  readonly ended?: boolean;
}

export interface CompileOptions {
  /** skip the check that every needed byte has a single-byte token (tests with tiny vocabularies) */
  readonly allowMissingBytes?: boolean;
}

/** Compiled tables for one grammar × vocabulary; `bind` gives constraints for name bindings. */
export class MaskEngine {
  readonly automaton: Automaton;
  readonly trie: TokenTrie;
  /** per token class index: tables, or null when no `class` terminal uses it */
  readonly classes: (ClassTables | null)[];
  /** tokens whose first byte is a word byte */
  readonly wordStart: Uint32Array;
  readonly nWords: number;
  /** single-byte token id per byte, -1 when none */
  readonly byteToken: Int32Array;
  readonly preprocessMs: number;
  /** per trie node: index of its direct child table, or -1 (fewer than WIDE children) */
  readonly wide: Int32Array;
  readonly wideChild: Int32Array;
  /** per trie node: the first byte of its string */
  readonly firstByte: Uint8Array;
  readonly spaceBytes: Uint8Array;
  /** per trie node: 1 when its string is one or more space bytes */
  readonly wsNode: Uint8Array;
  /** tokens made only of space bytes */
  readonly wsTokenIds: Uint32Array;
  /** per non-space byte b: trie nodes for "one or more spaces, then b" */
  readonly wsChildren: Int32Array[];

  constructor(readonly grammar: Grammar, readonly vocab: Vocabulary, opts: CompileOptions = {}, tables?: (ClassTables | null)[], automaton?: Automaton) {
    const t0 = performance.now();
    this.automaton = automaton ?? new Automaton(grammar);
    this.trie = vocab.trie;
    this.nWords = (vocab.vocabSize + 31) >>> 5;
    const trie = this.trie;
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
    // direct child tables for wide trie nodes (the root, " ", …): O(1) child lookup
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
    this.spaceBytes = Uint8Array.from([...Array(256).keys()].filter((b) => this.automaton.rtn.space[b]));
    // the space-only part of the trie: its tokens, and per byte the children that leave it
    const wsIds: number[] = [];
    const wsOut: number[][] = Array.from({ length: 256 }, () => []);
    const space = this.automaton.rtn.space;
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
    if (!opts.allowMissingBytes) this.checkBytes();
    const rtn = this.automaton.rtn;
    const follow = new Uint8Array(256);
    for (let b = 0; b < 256; b++) if (rtn.space[b]) follow[b] = 1;
    for (const t of rtn.terminals) for (let b = 0; b < 256; b++) if (t.dfa.trans[t.dfa.start * 256 + b] !== 0) follow[b] = 1;
    if (tables) this.classes = tables;
    else {
      this.classes = grammar.tokens.map((tc) => {
        const term = rtn.terminals.find((t) => t.kind === 'class' && t.tokenClass === tc.index);
        return term ? buildClassTables(term.dfa, trie, rtn.space, follow, WORD, this.nWords) : null;
      });
    }
    this.preprocessMs = performance.now() - t0;
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

  /** Every byte of a shortest lexeme / literal and every space byte needs a single-byte token. */
  private checkBytes(): void {
    const need = new Map<number, string>();
    for (const t of this.automaton.rtn.terminals) {
      const s = t.dfa.shortest;
      if (!s) continue;
      for (const b of s) if (!need.has(b)) need.set(b, t.kind === 'lit' ? `the keyword ${JSON.stringify(t.name)}` : `token class ${t.name}`);
    }
    for (const [b, what] of need) {
      if (this.byteToken[b] < 0) {
        throw new MaskError(`${this.vocab.fileHash ? 'tokenizer' : ''} vocabulary has no single-byte token for byte 0x${b.toString(16).padStart(2, '0')} (${JSON.stringify(String.fromCharCode(b))}), needed by ${what} of grammar ${this.grammar.name} (${this.grammar.file}); expected a tokenizer that can spell every byte (byte-level BPE or byte fallback)`);
      }
    }
  }

  /** A constraint for one binding of the open name sets. Cheap: no vocabulary work. */
  bind(names: NameBindings = {}): MaskConstraint {
    return new MaskConstraint(this, this.automaton.bind(names));
  }
}

/** The TokenConstraint implementation. Scratch buffers make `writeAllowed` allocation-light. */
export class MaskConstraint implements TokenConstraint<MaskState> {
  readonly vocabSize: number;
  readonly eosIds: readonly number[];
  private mask: Uint32Array = new Uint32Array(0);
  private lim = INF;
  private rootPrevWord = false;
  private readonly scratch: Thread[] = [];
  /** largest completion distance of a token marked since the last reset (for local masks) */
  private maxSeen = 0;
  /** while a local mask is computed: the trie nodes where the sentinel frame was popped */
  private popSink: Set<number> | null = null;
  /** per RTN node: the local mask of a BETWEEN thread (see `localMask`) */
  private readonly locals: (LocalMask | undefined)[] = [];
  /** per (RTN node, trie node): the local part of a walk below that trie node (see `subLocal`) */
  private readonly subLocals = new Map<number, SubLocal>();
  /** per class tables, per (RTN node, DFA state): lexeme local masks (see `lexLocal`) */
  private readonly lexLocals = new Map<ClassTables, Map<number, LexLocal>>();
  /** while a sub-local walk is computed: the token ids it marks */
  private collect: number[] | null = null;
  private readonly useLocal: boolean;

  constructor(readonly engine: MaskEngine, readonly pda: AutomatonInstance) {
    this.vocabSize = engine.vocab.vocabSize;
    this.eosIds = engine.vocab.eosIds;
    this.useLocal = !pda.automaton.rtn.terminals.some((t) => t.kind === 'newvar' || t.kind === 'boundvar');
  }

  private recordPop(x: number): void {
    if (this.popSink === null) throw new Error('internal: sentinel frame outside a local-mask computation');
    if (x === 0 || !this.engine.wsNode[x]) this.popSink.add(x);
  }

  /**
   * The local mask of RTN node n: the tokens a BETWEEN thread at n reads without returning below
   * n's nonterminal (independent of the stack below: computed once per node with a sentinel frame
   * and kept), the largest completion distance among them (relative to that frame), and the trie
   * nodes where the sentinel is popped — there the rest of the token depends on the real stack.
   */
  private localMask(n: number): LocalMask {
    const hit = this.locals[n];
    if (hit !== undefined) return hit;
    const saved = { mask: this.mask, lim: this.lim, pw: this.rootPrevWord, max: this.maxSeen };
    const bits = new Uint32Array(this.engine.nWords);
    this.mask = bits;
    this.lim = INF;
    this.rootPrevWord = false;
    this.maxSeen = 0;
    this.popSink = new Set();
    try {
      this.maskBetweenRoot(new Thread(n, -1, 0, '', SENTINEL, null));
      const entry: LocalMask = { bits, ids: sparseIds(bits), maxDist: this.maxSeen, pops: Uint32Array.from([...this.popSink].sort((p, q) => p - q)) };
      this.locals[n] = entry;
      return entry;
    } finally {
      this.popSink = null;
      this.mask = saved.mask;
      this.lim = saved.lim;
      this.rootPrevWord = saved.pw;
      this.maxSeen = saved.max;
    }
  }

  /**
   * The local part of a walk below trie node x (≠ root) for a BETWEEN thread at RTN node n: the
   * token ids it marks, their largest distance, and the pop points — computed once with the
   * sentinel frame and kept, like `localMask` (exit nodes of lexemes and pop points land here).
   */
  private subLocal(n: number, x: number): SubLocal {
    const key = n * this.engine.trie.nodeCount + x;
    const hit = this.subLocals.get(key);
    if (hit !== undefined) return hit;
    const saved = { lim: this.lim, max: this.maxSeen, collect: this.collect };
    const ids: number[] = [];
    this.collect = ids;
    this.lim = INF;
    this.maxSeen = 0;
    this.popSink = new Set();
    try {
      this.walkBetween(x, new Thread(n, -1, 0, '', SENTINEL, null), false);
      const entry: SubLocal = { ids: Uint32Array.from(new Set(ids)), maxDist: this.maxSeen, pops: Uint32Array.from([...this.popSink].sort((p, q) => p - q)) };
      this.subLocals.set(key, entry);
      return entry;
    } finally {
      this.popSink = null;
      this.collect = saved.collect;
      this.lim = saved.lim;
      this.maxSeen = saved.max;
    }
  }

  /**
   * The local mask of a token-class lexeme in DFA state d whose RTN continuation is node n: inside
   * tokens and exit walks (`bits`, pops `popsLex`), and — when the lexeme may end here — the BETWEEN
   * mask after it (`rootBits`, filtered by the word rule at run time, pops `popsRoot`). Computed once
   * with the sentinel frame, like `localMask`.
   */
  private lexLocal(tables: ClassTables, n: number, d: number): LexLocal {
    const key = n * 65536 + d;
    let perClass = this.lexLocals.get(tables);
    if (perClass === undefined) {
      perClass = new Map();
      this.lexLocals.set(tables, perClass);
    }
    const hit = perClass.get(key);
    if (hit !== undefined) return hit;
    const saved = { mask: this.mask, lim: this.lim, pw: this.rootPrevWord, max: this.maxSeen };
    const nWords = this.engine.nWords;
    this.lim = INF;
    this.rootPrevWord = false;
    this.maxSeen = 0;
    try {
      const end = new Thread(n, -1, 0, '', SENTINEL, null);
      const bits = new Uint32Array(nWords);
      this.mask = bits;
      this.popSink = new Set();
      this.orInside(tables, d, INF - this.pda.betweenDist(n, null, SENTINEL), false);
      const ex = tables.exits[d];
      for (let i = 0; i < ex.length; i++) this.walkBetween(ex[i], end, false);
      const popsLex = Uint32Array.from([...this.popSink].sort((p, q) => p - q));
      let rootBits: Uint32Array | null = null;
      let popsRoot = new Uint32Array(0);
      if (tables.dfa.accept[d]) {
        rootBits = new Uint32Array(nWords);
        this.mask = rootBits;
        this.popSink = new Set();
        this.maskBetweenRoot(end);
        popsRoot = Uint32Array.from([...this.popSink].sort((p, q) => p - q));
      }
      const entry: LexLocal = { bits, ids: sparseIds(bits), rootBits, rootIds: rootBits === null ? null : sparseIds(rootBits), maxDist: this.maxSeen, popsLex, popsRoot };
      perClass.set(key, entry);
      return entry;
    } finally {
      this.popSink = null;
      this.mask = saved.mask;
      this.lim = saved.lim;
      this.rootPrevWord = saved.pw;
      this.maxSeen = saved.max;
    }
  }

  /** Computes every local mask now (otherwise each is computed on first use). Returns the count. */
  prepare(): number {
    if (!this.useLocal) return 0;
    const a = this.pda.automaton;
    const nodes = new Set<number>([a.startNode]);
    for (let o = 0; o < a.optTarget.length; o++) {
      nodes.add(a.optTarget[o]);
      for (const r of a.optPush[o]) nodes.add(r);
    }
    for (const n of nodes) this.localMask(n);
    return nodes.size;
  }

  start(): MaskState {
    return this.pda.start;
  }

  isComplete(state: MaskState): boolean {
    return state.ended === true || this.pda.isComplete(state);
  }

  viable(state: MaskState): boolean {
    return state.threads.length !== 0;
  }

  /** Rollback: the state before the last advance (the start state stays itself). */
  rollback(state: MaskState): MaskState {
    return state.prev ?? state;
  }

  /** Shortest completion of the state in bytes (an achievable upper bound). */
  shortestBytes(state: MaskState): number {
    return state.ended ? 0 : this.pda.shortestCompletion(state);
  }

  /**
   * Fewest tokens that surely complete the program, EOS included: completion bytes as single-byte
   * tokens + 1. This is the bound the budget uses.
   */
  tokensToComplete(state: MaskState): number {
    return state.ended ? 0 : this.pda.shortestCompletion(state) + 1;
  }

  advance(state: MaskState, id: number): MaskState {
    const v = this.engine.vocab;
    if (state.ended) throw new MaskError(`token ${id} after the end of sequence; expected nothing more`);
    if (this.eosIds.includes(id)) {
      if (!this.pda.isComplete(state)) throw new MaskError(`end of sequence (token ${id}) before the program is complete`);
      return { threads: state.threads, prevWord: state.prevWord, prev: state, ended: true };
    }
    if (!v.isNormal(id)) throw new MaskError(`token ${id} is ${id < 0 || id >= v.vocabSize ? 'out of range' : 'special or absent'}; never allowed as program text`);
    const next = this.pda.advanceBytes(state, v.bytesOf(id));
    if (next.threads.length === 0) throw new MaskError(`token ${id} (${JSON.stringify(v.text(id))}) is not allowed here: the text would not be a prefix of any program`);
    return next;
  }

  /** Advances by raw bytes (no token); a dead state when not viable. */
  advanceBytes(state: MaskState, bytes: Uint8Array): MaskState {
    return this.pda.advanceBytes(state, bytes);
  }

  writeAllowed(state: MaskState, budget: number, mask: Uint32Array): void {
    mask.fill(0);
    if (state.ended || budget < 1) return;
    this.mask = mask;
    this.lim = budget === Infinity ? INF : budget - 2;
    this.rootPrevWord = state.prevWord;
    const pda = this.pda;
    if (budget >= 2) for (const th of state.threads) this.maskThread(th);
    if (pda.isComplete(state)) for (const id of this.eosIds) mask[id >>> 5] |= 1 << (id & 31);
  }

  /** Reference implementation: tries every token with the same automaton (the naive baseline). */
  writeAllowedNaive(state: MaskState, budget: number, mask: Uint32Array): void {
    mask.fill(0);
    if (state.ended || budget < 1) return;
    const v = this.engine.vocab;
    const lim = budget === Infinity ? INF : budget - 2;
    if (budget >= 2) {
      for (let id = 0; id < v.vocabSize; id++) {
        if (!v.isNormal(id)) continue;
        const next = this.pda.advanceBytes(state, v.bytesOf(id));
        if (next.threads.length !== 0 && this.pda.shortestCompletion(next) <= lim) mask[id >>> 5] |= 1 << (id & 31);
      }
    }
    if (this.pda.isComplete(state)) for (const id of this.eosIds) mask[id >>> 5] |= 1 << (id & 31);
  }

  // ---- mask internals ----

  private markNode(c: number, dist: number): void {
    if (dist > this.lim) return;
    if (dist > this.maxSeen) this.maxSeen = dist;
    const trie = this.engine.trie;
    if (this.collect !== null) {
      for (let i = trie.tokStart[c], e = trie.tokStart[c + 1]; i < e; i++) this.collect.push(trie.tokens[i]);
      return;
    }
    const mask = this.mask;
    for (let i = trie.tokStart[c], e = trie.tokStart[c + 1]; i < e; i++) {
      const id = trie.tokens[i];
      mask[id >>> 5] |= 1 << (id & 31);
    }
  }

  private maskThread(th: Thread): void {
    const pda = this.pda;
    if (th.term < 0) {
      this.maskBetweenRoot(th);
      return;
    }
    const t = pda.automaton.rtn.terminals[th.term];
    if (t.kind === 'class') {
      const tables = this.engine.classes[t.tokenClass]!;
      const d = th.lex;
      if (this.useLocal && this.popSink === null && th.env === null) {
        const local = this.lexLocal(tables, th.node, d);
        const frames = th.frames;
        if (local.maxDist + (frames === null ? 0 : frames.rest) <= this.lim) {
          this.orPacked(local.bits, local.ids, false);
          if (local.rootBits !== null) this.orPacked(local.rootBits, local.rootIds, this.rootPrevWord);
          if (frames !== null && local.popsLex.length + local.popsRoot.length > 0) {
            const outer = new Thread(frames.ret, -1, 0, '', frames.next, frames.env);
            for (let i = 0; i < local.popsLex.length; i++) this.walkBetween(local.popsLex[i], outer, false);
            for (let i = 0; i < local.popsRoot.length; i++) {
              const x = local.popsRoot[i];
              if (x === 0) this.maskBetweenRoot(outer);
              else {
                const fb = this.engine.firstByte[x];
                if (this.rootPrevWord && WORD[fb] && !pda.automaton.rtn.space[fb]) continue;
                this.walkBetween(x, outer, false);
              }
            }
          }
          return;
        }
      }
      const end = pda.endLexeme(th);
      const rest = pda.betweenDist(th.node, th.env, th.frames);
      this.orInside(tables, d, this.lim - rest, false);
      const ex = tables.exits[d];
      for (let i = 0; i < ex.length; i++) this.walkBetween(ex[i], end, false);
      if (t.dfa.accept[d]) this.maskBetweenRoot(end);
      return;
    }
    // literals, names, variables: the end of the lexeme here is a BETWEEN mask at the root;
    // continuing the lexeme is a (short) walk.
    if (pda.lexAccepting(th)) this.maskBetweenRoot(pda.endLexeme(th));
    if (t.kind === 'lit' || t.kind === 'names') {
      this.walkLex(0, th, th.lex, pda.betweenDist(th.node, th.env, th.frames));
      return;
    }
    const trie = this.engine.trie;
    for (let c = 1; c < trie.nodeCount; c = trie.end[c]) {
      const t2 = pda.stepLex(th, trie.byte[c]);
      if (t2 === null) continue;
      this.markNode(c, pda.threadDist(t2, WORD[trie.byte[c]] === 1));
      if (trie.end[c] > c + 1) this.walkGeneric(c, t2);
    }
  }

  /** OR a kept mask: through its id list when it has one (sparse), else word by word. */
  private orPacked(bits: Uint32Array, ids: Uint32Array | null, noWordStart: boolean): void {
    if (ids === null) {
      this.orBits(bits, noWordStart);
      return;
    }
    const mask = this.mask;
    const ws = this.engine.wordStart;
    for (let i = 0; i < ids.length; i++) {
      const id = ids[i];
      const w = id >>> 5;
      const bit = 1 << (id & 31);
      if (noWordStart && (ws[w] & bit) !== 0) continue;
      mask[w] |= bit;
    }
  }

  private orBits(src: Uint32Array, noWordStart: boolean): void {
    const mask = this.mask;
    if (noWordStart) {
      const ws = this.engine.wordStart;
      for (let w = 0; w < src.length; w++) mask[w] |= src[w] & ~ws[w];
    } else {
      for (let w = 0; w < src.length; w++) mask[w] |= src[w];
    }
  }

  /** OR inside[d] (or the budget level) into the mask; `noWordStart` removes word-start tokens. */
  private orInside(tables: ClassTables, d: number, room: number, noWordStart: boolean): void {
    if (room < 0) return;
    const km = tables.kmax[d];
    let src: Uint32Array;
    if (room >= km) src = tables.inside[d];
    else if (room < MAX_LE) src = tables.le[d][room];
    else {
      this.orInsideSlow(tables, d, room, noWordStart);
      return;
    }
    const top = room >= km ? km : room;
    if (top + this.lim - room > this.maxSeen) this.maxSeen = top + this.lim - room;
    this.orBits(src, noWordStart);
  }

  private orInsideSlow(tables: ClassTables, d: number, room: number, noWordStart: boolean): void {
    const v = this.engine.vocab;
    const src = tables.inside[d];
    for (let w = 0; w < src.length; w++) {
      let word = src[w];
      while (word !== 0) {
        const low = word & -word;
        const id = (w << 5) + (31 - Math.clz32(low));
        word ^= low;
        if (noWordStart && (this.engine.wordStart[w] & low) !== 0) continue;
        let s = d;
        for (let i = v.offsets[id]; i < v.offsets[id + 1] && s !== 0; i++) s = wStep(tables, s, v.bytes[i]);
        if (s !== 0 && wMinAccept(tables, s) <= room) this.mask[w] |= low;
      }
    }
  }

  /** Mask of a BETWEEN thread at the trie root. */
  private maskBetweenRoot(th: Thread): void {
    const pda = this.pda;
    const a = pda.automaton;
    const rtn = a.rtn;
    if (this.useLocal && this.popSink === null) {
      const local = this.localMask(th.node);
      const frames = th.frames;
      if (local.maxDist + (frames === null ? 0 : frames.rest) <= this.lim) {
        this.orPacked(local.bits, local.ids, this.rootPrevWord);
        if (frames === null) return; // after the program's end only spaces follow: local already has them
        const pops = local.pops;
        if (pops.length === 0) return;
        const outer = new Thread(frames.ret, -1, 0, '', frames.next, frames.env);
        for (let i = 0; i < pops.length; i++) {
          const x = pops[i];
          if (x === 0) this.maskBetweenRoot(outer);
          else {
            const fb = this.engine.firstByte[x];
            if (this.rootPrevWord && WORD[fb] && !rtn.space[fb]) continue;
            this.walkBetween(x, outer, false);
          }
        }
        return;
      }
    }
    let node = th.node;
    let frames = th.frames;
    let env = th.env;
    for (;;) {
      const cls = pda.classOptions(node, env === null ? 0 : 1);
      for (let i = 0; i < cls.length; i++) {
        const o = cls[i];
        const t = rtn.terminals[a.optTerm[o]];
        const tables = this.engine.classes[t.tokenClass]!;
        const pushed = pda.pushFrames(o, frames, env);
        const target = a.optTarget[o];
        const rest = pda.betweenDist(target, env, pushed);
        this.orInside(tables, tables.w0, this.lim - rest, this.rootPrevWord);
        const ex = tables.exits[tables.w0];
        if (ex.length > 0) {
          const end = new Thread(target, -1, 0, '', pushed, env);
          for (let j = 0; j < ex.length; j++) {
            const x = ex[j];
            if (this.rootPrevWord && WORD[this.engine.firstByte[x]] && !rtn.space[this.engine.firstByte[x]]) continue;
            this.walkBetween(x, end, false);
          }
        }
      }
      if (!a.canPop[node] || frames === null) break;
      if (frames === SENTINEL) {
        this.recordPop(0);
        break;
      }
      node = frames.ret;
      env = frames.env;
      frames = frames.next;
    }
    this.walkBetweenRoot(th);
  }

  /**
   * The finite terminals (literals, names, variables) and space-only tokens of a BETWEEN thread at
   * the root: space-only tokens from a list, then for each byte that can begin a terminal, the root
   * child (word rule applies) and every "spaces + byte" node.
   */
  private walkBetweenRoot(th: Thread): void {
    const pda = this.pda;
    const a = pda.automaton;
    const engine = this.engine;
    const dist = pda.betweenDist(th.node, th.env, th.frames, false); // after a space
    if (dist <= this.lim) {
      if (dist > this.maxSeen) this.maxSeen = dist;
      const ids = engine.wsTokenIds;
      const mask = this.mask;
      for (let i = 0; i < ids.length; i++) mask[ids[i] >>> 5] |= 1 << (ids[i] & 31);
    }
    let node = th.node;
    let frames = th.frames;
    let env = th.env;
    for (;;) {
      const d = pda.dispatch(node, env === null ? 0 : 1, true);
      const bytes = d.bytes;
      for (let i = 0; i < bytes.length; i++) {
        const b = bytes[i];
        if (!(this.rootPrevWord && WORD[b])) {
          const c = engine.childOf(0, b);
          if (c >= 0) this.startTerminals(c, b, d, i, frames, env);
        }
        const more = engine.wsChildren[b];
        for (let j = 0; j < more.length; j++) this.startTerminals(more[j], b, d, i, frames, env);
      }
      if (!a.canPop[node] || frames === null) break;
      if (frames === SENTINEL) {
        this.recordPop(0);
        break;
      }
      node = frames.ret;
      env = frames.env;
      frames = frames.next;
    }
  }

  /** Starts every option of dispatch entry i at trie node c (byte b) and walks below c. */
  private startTerminals(c: number, b: number, d: Dispatch, i: number, frames: Frame | null, env: Env | null): void {
    const pda = this.pda;
    const a = pda.automaton;
    const rtn = a.rtn;
    const end = this.engine.trie.end;
    for (let k = d.off[i]; k < d.off[i + 1]; k++) {
      const o = d.opts[k];
      const term = a.optTerm[o];
      const s = pda.startLex(term, b, env);
      if (s === 0) continue;
      const t = rtn.terminals[term];
      const text = t.kind === 'newvar' || t.kind === 'boundvar' ? String.fromCharCode(b) : '';
      const nt = new Thread(a.optTarget[o], term, s, text, pda.pushFrames(o, frames, env), env);
      if (t.kind === 'lit' || t.kind === 'class' || t.kind === 'names') {
        const rest = pda.betweenDist(nt.node, env, nt.frames);
        this.markNode(c, pda.termDfa[term].minAccept[s] + rest);
        if (end[c] > c + 1) this.walkLex(c, nt, s, rest);
      } else {
        this.markNode(c, pda.threadDist(nt, WORD[b] === 1));
        if (end[c] > c + 1) this.walkGeneric(c, nt);
      }
    }
  }

  /** Walks the children of trie node x with BETWEEN thread th (skipping class terminals if asked). */
  private walkBetween(x: number, th: Thread, skipClasses: boolean): void {
    const pda = this.pda;
    const a = pda.automaton;
    const engine = this.engine;
    if (x !== 0 && !skipClasses && this.useLocal && this.popSink === null && th.env === null) {
      // below a non-root trie node: the stack-independent part is kept per (RTN node, trie node)
      const sub = this.subLocal(th.node, x);
      const frames = th.frames;
      if (sub.maxDist + (frames === null ? 0 : frames.rest) <= this.lim) {
        const mask = this.mask;
        const ids = sub.ids;
        for (let i = 0; i < ids.length; i++) mask[ids[i] >>> 5] |= 1 << (ids[i] & 31);
        const pops = sub.pops;
        if (frames !== null && pops.length > 0) {
          const outer = new Thread(frames.ret, -1, 0, '', frames.next, frames.env);
          for (let i = 0; i < pops.length; i++) this.walkBetween(pops[i], outer, false);
        }
        return;
      }
    }
    const { byte, end } = engine.trie;
    const space = a.rtn.space;
    const pw = x === 0 ? this.rootPrevWord : WORD[byte[x]] === 1;
    const dist = pda.betweenDist(th.node, th.env, th.frames, false); // after a space
    if (engine.wide[x] >= 0) {
      // wide node: look up the few bytes that can begin a terminal
      const sp = engine.spaceBytes;
      for (let i = 0; i < sp.length; i++) {
        const c = engine.childOf(x, sp[i]);
        if (c < 0) continue;
        this.markNode(c, dist);
        if (end[c] > c + 1) this.walkBetween(c, th, skipClasses);
      }
      let node = th.node;
      let frames = th.frames;
      let env = th.env;
      for (;;) {
        const d = pda.dispatch(node, env === null ? 0 : 1, skipClasses);
        const bytes = d.bytes;
        for (let i = 0; i < bytes.length; i++) {
          const b = bytes[i];
          if (pw && WORD[b]) continue;
          const c = engine.childOf(x, b);
          if (c >= 0) this.startTerminals(c, b, d, i, frames, env);
        }
        if (!a.canPop[node] || frames === null) break;
        if (frames === SENTINEL) {
          this.recordPop(x);
          break;
        }
        node = frames.ret;
        env = frames.env;
        frames = frames.next;
      }
      return;
    }
    // narrow node: one pass over the children
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const b = byte[c];
      if (space[b]) {
        this.markNode(c, dist);
        if (end[c] > c + 1) this.walkBetween(c, th, skipClasses);
        continue;
      }
      if (pw && WORD[b]) continue;
      let node = th.node;
      let frames = th.frames;
      let env = th.env;
      for (;;) {
        const d = pda.dispatch(node, env === null ? 0 : 1, skipClasses);
        const i = d.index[b];
        if (i >= 0) this.startTerminals(c, b, d, i, frames, env);
        if (!a.canPop[node] || frames === null) break;
        if (frames === SENTINEL) {
          this.recordPop(x);
          break;
        }
        node = frames.ret;
        env = frames.env;
        frames = frames.next;
      }
    }
  }

  /** Walks below x with a lit/class LEX thread in DFA state s; `rest` = completion after the lexeme. */
  private walkLex(x: number, th: Thread, s: number, rest: number): void {
    const t = this.pda.automaton.rtn.terminals[th.term];
    const dfa = this.pda.termDfa[th.term];
    const trie = this.engine.trie;
    const { byte, end } = trie;
    if (x !== 0 && dfa.accept[s] && end[x] > x + 1) this.walkBetween(x, this.pda.endLexeme(th), false);
    const base = s * 256;
    if (t.kind !== 'class' && this.engine.wide[x] >= 0) {
      // literals and names continue with few bytes: look them up
      for (let b = 0; b < 256; b++) {
        const s2 = dfa.trans[base + b];
        if (s2 === 0) continue;
        const c = this.engine.childOf(x, b);
        if (c < 0) continue;
        this.markNode(c, dfa.minAccept[s2] + rest);
        if (end[c] > c + 1) this.walkLex(c, th, s2, rest);
      }
      return;
    }
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const s2 = dfa.trans[base + byte[c]];
      if (s2 === 0) continue;
      this.markNode(c, dfa.minAccept[s2] + rest);
      if (end[c] > c + 1) this.walkLex(c, th, s2, rest);
    }
  }

  /** Walks below x with any thread, stepping it byte by byte (names, variables). */
  private walkGeneric(x: number, th: Thread): void {
    const pda = this.pda;
    const trie = this.engine.trie;
    const { byte, end } = trie;
    const pw = x === 0 ? this.rootPrevWord : WORD[byte[x]] === 1;
    const scratch = this.scratch;
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const base = scratch.length;
      pda.stepThread(th, byte[c], pw, scratch);
      const top = scratch.length;
      for (let i = base; i < top; i++) {
        const t2 = scratch[i];
        this.markNode(c, pda.threadDist(t2, WORD[byte[c]] === 1));
        if (end[c] > c + 1) this.walkGeneric(c, t2);
      }
      scratch.length = base;
    }
  }
}

export { Env, Frame };
