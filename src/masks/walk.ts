/**
 * The trie walkers: the mask of one automaton thread, written into a walk context.
 *
 * Mask of a state = union over its threads (a token is allowed iff some parse can read it):
 * - a thread inside a token-class lexeme at DFA state d: `inside[d]` (class-tables.ts, budget-
 *   filtered), plus a walk below each exit node x with the thread's continuation, plus — when the
 *   lexeme may end here — the BETWEEN mask of the continuation;
 * - a BETWEEN position at the trie root (`maskBetween`): for every next terminal that is a token
 *   class, `inside[W0]` (spaces, then that class; word-start tokens removed when the previous byte
 *   was a word byte) and its exits; the finite terminals (literals, name-set members, variables)
 *   and space-only tokens by a walk that prunes at the first byte no terminal can read;
 * - below a trie node (`walkBetween`): space children, then the terminals that start there;
 * - other lexemes (literals, names, variables): a walk from the root.
 * A BETWEEN position is (RTN node, frames, env) — no Thread object is built for it. The return
 * levels of a position go through `Automaton.forEachLevel` (the one frame-pop loop); this walker
 * is its visitor (`visitLevel`), with the walk context as `c` and the trie node as `arg`.
 *
 * Kept masks: when the walker has a `kept` source (grammars without variables) and the context is
 * live, the stack-independent part of a position is taken from kept.ts and only its pop points are
 * walked with the real stack. Kept masks are computed with this same walker on the keep context,
 * against the stand-in frame SENTINEL: reaching it records a pop point instead of popping.
 *
 * Distances: a token is marked when the shortest completion after it (bytes, automaton/pda.ts)
 * is ≤ `ctx.lim`; see constraint.ts for why that keeps every output within the budget.
 */
import { ALLOWED, Frame, LEVELS_STOP, LIVE, Thread, WORD, type Automaton, type AutomatonInstance, type Dispatch, type Env, type LevelVisitor, type Res, type Rtn } from '../automaton/internal.ts';
import type { Vocabulary } from '../vocab/index.ts';
import type { DeepStart, WalkContext } from './context.ts';
import { MAX_LE, wMinAccept, wStep, type ClassTables } from './class-tables.ts';
import type { VocabTables } from './vocab-tables.ts';

/** The frame standing for "the rest of the stack" while a kept mask is computed. */
export const SENTINEL = new Frame(-1, null, null, 0);

/**
 * What the walker asks of the kept masks (kept.ts). Each method writes the kept part of a
 * position into the live context and walks its pop points with the real stack below, returning
 * true; or returns false, writing nothing, when the kept mask does not fit the limit (the walker
 * then walks the position itself). Positions here have no variables in scope (env null).
 */
export interface KeptMaskSource {
  /** a BETWEEN position at the trie root */
  between(ctx: WalkContext, node: number, frames: Frame | null): boolean;
  /** a token-class lexeme at DFA state d whose continuation is `node` with `frames` */
  lexeme(ctx: WalkContext, tables: ClassTables, node: number, d: number, frames: Frame | null): boolean;
  /** a BETWEEN position below trie node x ≠ root */
  below(ctx: WalkContext, x: number, node: number, frames: Frame | null): boolean;
}

/**
 * The product of the token trie below a node x and a names automaton from state s, in depth-first
 * preorder: pair i is (nodes[i], states[i]) with states[i] ≠ dead, and skip[i] is the index just
 * past its subtree. Memory: three Int32 per pair.
 */
interface NameWalk {
  readonly nodes: Int32Array;
  readonly states: Int32Array;
  readonly skip: Int32Array;
}

export class TrieWalker implements LevelVisitor<WalkContext> {
  /** kept masks, when the grammar allows them (no variables); set once by the constraint */
  kept: KeptMaskSource | null = null;
  /** per (names terminal, trie node, state): its NameWalk */
  private readonly nameWalks = new Map<number, NameWalk>();
  private readonly a: Automaton;
  private readonly rtn: Rtn;
  private readonly byte: Uint8Array;
  private readonly end: Uint32Array;

  constructor(
    readonly pda: AutomatonInstance,
    readonly vt: VocabTables,
    /** per token class index: its tables, or null when no `class` terminal uses it */
    readonly classes: readonly (ClassTables | null)[],
    private readonly vocab: Vocabulary,
  ) {
    this.a = pda.automaton;
    this.rtn = pda.automaton.rtn;
    this.byte = vt.trie.byte;
    this.end = vt.trie.end;
  }

  /** Marks the tokens one thread can read next. */
  maskThread(ctx: WalkContext, th: Thread): void {
    const pda = this.pda;
    ctx.res = th.res;
    ctx.kin = th.kin;
    if (th.term < 0) {
      this.maskBetween(ctx, th.node, th.frames, th.env);
      return;
    }
    const t = this.rtn.terminals[th.term];
    if (t.kind === 'class') {
      // a class lexeme never binds a variable: the continuation is (node, frames, env) as is
      const tables = this.classes[t.tokenClass]!;
      const d = th.lex;
      if (this.kept !== null && ctx.live && th.env === null && this.kept.lexeme(ctx, tables, th.node, d, th.frames)) return;
      const rest = pda.betweenDist(th.node, th.env, th.frames) + pda.penaltyAt(th.res, th.node, th.frames);
      this.orInside(ctx, tables, d, ctx.lim - rest, false);
      const ex = tables.exits[d];
      for (let i = 0; i < ex.length; i++) this.walkBetween(ctx, ex[i], th.node, th.frames, th.env);
      if (t.dfa.accept[d]) this.maskBetween(ctx, th.node, th.frames, th.env);
      return;
    }
    // literals, names, variables: the end of the lexeme here is a BETWEEN mask at the root;
    // continuing the lexeme is a (short) walk.
    if (pda.lexAccepting(th)) {
      ctx.res = pda.resAfterLexeme(th);
      ctx.kin = pda.kinAfterLexeme(th);
      this.maskBetween(ctx, th.node, th.frames, pda.envAfterLexeme(th));
      ctx.res = th.res;
      ctx.kin = th.kin;
    }
    if (t.kind === 'lit' || t.kind === 'names') {
      let filter = t.kind === 'names' ? pda.roleFilter(th.node, th.res, th.frames) : null;
      let far = filter === null ? null : pda.roleFar(th.node, th.res, th.frames);
      if (filter === null && t.kind === 'names' && th.kin !== null) {
        // kinds: a role filter and a kind filter never meet on one field (KindPlan refuses it)
        const kf = pda.kinFilter(th.node, th.kin, th.frames, th.env);
        if (kf !== null) {
          filter = kf.bits;
          far = kf.far;
        }
      }
      const rest = pda.betweenDist(th.node, th.env, th.frames) + (far === null ? pda.penaltyAt(th.res, th.node, th.frames) : 0);
      this.walkLex(ctx, 0, th.term, th.node, -1, th.frames, th.env, th.lex, rest, filter, far);
      return;
    }
    const { byte, end } = this;
    for (let c = 1; c < this.vt.trie.nodeCount; c = end[c]) {
      const t2 = pda.stepLex(th, byte[c]);
      if (t2 === null) continue;
      ctx.markNode(c, pda.threadDist(t2, WORD[byte[c]] === 1));
      if (end[c] > c + 1) this.walkGeneric(ctx, c, t2);
    }
  }

  /** Marks the tokens a BETWEEN position (node, frames, env) can read from the trie root. */
  maskBetween(ctx: WalkContext, node: number, frames: Frame | null, env: Env | null): void {
    const deferred = ctx.defer === 2 && ctx.origin;
    if (!deferred && this.kept !== null && ctx.live && this.kept.between(ctx, node, frames)) return;
    const dist = this.pda.betweenDist(node, env, frames, false) + this.pda.penaltyAt(ctx.res, node, frames); // after a space
    if (dist <= ctx.lim && !deferred) {
      if (dist > ctx.maxSeen) ctx.maxSeen = dist;
      ctx.markIds(this.vt.wsTokenIds);
    }
    // the deferred pass of a kept mask visits the position's own level only (kept.ts walked the rest)
    if (this.a.forEachLevel(this, ctx, 0, node, frames, env, deferred ? frames : SENTINEL) === LEVELS_STOP && !deferred) ctx.recordPop(0);
  }

  /**
   * The scope-sensitive options of the BETWEEN position (node, frames) from the trie root — the
   * part of its mask a kept mask leaves out at the position's own level (kept.ts); `x` ≠ 0: below
   * trie node x.
   */
  walkDeferred(ctx: WalkContext, x: number, node: number, frames: Frame | null): void {
    const d0 = ctx.defer;
    const o0 = ctx.origin;
    const f0 = ctx.deferFrames;
    ctx.defer = 2;
    ctx.origin = true;
    ctx.deferFrames = frames;
    if (x === 0) this.maskBetween(ctx, node, frames, null);
    else this.walkBetween(ctx, x, node, frames, null);
    ctx.defer = d0;
    ctx.origin = o0;
    ctx.deferFrames = f0;
  }

  /**
   * The scope-sensitive options a kept mask left out inside its tokens (DeepStart): for each
   * recorded level, the state after the option of the position's own level that leads there, the
   * level's frames rebuilt on the real stack `frames`, and only those options started at its trie
   * node. Frames pushed inside a token lie above the real stack, so no scope of `ctx.res` closes
   * on the way and non-sensitive options leave the scope state as it is.
   */
  walkDeepStarts(ctx: WalkContext, node: number, frames: Frame | null, starts: readonly DeepStart[]): void {
    const base = ctx.res!;
    const lr = this.pda.levelRes(base, node, frames);
    if (lr === null) return;
    const d0 = ctx.defer;
    const o0 = ctx.origin;
    const f0 = ctx.deferFrames;
    for (let i = 0; i < starts.length; i++) {
      const ds = starts[i];
      const info = this.pda.optionInfo(ds.origin, lr, frames);
      if (info.res === null) continue;
      let f: Frame | null;
      if (ds.base === frames && ds.frames !== null) f = ds.frames as Frame | null;
      else {
        f = this.pda.rebuildFrames(ds.rets, frames);
        ds.base = frames;
        ds.frames = f;
      }
      ctx.defer = 2;
      ctx.origin = true;
      ctx.deferFrames = f;
      ctx.res = info.res;
      this.visitLevel(ctx, ds.x, ds.node, f, null);
    }
    ctx.res = base;
    ctx.defer = d0;
    ctx.origin = o0;
    ctx.deferFrames = f0;
  }

  /** Option o is left out here: deferral of scope-sensitive options (WalkContext.defer). */
  private skipOption(ctx: WalkContext, o: number, frames: Frame | null): boolean {
    if (ctx.defer === 0) return false;
    const sens = this.a.optSensitive[o] === 1;
    if (ctx.origin && frames === ctx.deferFrames) return ctx.defer === 1 ? sens : !sens;
    if (ctx.defer === 1 && sens) {
      // inside a token: the level is recorded (visitLevel) and the live pass starts the option there
      if (ctx.curOrigin >= 0) ctx.skipHere = true;
      else ctx.unkeepable = true;
      return true;
    }
    return false;
  }

  /** Walks the children of trie node x ≠ root for a BETWEEN position (node, frames, env). */
  walkBetween(ctx: WalkContext, x: number, node: number, frames: Frame | null, env: Env | null): void {
    // below a non-root trie node the stack-independent part is kept per (RTN node, trie node)
    const deferred = ctx.defer === 2 && ctx.origin;
    if (!deferred && this.kept !== null && ctx.live && env === null && this.kept.below(ctx, x, node, frames)) return;
    const { byte, end, vt } = this;
    const space = this.rtn.space;
    const dist = this.pda.betweenDist(node, env, frames, false) + this.pda.penaltyAt(ctx.res, node, frames); // after a space
    let starts = true;
    if (vt.wide[x] >= 0) {
      const sp = vt.spaceBytes;
      for (let i = 0; i < sp.length; i++) {
        const c = vt.childOf(x, sp[i]);
        if (c < 0) continue;
        ctx.markNode(c, dist);
        if (end[c] > c + 1) this.walkBetween(ctx, c, node, frames, env);
      }
    } else {
      // a narrow node is scanned once here; its levels only when a child may start a terminal
      const pw = WORD[byte[x]] === 1;
      starts = false;
      for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
        const b = byte[c];
        if (space[b]) {
          ctx.markNode(c, dist);
          if (end[c] > c + 1) this.walkBetween(ctx, c, node, frames, env);
        } else if (!(pw && WORD[b])) starts = true;
      }
    }
    if (starts && this.a.forEachLevel(this, ctx, x, node, frames, env, deferred ? frames : SENTINEL) === LEVELS_STOP && !deferred) ctx.recordPop(x);
  }

  /**
   * One return level of a BETWEEN position, at trie node x: starts every viable terminal whose
   * first byte leads to a child of x. At the root (x = 0) token classes come from their tables and
   * the other terminals also start after "spaces" (wsChildren); the word rule uses the byte before
   * the token there, the byte of x elsewhere.
   */
  visitLevel(ctx: WalkContext, x: number, node: number, frames: Frame | null, env: Env | null): void {
    if (ctx.defer === 1) {
      // keep context: a level inside a token where a sensitive option is left out is recorded
      const saved = ctx.skipHere;
      ctx.skipHere = false;
      this.visitLevelRes(ctx, x, node, frames, env);
      if (ctx.skipHere) this.recordDeep(ctx, x, node, frames);
      ctx.skipHere = saved;
      return;
    }
    this.visitLevelRes(ctx, x, node, frames, env);
  }

  /** Records a deep start (WalkContext.recordDeep): the return nodes of `frames` above the stand-in frame. */
  private recordDeep(ctx: WalkContext, x: number, node: number, frames: Frame | null): void {
    let k = 0;
    for (let f = frames; f !== ctx.deferFrames; f = f.next) {
      if (f === null) {
        ctx.unkeepable = true; // not above the stand-in frame (cannot happen in a keep walk)
        return;
      }
      k++;
    }
    const rets = new Int32Array(k);
    let i = 0;
    for (let f = frames; f !== ctx.deferFrames; f = f!.next) rets[i++] = f!.ret;
    ctx.recordDeep(ctx.curOrigin, x, node, rets);
  }

  private visitLevelRes(ctx: WalkContext, x: number, node: number, frames: Frame | null, env: Env | null): void {
    const pda = this.pda;
    const base = ctx.res;
    if (base !== null) {
      // the scope state at this return level (scopes deeper than it close); walks of its options
      // run with their own states, and ctx.res is the base again for the next level
      const lr = pda.levelRes(base, node, frames);
      if (lr === null) return;
      ctx.res = lr;
      this.visitOptions(ctx, x, node, frames, env);
      ctx.res = base;
      return;
    }
    this.visitOptions(ctx, x, node, frames, env);
  }

  private visitOptions(ctx: WalkContext, x: number, node: number, frames: Frame | null, env: Env | null): void {
    const pda = this.pda;
    const vt = this.vt;
    const mode = env === null ? 0 : 1;
    if (x === 0) {
      const a = this.a;
      const space = this.rtn.space;
      const pw = ctx.rootPrevWord;
      const cls = pda.classOptions(node, mode);
      const lr = ctx.res;
      const lk = ctx.kin;
      const origin = ctx.origin;
      for (let i = 0; i < cls.length; i++) {
        const o = cls[i];
        if (this.skipOption(ctx, o, frames)) continue;
        let pen = 0;
        if (lr !== null) {
          const info = pda.optionInfo(o, lr, frames);
          if (info.res === null) continue;
          ctx.res = info.res;
          pen = info.pen;
        }
        if (lk !== null) {
          const ki = pda.kinOption(o, lk, frames, env);
          if (ki.kin === null) {
            ctx.res = lr;
            continue;
          }
          ctx.kin = ki.kin;
        }
        const cur = ctx.curOrigin;
        if (origin) ctx.curOrigin = o;
        ctx.origin = false;
        const tables = this.classes[this.rtn.terminals[a.optTerm[o]].tokenClass]!;
        const target = a.optTarget[o];
        const rest = pda.nodeDist(target, env) + pda.pushedRest(o, frames, env) + pen;
        this.orInside(ctx, tables, tables.w0, ctx.lim - rest, pw);
        // the lexeme ends inside a token at an exit: the walk continues with the pushed frames,
        // built only then
        const ex = tables.exits[tables.w0];
        let pushed: Frame | null | undefined;
        for (let j = 0; j < ex.length; j++) {
          const fb = vt.firstByte[ex[j]];
          if (pw && WORD[fb] && !space[fb]) continue;
          if (pushed === undefined) pushed = pda.pushFrames(o, frames, env);
          this.walkBetween(ctx, ex[j], target, pushed, env);
        }
        ctx.res = lr;
        ctx.kin = lk;
        ctx.origin = origin;
        ctx.curOrigin = cur;
      }
      const d = pda.dispatch(node, mode, true);
      const bytes = d.bytes;
      for (let i = 0; i < bytes.length; i++) {
        const b = bytes[i];
        if (!(pw && WORD[b])) {
          const c = vt.childOf(0, b);
          if (c >= 0) this.startTerminals(ctx, c, b, d, i, frames, env);
        }
        const more = vt.wsChildren[b];
        for (let j = 0; j < more.length; j++) this.startTerminals(ctx, more[j], b, d, i, frames, env);
      }
      return;
    }
    const d = pda.dispatch(node, mode, false);
    const { byte, end } = this;
    const pw = WORD[byte[x]] === 1;
    if (vt.wide[x] >= 0) {
      // wide node: look up the few bytes that can begin a terminal
      const bytes = d.bytes;
      for (let i = 0; i < bytes.length; i++) {
        const b = bytes[i];
        if (pw && WORD[b]) continue;
        const c = vt.childOf(x, b);
        if (c >= 0) this.startTerminals(ctx, c, b, d, i, frames, env);
      }
      return;
    }
    // narrow node: one pass over the children
    const space = this.rtn.space;
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const b = byte[c];
      if (space[b] || (pw && WORD[b])) continue;
      const i = d.index[b];
      if (i >= 0) this.startTerminals(ctx, c, b, d, i, frames, env);
    }
  }

  /** Starts every option of dispatch entry i at trie node c (byte b) and walks below c. */
  private startTerminals(ctx: WalkContext, c: number, b: number, d: Dispatch, i: number, frames: Frame | null, env: Env | null): void {
    const pda = this.pda;
    const a = this.a;
    const end = this.end;
    const lr = ctx.res;
    const lk = ctx.kin;
    const origin = ctx.origin;
    for (let k = d.off[i]; k < d.off[i + 1]; k++) {
      const o = d.opts[k];
      if (this.skipOption(ctx, o, frames)) continue;
      const term = a.optTerm[o];
      const s = pda.startLex(term, b, env);
      if (s === 0) continue;
      const kind = this.rtn.terminals[term].kind;
      const target = a.optTarget[o];
      let filter: Uint8Array | null = null;
      let far: Int32Array | null = null;
      let pen = 0;
      if (lr !== null) {
        const info = pda.optionInfo(o, lr, frames);
        if (info.res === null) continue;
        filter = info.filter;
        if (filter !== null && (filter[s] & LIVE) === 0) continue;
        far = info.far;
        pen = info.pen;
        ctx.res = info.res;
      }
      if (lk !== null) {
        const ki = pda.kinOption(o, lk, frames, env);
        if (ki.kin === null || (ki.filter !== null && (ki.filter[s] & LIVE) === 0)) {
          ctx.res = lr;
          continue;
        }
        // a role filter and a kind filter never meet on one field (KindPlan refuses it)
        if (ki.filter !== null) {
          filter = ki.filter;
          far = ki.far;
        }
        ctx.kin = ki.kin;
      }
      const cur = ctx.curOrigin;
      if (origin) ctx.curOrigin = o;
      ctx.origin = false;
      if (kind === 'lit' || kind === 'class' || kind === 'names') {
        const rest = pda.nodeDist(target, env) + pda.pushedRest(o, frames, env) + pen;
        ctx.markNode(c, (far === null ? pda.termDfa[term].minAccept[s] : far[s]) + rest);
        if (end[c] > c + 1) this.walkLex(ctx, c, term, target, o, frames, env, s, rest, filter, far);
      } else {
        const nt = new Thread(target, term, s, String.fromCharCode(b), pda.pushFrames(o, frames, env), env, ctx.res, ctx.kin);
        ctx.markNode(c, pda.threadDist(nt, WORD[b] === 1));
        if (end[c] > c + 1) this.walkGeneric(ctx, c, nt);
      }
      ctx.res = lr;
      ctx.kin = lk;
      ctx.origin = origin;
      ctx.curOrigin = cur;
    }
  }

  /**
   * Walks below x with a lit/class/names lexeme of terminal `term` in DFA state s, continuing at
   * RTN node `node` once it ends; `rest` = the completion after the lexeme. The stack then is
   * `frames` with the frames of option `o` pushed (o < 0: `frames` as is), built only when the
   * lexeme ends inside a token and the walk goes on below (distances come from `rest`).
   */
  private walkLex(ctx: WalkContext, x: number, term: number, node: number, o: number, frames: Frame | null, env: Env | null, s: number, rest: number, filter: Uint8Array | null, far: Int32Array | null = null): void {
    if (this.rtn.terminals[term].kind === 'names') {
      this.walkNames(ctx, x, term, node, o, frames, env, s, rest, filter, far);
      return;
    }
    const dfa = this.pda.termDfa[term];
    const { byte, end } = this;
    if (x !== 0 && dfa.accept[s] && end[x] > x + 1) this.lexEndsInside(ctx, x, node, o, frames, env, s, filter);
    const base = s * 256;
    if (this.rtn.terminals[term].kind !== 'class' && this.vt.wide[x] >= 0) {
      // literals and names continue with few bytes: look them up
      for (let b = 0; b < 256; b++) {
        const s2 = dfa.trans[base + b];
        if (s2 === 0 || (filter !== null && (filter[s2] & LIVE) === 0)) continue;
        const c = this.vt.childOf(x, b);
        if (c < 0) continue;
        ctx.markNode(c, (far === null ? dfa.minAccept[s2] : far[s2]) + rest);
        if (end[c] > c + 1) this.walkLex(ctx, c, term, node, o, frames, env, s2, rest, filter, far);
      }
      return;
    }
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const s2 = dfa.trans[base + byte[c]];
      if (s2 === 0 || (filter !== null && (filter[s2] & LIVE) === 0)) continue;
      ctx.markNode(c, (far === null ? dfa.minAccept[s2] : far[s2]) + rest);
      if (end[c] > c + 1) this.walkLex(ctx, c, term, node, o, frames, env, s2, rest, filter, far);
    }
  }

  /** The lexeme of a lit/names terminal ends inside the token at trie node x (state s): the walk goes on below x. */
  private lexEndsInside(ctx: WalkContext, x: number, node: number, o: number, frames: Frame | null, env: Env | null, s: number, filter: Uint8Array | null): void {
    if (filter !== null && (filter[s] & ALLOWED) === 0) return;
    // a name ends inside the token: the walk below goes on with the scope and kind states after it
    const r = ctx.res;
    const k = ctx.kin;
    if (r !== null && filter !== null && this.a.scopes.role[node] !== 0) {
      const set = this.a.scopes.roleSet[node];
      ctx.res = this.pda.scopes!.afterLexeme(r, node, this.pda.scopes!.member(set, s));
    }
    const pushed = o < 0 ? frames : this.pda.pushFrames(o, frames, env);
    if (k !== null && this.a.kinds.nodeSet[node] >= 0) ctx.kin = this.pda.kinds!.afterName(k, node, pushed === null ? 0 : pushed.depth, this.pda.kinds!.memberAt(node, s));
    if (ctx.kin !== null || k === null) this.walkBetween(ctx, x, node, pushed, env);
    ctx.res = r;
    ctx.kin = k;
  }

  /**
   * `walkLex` for a name-set terminal: the pairs (trie node, names-automaton state) below (x, s)
   * are the same for every mask of this binding, so they are listed once (NameWalk) and each walk
   * is one pass over the list, skipping the subtrees whose state the filter rules out.
   */
  private walkNames(ctx: WalkContext, x: number, term: number, node: number, o: number, frames: Frame | null, env: Env | null, s: number, rest: number, filter: Uint8Array | null, far: Int32Array | null): void {
    const dfa = this.pda.termDfa[term];
    const end = this.end;
    if (x !== 0 && dfa.accept[s] && end[x] > x + 1) this.lexEndsInside(ctx, x, node, o, frames, env, s, filter);
    const w = this.nameWalk(term, x, s);
    const { nodes, states, skip } = w;
    const accept = dfa.accept;
    const minAccept = dfa.minAccept;
    for (let i = 0; i < nodes.length; ) {
      const s2 = states[i];
      if (filter !== null && (filter[s2] & LIVE) === 0) {
        i = skip[i];
        continue;
      }
      const c = nodes[i];
      ctx.markNode(c, (far === null ? minAccept[s2] : far[s2]) + rest);
      if (accept[s2] && end[c] > c + 1) this.lexEndsInside(ctx, c, node, o, frames, env, s2, filter);
      i++;
    }
  }

  /** The NameWalk of (terminal, trie node x, state s), built on first use and kept (per binding: the walker's). */
  private nameWalk(term: number, x: number, s: number): NameWalk {
    const dfa = this.pda.termDfa[term];
    const key = (term * this.vt.trie.nodeCount + x) * dfa.stateCount + s;
    const hit = this.nameWalks.get(key);
    if (hit !== undefined) return hit;
    const { byte, end } = this;
    const trans = dfa.trans;
    const nodes: number[] = [];
    const states: number[] = [];
    const skip: number[] = [];
    const visit = (x: number, s: number): void => {
      const base = s * 256;
      for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
        const s2 = trans[base + byte[c]];
        if (s2 === 0) continue;
        const i = nodes.length;
        nodes.push(c);
        states.push(s2);
        skip.push(0);
        if (end[c] > c + 1) visit(c, s2);
        skip[i] = nodes.length;
      }
    };
    visit(x, s);
    const w: NameWalk = { nodes: Int32Array.from(nodes), states: Int32Array.from(states), skip: Int32Array.from(skip) };
    this.nameWalks.set(key, w);
    return w;
  }

  /** Walks below x with any thread, stepping it byte by byte (names, variables). */
  private walkGeneric(ctx: WalkContext, x: number, th: Thread): void {
    const pda = this.pda;
    const { byte, end } = this;
    const pw = x === 0 ? ctx.rootPrevWord : WORD[byte[x]] === 1;
    const scratch = ctx.threads;
    for (let c = x + 1, stop = end[x]; c < stop; c = end[c]) {
      const base = scratch.length;
      pda.stepThread(th, byte[c], pw, scratch);
      const top = scratch.length;
      for (let i = base; i < top; i++) {
        const t2 = scratch[i];
        ctx.markNode(c, pda.threadDist(t2, WORD[byte[c]] === 1));
        if (end[c] > c + 1) this.walkGeneric(ctx, c, t2);
      }
      scratch.length = base;
    }
  }

  /** OR inside[d] (or the budget level) into the mask; `noWordStart` removes word-start tokens. */
  orInside(ctx: WalkContext, tables: ClassTables, d: number, room: number, noWordStart: boolean): void {
    if (room < 0) return;
    const km = tables.kmax[d];
    let src: Uint32Array;
    if (room >= km) src = tables.inside[d];
    else if (room < MAX_LE) src = tables.le[d][room];
    else {
      this.orInsideSlow(ctx, tables, d, room, noWordStart);
      return;
    }
    const top = room >= km ? km : room;
    if (top + ctx.lim - room > ctx.maxSeen) ctx.maxSeen = top + ctx.lim - room;
    ctx.orBits(src, noWordStart);
  }

  /** inside[d] token by token: the budget level is beyond the kept levels (room ≥ MAX_LE). */
  private orInsideSlow(ctx: WalkContext, tables: ClassTables, d: number, room: number, noWordStart: boolean): void {
    const v = this.vocab;
    const src = tables.inside[d];
    const ws = this.vt.wordStart;
    const mask = ctx.mask;
    for (let w = 0; w < src.length; w++) {
      let word = src[w];
      while (word !== 0) {
        const low = word & -word;
        const id = (w << 5) + (31 - Math.clz32(low));
        word ^= low;
        if (noWordStart && (ws[w] & low) !== 0) continue;
        let s = d;
        for (let i = v.offsets[id]; i < v.offsets[id + 1] && s !== 0; i++) s = wStep(tables, s, v.bytes[i]);
        if (s !== 0 && wMinAccept(tables, s) <= room) mask[w] |= low;
      }
    }
  }
}
