/**
 * Kept masks: the stack-independent part of a mask, computed once per binding and kept.
 *
 * For a grammar without variables (no `new` / `bound` fields, so no thread has an env), what a
 * position reads before it returns below its own nonterminal does not depend on the stack under
 * it. So each is computed once with the stand-in frame SENTINEL as "the rest of the stack"
 * (walk.ts, on the keep context) and kept with
 * - its bitset (and an id list when sparse),
 * - the largest completion distance among its tokens, relative to that frame (`maxDist`): the
 *   kept mask is used only when `maxDist + rest of the real stack ≤ limit`, else the walker walks
 *   (a tight budget needs the per-token distances),
 * - its pop points: the trie nodes where SENTINEL was popped. There the rest of the token depends
 *   on the real stack, so at use time the walker continues below each of them with the frame the
 *   position returns to.
 * Three kinds, by position:
 * - `localMask(n)`: a BETWEEN position at RTN node n, from the trie root;
 * - `lexLocal(tables, n, d)`: a token-class lexeme in DFA state d continuing at node n — the
 *   tokens inside and the exit walks (`bits`, pops `popsLex`) and, when the lexeme may end here,
 *   the BETWEEN mask after it (`rootBits`, filtered by the word rule at use time, pops `popsRoot`);
 * - `subLocal(n, x)`: a BETWEEN position at node n below trie node x ≠ root (exit nodes of
 *   lexemes and pop points land here): the token ids it marks.
 * Memory: one bitset (⌈V/32⌉ words) per local mask and per lexeme state reached, id lists for the
 * rest; computed on first use (`prepare` computes every local mask up front).
 *
 * Frame masks (grammars without name scopes): resolving a pop point walks the frame below, whose
 * kept mask may pop again, and so on — one kept mask per frame, so a right-recursive list of n
 * elements cost O(n) per step; and a class lexeme that ends inside many tokens (glued grammars:
 * thousands of exit nodes) popped at each of them, one walk per pop point per frame. Now a kept
 * mask's pop points are one interned *set*, and
 * - `step(n, s)` (per binding, stack-independent): popping a frame returning to node n at the pop
 *   points of set s — the union of the kept masks there, their largest distance, and the set of
 *   their own pop points, to resolve against the frame below;
 * - `resolve(f, s)` (per frame object, a WeakMap: frames are immutable, shared by every later
 *   state, and die with them): step(f.ret, s) ∪ resolve(f.next, step.next), with its largest
 *   absolute distance; computed deepest-first (no recursion per frame), a new frame costing one
 *   union, hash-consed by the inputs' identities (a union equal to an input is that input, so a
 *   cons list keeps one bitset, not one per element).
 * A resolved mask is used when its largest distance fits the limit — then the walk it replaces
 * would have taken every kept mask on the way as is, so the bits are the same (tested against the
 * walk in test/masks/depth.test.ts); else the pop points are walked as before. Root-level pop sets
 * are resolved without the word rule; with it, word-start tokens are removed when OR-ed.
 */
import { INF, WORD, type AutomatonInstance, type Frame } from '../automaton/internal.ts';
import { popcount32 } from '../util/bitset.ts';
import type { ClassTables } from './class-tables.ts';
import { WalkContext, type DeepStart } from './context.ts';
import { SENTINEL, type KeptMaskSource, type TrieWalker } from './walk.ts';

interface LocalMask {
  readonly bits: Uint32Array;
  readonly ids: Uint32Array | null;
  /** the same tokens as a frame-mask content */
  readonly content: Content;
  readonly maxDist: number;
  readonly pops: Uint32Array;
  /** a scope-sensitive option starts where no option of the position's own level can carry it: walk the position live */
  readonly unkeepable: boolean;
  /** levels inside tokens where scope-sensitive options were left out (WalkContext.deepStarts) */
  readonly deep: readonly DeepStart[] | null;
}

interface LexLocal {
  readonly bits: Uint32Array;
  readonly ids: Uint32Array | null;
  readonly rootBits: Uint32Array | null;
  readonly rootIds: Uint32Array | null;
  readonly maxDist: number;
  readonly popsLex: Uint32Array;
  readonly popsRoot: Uint32Array;
  readonly unkeepable: boolean;
  readonly deep: readonly DeepStart[] | null;
}

interface SubLocal {
  readonly ids: Uint32Array;
  readonly content: Content;
  readonly maxDist: number;
  readonly pops: Uint32Array;
  readonly unkeepable: boolean;
  readonly deep: readonly DeepStart[] | null;
}

/** A set of tokens, immutable and shared: a bitset, or (`bits` null) an id list. `id` names it. */
interface Content {
  readonly id: number;
  readonly bits: Uint32Array | null;
  readonly ids: Uint32Array | null;
}

/** The mask of popping one frame at a trie node, the whole stack under it included (see above). */
interface FrameMask {
  readonly content: Content;
  /** largest completion distance (bytes, absolute) of its tokens */
  readonly maxDist: number;
}

/** Popping a frame at a set of pop points, apart from the frames below (KeptMasks.step). */
interface SetStep {
  readonly content: Content;
  /** largest distance of its tokens, relative to the frame below */
  readonly maxDist: number;
  /** the set of pop points to resolve against the frame below (0: none) */
  readonly next: number;
}

const NO_POPS = new Uint32Array(0);
const NO_MASK = new Uint32Array(0);

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

/** `acc |= m` (bitset or id list). */
function orContent(acc: Uint32Array, m: Content): void {
  if (m.ids !== null) {
    const ids = m.ids;
    for (let i = 0; i < ids.length; i++) acc[ids[i] >>> 5] |= 1 << (ids[i] & 31);
  } else {
    const b = m.bits!;
    for (let w = 0; w < acc.length; w++) acc[w] |= b[w];
  }
}

/** `acc` has exactly the tokens of m. */
function sameAs(acc: Uint32Array, m: Content): boolean {
  if (m.bits !== null) {
    const b = m.bits;
    for (let w = 0; w < acc.length; w++) if (acc[w] !== b[w]) return false;
    return true;
  }
  const ids = m.ids!;
  let n = 0;
  for (let w = 0; w < acc.length; w++) if (acc[w] !== 0) n += popcount32(acc[w]);
  if (n !== ids.length) return false;
  for (let i = 0; i < ids.length; i++) if ((acc[ids[i] >>> 5] & (1 << (ids[i] & 31))) === 0) return false;
  return true;
}

export class KeptMasks implements KeptMaskSource {
  /** per RTN node: the local mask of a BETWEEN position */
  private readonly locals: (LocalMask | undefined)[] = [];
  /** per (RTN node, trie node): the local part of a walk below that trie node */
  private readonly subLocals = new Map<number, SubLocal>();
  /** per class tables, per (RTN node, DFA state): lexeme local masks */
  private readonly lexLocals = new Map<ClassTables, Map<number, LexLocal>>();
  /** the keep context: every computation here runs on it (never nested, see context.ts) */
  private readonly keep: WalkContext;
  private readonly pda: AutomatonInstance;
  /** per frame: the masks of popping it (grammars without name scopes; null: not used) */
  private readonly frameMemo: WeakMap<Frame, Map<number, FrameMask | null>> | null;
  /** interned sets of pop points: id → points; kept arrays and keys → id */
  private readonly sets: Uint32Array[] = [new Uint32Array(0)];
  private readonly setIds = new WeakMap<Uint32Array, number>();
  private readonly setByKey = new Map<string, number>();
  /** (return node, set id) → SetStep */
  private readonly steps = new Map<number, SetStep | null>();
  /** a space byte is a word byte: the root frame mask cannot be filtered by the word rule afterwards */
  private readonly wordSpace: boolean;
  /** scratch bitset of frame-mask unions */
  private readonly scratch: Uint32Array;
  /** hash-consed unions: (content id, content id) → content */
  private readonly unions = new Map<number, Content>();
  private nextContent = 0;

  constructor(private readonly walker: TrieWalker, frameMasks = true) {
    this.keep = new WalkContext(walker.vt, false);
    this.pda = walker.pda;
    this.frameMemo = frameMasks && this.pda.scopes === null ? new WeakMap() : null;
    const space = this.pda.automaton.rtn.space;
    let ws = false;
    for (let b = 0; b < 256; b++) if (space[b] && WORD[b]) ws = true;
    this.wordSpace = ws;
    this.scratch = new Uint32Array(walker.vt.nWords);
  }

  // ---- use (live context) ----

  // With name scopes (ctx.res set) a kept mask leaves out the scope-sensitive options of the
  // position's own level (Automaton.optSensitive): they are walked live after it (walkDeferred);
  // a mask where such an option starts elsewhere is not used; distances add the scopes' penalty
  // bound (pending references), so every kept token still fits the budget.

  between(ctx: WalkContext, node: number, frames: Frame | null): boolean {
    const local = this.localMask(node);
    if (local.unkeepable || local.maxDist + (frames === null ? 0 : frames.rest) + this.pda.penaltyBound(ctx.res) > ctx.lim) return false;
    ctx.orPacked(local.bits, local.ids, ctx.rootPrevWord);
    // after the program's end only spaces follow: the local mask already has them
    if (frames !== null) this.resolveInto(ctx, local.pops, frames, true);
    if (ctx.res !== null) {
      this.walker.walkDeferred(ctx, 0, node, frames);
      if (local.deep !== null) this.walker.walkDeepStarts(ctx, node, frames, local.deep);
    }
    return true;
  }

  lexeme(ctx: WalkContext, tables: ClassTables, node: number, d: number, frames: Frame | null): boolean {
    const local = this.lexLocal(tables, node, d);
    if (local.unkeepable || local.maxDist + (frames === null ? 0 : frames.rest) + this.pda.penaltyBound(ctx.res) > ctx.lim) return false;
    ctx.orPacked(local.bits, local.ids, false);
    if (local.rootBits !== null) ctx.orPacked(local.rootBits, local.rootIds, ctx.rootPrevWord);
    if (frames !== null) {
      this.resolveInto(ctx, local.popsLex, frames, false);
      this.resolveInto(ctx, local.popsRoot, frames, true);
    }
    if (ctx.res !== null) {
      const ex = tables.exits[d];
      for (let i = 0; i < ex.length; i++) this.walker.walkDeferred(ctx, ex[i], node, frames);
      if (local.rootBits !== null) this.walker.walkDeferred(ctx, 0, node, frames);
      if (local.deep !== null) this.walker.walkDeepStarts(ctx, node, frames, local.deep);
    }
    return true;
  }

  below(ctx: WalkContext, x: number, node: number, frames: Frame | null): boolean {
    const sub = this.subLocal(node, x);
    if (sub.unkeepable || sub.maxDist + (frames === null ? 0 : frames.rest) + this.pda.penaltyBound(ctx.res) > ctx.lim) return false;
    ctx.markIds(sub.ids);
    if (frames !== null) this.resolveInto(ctx, sub.pops, frames, false);
    if (ctx.res !== null) {
      this.walker.walkDeferred(ctx, x, node, frames);
      if (sub.deep !== null) this.walker.walkDeepStarts(ctx, node, frames, sub.deep);
    }
    return true;
  }

  /** Continues below each pop point x ≠ root with the position `frames` returns to. */
  private resumeBelow(ctx: WalkContext, pops: Uint32Array, frames: Frame): void {
    for (let i = 0; i < pops.length; i++) this.walker.walkBetween(ctx, pops[i], frames.ret, frames.next, frames.env);
  }

  /**
   * Pop points of a walk from the root: the root itself is the returned-to position's whole mask;
   * below a node whose first byte is a word byte only when the byte before the token was not one
   * (the kept mask was computed without the word rule).
   */
  private resumeAtRoot(ctx: WalkContext, pops: Uint32Array, frames: Frame): void {
    const fbs = this.walker.vt.firstByte;
    const space = this.pda.automaton.rtn.space;
    for (let i = 0; i < pops.length; i++) {
      const x = pops[i];
      if (x === 0) this.walker.maskBetween(ctx, frames.ret, frames.next, frames.env);
      else {
        const fb = fbs[x];
        if (ctx.rootPrevWord && WORD[fb] && !space[fb]) continue;
        this.walker.walkBetween(ctx, x, frames.ret, frames.next, frames.env);
      }
    }
  }

  // ---- frame masks (no name scopes) ----

  /** The id of a set of pop points (interned; 0 is the empty set). */
  private setOf(pops: Uint32Array): number {
    if (pops.length === 0) return 0;
    const hit = this.setIds.get(pops);
    if (hit !== undefined) return hit;
    const key = pops.join(',');
    let id = this.setByKey.get(key);
    if (id === undefined) {
      id = this.sets.length;
      this.sets.push(pops);
      this.setByKey.set(key, id);
    }
    this.setIds.set(pops, id);
    return id;
  }

  /**
   * Popping one frame whose return node is n at the pop points of set s, stack-independent (kept
   * per binding): the union of the kept masks there (the local mask at the root, sub-local masks
   * below), their largest distance relative to the frame below, and the set of their own pop points
   * (to resolve against the frame below). null when a kept mask is not keepable.
   */
  private step(n: number, s: number): SetStep | null {
    const key = s * 1048576 + n; // RTN nodes < 2^20
    const hit = this.steps.get(key);
    if (hit !== undefined) return hit;
    const pops = this.sets[s];
    let maxDist = 0;
    const own: Content[] = [];
    const next = new Set<number>();
    let out: SetStep | null = null;
    let ok = true;
    for (let i = 0; i < pops.length && ok; i++) {
      const x = pops[i];
      const k = x === 0 ? this.localMask(n) : this.subLocal(n, x);
      if (k.unkeepable) ok = false;
      else {
        own.push(k.content);
        if (k.maxDist > maxDist) maxDist = k.maxDist;
        for (const y of k.pops) next.add(y);
      }
    }
    if (ok) {
      let content = own[0];
      if (own.length > 1) {
        const acc = this.scratch;
        acc.fill(0);
        for (const c of own) orContent(acc, c);
        const ids = sparseIds(acc);
        content = this.content(ids === null ? acc.slice() : null, ids);
      }
      const nextPops = Uint32Array.from(next).sort();
      out = { content, maxDist, next: nextPops.length === 0 ? 0 : this.setOf(nextPops) };
    }
    this.steps.set(key, out);
    return out;
  }

  /**
   * The mask of popping frame f at the pop points of set s — what resolving them walks, the whole
   * stack under f included — with no limit and no word rule, or null when not keepable. Kept per
   * frame; computed deepest-first along the stack, so nothing recurses per frame.
   */
  private resolve(f: Frame, s: number): FrameMask | null {
    const memo = this.frameMemo!;
    const top = memo.get(f)?.get(s);
    if (top !== undefined) return top;
    const fs: Frame[] = [];
    const ss: number[] = [];
    for (let g: Frame | null = f, t = s; g !== null && t !== 0; ) {
      if (memo.get(g)?.get(t) !== undefined) break;
      fs.push(g);
      ss.push(t);
      const st = this.step(g.ret, t);
      if (st === null) break;
      t = st.next;
      g = g.next;
    }
    for (let i = fs.length - 1; i >= 0; i--) {
      const g = fs[i];
      const st = this.step(g.ret, ss[i]);
      let out: FrameMask | null = null;
      if (st !== null) {
        const next = g.next;
        const child = next === null || st.next === 0 ? undefined : memo.get(next)?.get(st.next);
        if (child !== null) {
          const base = st.maxDist + (next === null ? 0 : next.rest);
          out = child === undefined ? { content: st.content, maxDist: base } : { content: this.union2(st.content, child.content), maxDist: Math.max(base, child.maxDist) };
        }
      }
      let m = memo.get(g);
      if (m === undefined) {
        m = new Map();
        memo.set(g, m);
      }
      m.set(ss[i], out);
    }
    return memo.get(f)!.get(s)!;
  }

  /** `a ∪ b`, hash-consed by the inputs' ids; a union equal to an input is that input. */
  private union2(a: Content, b: Content): Content {
    const key = a.id * 4294967296 + b.id;
    const hit = this.unions.get(key);
    if (hit !== undefined) return hit;
    const acc = this.scratch;
    acc.fill(0);
    orContent(acc, a);
    orContent(acc, b);
    let out: Content;
    if (sameAs(acc, a)) out = a;
    else if (sameAs(acc, b)) out = b;
    else {
      const ids = sparseIds(acc);
      out = this.content(ids === null ? acc.slice() : null, ids);
    }
    this.unions.set(key, out);
    return out;
  }

  /** ORs the pop points `pops` resolved against `frames`: from the frame masks when they fit, else walked. */
  private resolveInto(ctx: WalkContext, pops: Uint32Array, frames: Frame, atRoot: boolean): void {
    if (pops.length === 0) return;
    if (this.frameMemo !== null && !(atRoot && ctx.rootPrevWord && this.wordSpace)) {
      const m = this.resolve(frames, this.setOf(pops));
      if (m !== null && m.maxDist <= ctx.lim) {
        ctx.orPacked(m.content.bits ?? NO_MASK, m.content.ids, atRoot && ctx.rootPrevWord);
        return;
      }
    }
    if (atRoot) this.resumeAtRoot(ctx, pops, frames);
    else this.resumeBelow(ctx, pops, frames);
  }

  private content(bits: Uint32Array | null, ids: Uint32Array | null): Content {
    return { id: this.nextContent++, bits: ids === null ? bits : null, ids };
  }

  // ---- computation (keep context) ----

  /** The local mask of a BETWEEN position at RTN node n (from the trie root). */
  localMask(n: number): LocalMask {
    const hit = this.locals[n];
    if (hit !== undefined) return hit;
    const k = this.keep;
    const bits = new Uint32Array(this.walker.vt.nWords);
    k.beginKept(bits, null, SENTINEL, this.pda.scopes !== null);
    this.walker.maskBetween(k, n, SENTINEL, null);
    const ids = sparseIds(bits);
    const entry: LocalMask = { bits, ids, content: this.content(bits, ids), maxDist: k.maxSeen, pops: k.takePops(), unkeepable: k.unkeepable, deep: k.takeDeepStarts() };
    k.end();
    this.locals[n] = entry;
    return entry;
  }

  /** The local part of a walk below trie node x (≠ root) for a BETWEEN position at RTN node n. */
  private subLocal(n: number, x: number): SubLocal {
    const key = n * this.walker.vt.trie.nodeCount + x;
    const hit = this.subLocals.get(key);
    if (hit !== undefined) return hit;
    const k = this.keep;
    const ids: number[] = [];
    k.beginKept(NO_MASK, ids, SENTINEL, this.pda.scopes !== null);
    this.walker.walkBetween(k, x, n, SENTINEL, null);
    const list = Uint32Array.from(new Set(ids));
    const entry: SubLocal = { ids: list, content: this.content(null, list), maxDist: k.maxSeen, pops: k.takePops(), unkeepable: k.unkeepable, deep: k.takeDeepStarts() };
    k.end();
    this.subLocals.set(key, entry);
    return entry;
  }

  /** The local mask of a token-class lexeme in DFA state d whose continuation is RTN node n. */
  private lexLocal(tables: ClassTables, n: number, d: number): LexLocal {
    const key = n * 65536 + d;
    let perClass = this.lexLocals.get(tables);
    if (perClass === undefined) {
      perClass = new Map();
      this.lexLocals.set(tables, perClass);
    }
    const hit = perClass.get(key);
    if (hit !== undefined) return hit;
    const k = this.keep;
    const w = this.walker;
    const nWords = w.vt.nWords;
    const bits = new Uint32Array(nWords);
    k.beginKept(bits, null, SENTINEL, this.pda.scopes !== null);
    w.orInside(k, tables, d, INF - this.pda.betweenDist(n, null, SENTINEL), false);
    const ex = tables.exits[d];
    for (let i = 0; i < ex.length; i++) w.walkBetween(k, ex[i], n, SENTINEL, null);
    const popsLex = k.takePops();
    let rootBits: Uint32Array | null = null;
    let popsRoot: Uint32Array = NO_POPS;
    if (tables.dfa.accept[d]) {
      // same keep walk (maxSeen carries over), into a second bitset
      rootBits = new Uint32Array(nWords);
      k.mask = rootBits;
      w.maskBetween(k, n, SENTINEL, null);
      popsRoot = k.takePops();
    }
    const entry: LexLocal = { bits, ids: sparseIds(bits), rootBits, rootIds: rootBits === null ? null : sparseIds(rootBits), maxDist: k.maxSeen, popsLex, popsRoot, unkeepable: k.unkeepable, deep: k.takeDeepStarts() };
    k.end();
    perClass.set(key, entry);
    return entry;
  }

  /** Computes the local mask of every RTN node a BETWEEN position can be at. Returns the count. */
  prepare(): number {
    const a = this.pda.automaton;
    const nodes = new Set<number>([a.startNode]);
    for (let o = 0; o < a.optTarget.length; o++) {
      nodes.add(a.optTarget[o]);
      for (const r of a.optPush[o]) nodes.add(r);
    }
    for (const n of nodes) this.localMask(n);
    return nodes.size;
  }
}
