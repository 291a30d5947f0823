/**
 * The walk context: everything a mask walk writes or reads besides its position — where marked
 * tokens go, the distance limit, the word rule at the trie root, and what a kept-mask computation
 * records. The walkers (walk.ts) and the kept masks (kept.ts) take it as their first argument.
 *
 * A constraint owns two contexts and reuses them (no allocation per mask):
 * - the live context (`live` true) writes the caller's mask in `writeAllowed`;
 * - the keep context (`live` false) computes a kept mask once, against the stand-in frame SENTINEL:
 *   it starts with no limit and no word rule, records the largest distance it marks and the trie
 *   nodes where SENTINEL was popped, and never uses kept masks itself — so kept-mask computations
 *   never nest, and starting one in the middle of a live walk leaves the live context untouched.
 */
import { INF, type Kin, type Res, type Thread } from '../automaton/internal.ts';
import type { VocabTables } from './vocab-tables.ts';

const NO_MASK: Uint32Array<ArrayBufferLike> = new Uint32Array(0);

/**
 * A return level inside a token where a kept mask left out the scope-sensitive options (a column
 * name after the `(` of `(id`, after the `.` of `.name`): the live pass rebuilds the level's frames
 * on the real stack and starts exactly those options there (walk.ts `walkDeepStarts`).
 */
export interface DeepStart {
  /** the option of the position's own level the token began with */
  readonly origin: number;
  /** the trie node (the token's bytes so far) and the RTN node of the level */
  readonly x: number;
  readonly node: number;
  /** return nodes of the frames pushed inside the token, innermost first */
  readonly rets: Int32Array;
  /** memo: the real stack these frames were last rebuilt on (undefined: never), and the result */
  base: unknown;
  frames: unknown;
}

export class WalkContext {
  /** the bitset marked tokens are OR-ed into (live: the caller's mask; keep: the kept bitset) */
  mask: Uint32Array<ArrayBufferLike> = NO_MASK;
  /** largest completion distance (bytes) a marked token may have: budget − 2, or INF */
  lim = INF;
  /** the byte before the token was a word byte: word-start tokens are refused at the trie root */
  rootPrevWord = false;
  /** largest completion distance among the tokens marked since `begin…` (kept masks keep it) */
  maxSeen = 0;
  /**
   * the name-scope state of the position being walked (automaton/scopes.ts; null without scopes):
   * set per thread, replaced while a walk continues inside an option that changes it, restored after
   */
  res: Res | null = null;
  /** the kind state of the position being walked (automaton/kinds.ts; null without kinds), like `res` */
  kin: Kin | null = null;
  /**
   * Scope-sensitive options (Automaton.optSensitive) in kept masks: 0 no deferral; 1 (keep
   * context) skip them — at the kept position's own level the live walk takes them, at a level
   * inside a token the level is recorded as a deep start (or the kept mask flagged unusable when
   * no option of the own level leads there); 2 (live) walk only them at that level.
   */
  defer = 0;
  /** the walk is still at the kept position's own level (no option started yet) */
  origin = false;
  /** the frames of the kept position's own level (SENTINEL while keeping) */
  deferFrames: unknown = null;
  /** keep context: a scope-sensitive option started where no option of the position's own level leads */
  unkeepable = false;
  /** keep context: the option the walk started with at the position's own level (-1: none yet) */
  curOrigin = -1;
  /** keep context: a sensitive option was left out at the return level being visited (walk.ts visitLevel) */
  skipHere = false;
  /**
   * keep context: the return levels inside a token where a scope-sensitive option was left out
   * (the kept mask keeps everything else below them; the live pass starts exactly those options
   * there, see DeepStart)
   */
  readonly deepStarts: DeepStart[] = [];
  private readonly deepKeys = new Set<string>();
  /** keep context, sub-local walks: marked token ids are appended here instead of set in `mask` */
  collect: number[] | null = null;
  /** keep context: the trie nodes where the stand-in frame was popped */
  private readonly pops = new Set<number>();
  /** scratch stack of threads for the byte-stepping walk (each call truncates to where it began) */
  readonly threads: Thread[] = [];
  private readonly tokStart: Uint32Array;
  private readonly tokens: Uint32Array;
  private readonly wordStart: Uint32Array;

  constructor(
    readonly tables: VocabTables,
    /** true: writes a caller's mask and may use kept masks; false: computes kept masks */
    readonly live: boolean,
  ) {
    this.tokStart = tables.trie.tokStart;
    this.tokens = tables.trie.tokens;
    this.wordStart = tables.wordStart;
  }

  /** Live context: starts a mask of a state (`prevWord`: its last byte was a word byte). */
  beginLive(mask: Uint32Array, lim: number, prevWord: boolean): void {
    this.mask = mask;
    this.lim = lim;
    this.rootPrevWord = prevWord;
    this.maxSeen = 0;
  }

  /** Keep context: starts a kept-mask computation into `mask` (or into `collect`, when given). */
  beginKept(mask: Uint32Array, collect: number[] | null, deferFrames: unknown = null, scopes = false): void {
    this.mask = mask;
    this.collect = collect;
    this.defer = scopes ? 1 : 0;
    this.origin = true;
    this.deferFrames = deferFrames;
    this.unkeepable = false;
    this.curOrigin = -1;
    this.skipHere = false;
    this.deepStarts.length = 0;
    this.deepKeys.clear();
    this.lim = INF;
    this.rootPrevWord = false;
    this.maxSeen = 0;
    this.pops.clear();
  }

  /** Ends a walk: drops the references to the caller's buffers. */
  end(): void {
    this.mask = NO_MASK;
    this.collect = null;
    this.res = null;
    this.kin = null;
  }

  /** Records that the walk popped the stand-in frame at trie node x (kept-mask computations only). */
  recordPop(x: number): void {
    if (this.live) throw new Error('internal: the stand-in frame reached in a live mask walk');
    if (x === 0 || !this.tables.wsNode[x]) this.pops.add(x);
  }

  /**
   * Records a return level inside a token (trie node x, RTN node, `rets`: the return nodes of the
   * frames above the stand-in frame, innermost first) where a scope-sensitive option was left out,
   * under option `origin` of the position's own level. Kept-mask computations only; once per level.
   */
  recordDeep(origin: number, x: number, node: number, rets: Int32Array): void {
    const key = `${origin}:${x}:${node}:${rets.join(',')}`;
    if (this.deepKeys.has(key)) return;
    this.deepKeys.add(key);
    this.deepStarts.push({ origin, x, node, rets, base: undefined, frames: null });
  }

  /** The deep starts recorded since `beginKept` (null when none); clears them. */
  takeDeepStarts(): readonly DeepStart[] | null {
    if (this.deepStarts.length === 0) return null;
    const out = this.deepStarts.slice();
    this.deepStarts.length = 0;
    this.deepKeys.clear();
    return out;
  }

  /** The pop points recorded since `beginKept`, ascending; clears them. */
  takePops(): Uint32Array {
    const out = Uint32Array.from(this.pops).sort();
    this.pops.clear();
    return out;
  }

  /** Marks the tokens of trie node c when `dist` (their completion distance) is within the limit. */
  markNode(c: number, dist: number): void {
    if (dist > this.lim) return;
    if (dist > this.maxSeen) this.maxSeen = dist;
    const tokStart = this.tokStart;
    const tokens = this.tokens;
    const collect = this.collect;
    if (collect !== null) {
      for (let i = tokStart[c], e = tokStart[c + 1]; i < e; i++) collect.push(tokens[i]);
      return;
    }
    const mask = this.mask;
    for (let i = tokStart[c], e = tokStart[c + 1]; i < e; i++) {
      const id = tokens[i];
      mask[id >>> 5] |= 1 << (id & 31);
    }
  }

  /** Sets the listed token ids in `mask` (no distance check: the caller has done it). */
  markIds(ids: Uint32Array): void {
    const mask = this.mask;
    for (let i = 0; i < ids.length; i++) mask[ids[i] >>> 5] |= 1 << (ids[i] & 31);
  }

  /** `mask |= src`, without word-start tokens when `noWordStart`. */
  orBits(src: Uint32Array, noWordStart: boolean): void {
    const mask = this.mask;
    if (noWordStart) {
      const ws = this.wordStart;
      for (let w = 0; w < src.length; w++) mask[w] |= src[w] & ~ws[w];
    } else {
      for (let w = 0; w < src.length; w++) mask[w] |= src[w];
    }
  }

  /** OR a kept bitset: through its id list when it has one (sparse), else word by word. */
  orPacked(bits: Uint32Array, ids: Uint32Array | null, noWordStart: boolean): void {
    if (ids === null) {
      this.orBits(bits, noWordStart);
      return;
    }
    const mask = this.mask;
    const ws = this.wordStart;
    for (let i = 0; i < ids.length; i++) {
      const id = ids[i];
      const w = id >>> 5;
      const bit = 1 << (id & 31);
      if (noWordStart && (ws[w] & bit) !== 0) continue;
      mask[w] |= bit;
    }
  }
}
