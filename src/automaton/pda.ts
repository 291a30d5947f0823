/**
 * The pushdown automaton over bytes: an immutable compiled network (`Automaton`), a per-binding
 * layer (`AutomatonInstance`: name-set tries, liveness and shortest-completion tables under the bound names),
 * and persistent runtime states.
 *
 * Runtime state (`PdaState`) = a set of threads + whether the last byte was a word character.
 * A thread is one parse of the text so far:
 * - BETWEEN (term = -1): the text so far ends after a complete terminal (or at the start); `node`
 *   is the RTN node reached; any run of space characters may follow.
 * - LEX (term ≥ 0): inside a lexeme of terminal `term`; `lex` is the lexeme automaton's state
 *   (DFA state for lit/class/names/newvar — names use the bound members' DFA; boundvar keeps `text`); `node` is the RTN
 *   node reached once the lexeme ends.
 * `frames` is the call stack as shared immutable linked frames (return node + the caller's scope),
 * `env` the variables in scope (an immutable linked list). Advancing builds new threads and shares
 * every frame, so forking a state is sharing a reference and rollback is keeping the old state.
 *
 * Invariants (established by construction, relied on by the masks):
 * - Every thread of a state is viable: it has a completion under the bound names (options and
 *   pushed frames are filtered by the liveness tables of `AutomatonInstance`, computed per mode: with no
 *   variable in scope a `bound` field is dead, with some it is live).
 * - A state with no thread is dead; `viable(state)` is one comparison (threads.length !== 0).
 * - The word-boundary rule: a terminal may start with a word byte only if the previous byte was
 *   not a word byte (a space between two tokens resets it).
 */
import type { Grammar, NameBindings } from '../description/ir.ts';
import { AutomatonError, buildRtn, closures, EDGE_EPS, EDGE_TERM, type Option, type Rtn } from './cfg.ts';
import { runDfa, type ByteDfa, type NamesDfa } from './regex.ts';
import { ALLOWED, LIVE, ROLE_NONE, ScopeBinding, ScopePlan, type OptionInfo, type Res } from './scopes.ts';
import { KindBinding, KindPlan, type Kin, type KindOption } from './kinds.ts';

export const INF = 0x3fffffff;

/** Word characters for the word-boundary rule: [A-Za-z0-9_]. */
export const WORD = new Uint8Array(256);
for (let c = 0; c < 256; c++) {
  WORD[c] = (c >= 48 && c <= 57) || (c >= 65 && c <= 90) || (c >= 97 && c <= 122) || c === 95 ? 1 : 0;
}

export class Env {
  constructor(
    readonly name: string, // lexeme bytes as a latin1 string
    readonly next: Env | null,
    readonly minLen: number,
    /** the variable's kind class in the thread's Kin (kinds.ts), -1 without kinds */
    readonly kv = -1,
  ) {}
  static add(env: Env | null, name: string, kv = -1): Env {
    return new Env(name, env, env === null ? name.length : Math.min(env.minLen, name.length), kv);
  }
}

export class Frame {
  constructor(
    readonly ret: number,
    readonly env: Env | null,
    readonly next: Frame | null,
    /** shortest completion (bytes, upper bound) of this frame and all below it */
    readonly rest: number,
    /** the first terminal of that completion starts with a word byte (its separating space is counted) */
    readonly restFirstWord = false,
    /**
     * `ret` and every frame below can return by empty moves (`Automaton.canPop`), so a position
     * over this stack may end the program iff its own node can pop: `canFinish` in O(1) at any depth
     */
    readonly finishes = false,
  ) {
    this.depth = next === null ? 1 : next.depth + 1;
  }
  /** frames in this stack (1 for a frame with nothing below): name scopes close by depth */
  readonly depth: number;
}

export class Thread {
  constructor(
    readonly node: number,
    readonly term: number,
    readonly lex: number,
    readonly text: string,
    readonly frames: Frame | null,
    readonly env: Env | null,
    /** the name scopes (scopes.ts); null when the grammar has none */
    readonly res: Res | null = null,
    /** the kinds (kinds.ts); null when the grammar has none enforced */
    readonly kin: Kin | null = null,
  ) {}
}

/**
 * How a walk over return levels ended (see `Automaton.forEachLevel`):
 * - LEVELS_BLOCKED: the last level's node cannot reach its nonterminal's end by empty moves;
 * - LEVELS_END: every frame returned and the last node may end: the program may end here;
 * - LEVELS_STOP: the next frame to return to is the caller's `stop` frame (not visited).
 */
export const LEVELS_BLOCKED = 0;
export const LEVELS_END = 1;
export const LEVELS_STOP = 2;
export type LevelsEnd = typeof LEVELS_BLOCKED | typeof LEVELS_END | typeof LEVELS_STOP;

/**
 * The body of a walk over return levels. `c` and `arg` are the caller's (e.g. the output list and
 * the byte read, or a walk context and a trie node), passed through unchanged, so a visitor is a
 * long-lived object and a walk allocates nothing.
 */
export interface LevelVisitor<C> {
  visitLevel(c: C, arg: number, node: number, frames: Frame | null, env: Env | null): void;
}

/** Options grouped by first byte: options for bytes[i] are opts[off[i] .. off[i+1]). */
export interface Dispatch {
  readonly bytes: Uint8Array;
  readonly off: Int32Array;
  readonly opts: Int32Array;
  /** byte → i with bytes[i] = byte, or -1 */
  readonly index: Int16Array;
}

export interface PdaState {
  readonly threads: readonly Thread[];
  readonly prevWord: boolean;
  /** the state before the last advance (rollback), null at the start */
  readonly prev: PdaState | null;
}

/** The compiled, immutable automaton of a grammar (independent of names and vocabulary). */
export class Automaton {
  readonly rtn: Rtn;
  /** flattened options: node n's options are [optStart[n], optStart[n+1]) */
  readonly optStart: Int32Array;
  readonly optTerm: Int32Array;
  readonly optTarget: Int32Array;
  readonly optPush: readonly Int32Array[];
  readonly canPop: Uint8Array;
  /** the start sort's entry node (BETWEEN thread of the start state) */
  readonly startNode: number;
  /** name scopes: roles of terminal edges, scope nonterminals, introduction windows */
  readonly scopes: ScopePlan;
  /** per option: the push positions i (1-based: the i-th nonterminal entered) that open a scope, or null */
  readonly optOpens: readonly (Int32Array | null)[];
  /**
   * per option: 1 when its effect on name scopes depends on the scope state — it reads a role name,
   * opens a scope, or changes how many introductions the position still allows (e.g. WHERE ends a
   * query's FROM/JOIN list) — so kept masks leave it to the live walk (masks/kept.ts)
   */
  readonly optSensitive: Uint8Array;
  /** kinds: record layouts and clause pairs per constructor (`kinds.active` false: none enforced) */
  readonly kinds: KindPlan;

  /** `dfas`: precompiled class DFAs (by class index), e.g. from the mask cache. */
  constructor(readonly grammar: Grammar, dfas?: readonly ByteDfa[]) {
    this.rtn = buildRtn(grammar, dfas);
    const { options, canPop } = closures(this.rtn, grammar);
    this.canPop = canPop;
    const n = options.length;
    this.optStart = new Int32Array(n + 1);
    const all: Option[] = [];
    for (let i = 0; i < n; i++) {
      this.optStart[i] = all.length;
      all.push(...options[i]);
    }
    this.optStart[n] = all.length;
    this.optTerm = Int32Array.from(all.map((o) => o.term));
    this.optTarget = Int32Array.from(all.map((o) => o.target));
    this.optPush = all.map((o) => o.push);
    this.startNode = this.rtn.nts[this.rtn.startNt].start;
    this.scopes = new ScopePlan(grammar, this.rtn);
    this.kinds = new KindPlan(grammar, this.rtn, this.scopes.role);
    const nodeNt = this.rtn.nodeNt;
    this.optOpens = this.optPush.map((push, o) => {
      if (!this.scopes.active) return null;
      const out: number[] = [];
      for (let i = 1; i <= push.length; i++) {
        const nt = nodeNt[i < push.length ? push[i] : this.optTarget[o]];
        if (this.scopes.scopeNt[nt]) out.push(i);
      }
      return out.length === 0 ? null : Int32Array.from(out);
    });
    this.optSensitive = new Uint8Array(this.optTerm.length);
    if (this.scopes.active) {
      const plan = this.scopes;
      const CAP = 3;
      for (let n = 0; n + 1 < this.optStart.length; n++) {
        for (let o = this.optStart[n]; o < this.optStart[n + 1]; o++) {
          const target = this.optTarget[o];
          const push = this.optPush[o];
          let sens = plan.role[target] !== 0 || this.optOpens[o] !== null;
          for (let sl = 0; sl < plan.introSets.length && !sens; sl++) {
            const mi = plan.minIntro[sl];
            const ma = plan.maxIntro[sl];
            let lo = mi[target];
            let hi = ma[target];
            for (let j = 0; j < push.length; j++) {
              lo += mi[push[j]];
              hi += ma[push[j]];
            }
            if (lo !== mi[n] || Math.min(hi, CAP) !== Math.min(ma[n], CAP)) sens = true;
          }
          if (sens) this.optSensitive[o] = 1;
        }
      }
    }
  }

  /**
   * The return levels of a BETWEEN position, in order: (node, frames, env) itself, then — while the
   * level's node can reach its nonterminal's end by empty moves (`canPop`) and a frame is left —
   * the frame it returns to (ret, next, the frame's env). `v.visitLevel(c, arg, …)` is called for
   * each; the result says why the walk stopped. This is the one frame-pop loop: the automaton's
   * byte step, its completeness test and the mask walkers (src/masks/walk.ts) all go through it.
   */
  forEachLevel<C>(v: LevelVisitor<C>, c: C, arg: number, node: number, frames: Frame | null, env: Env | null, stop: Frame | null): LevelsEnd {
    const canPop = this.canPop;
    for (;;) {
      v.visitLevel(c, arg, node, frames, env);
      if (canPop[node] === 0) return LEVELS_BLOCKED;
      if (frames === null) return LEVELS_END;
      if (frames === stop) return LEVELS_STOP;
      node = frames.ret;
      env = frames.env;
      frames = frames.next;
    }
  }

  /** Binds open name sets (and checks them); cheap: no vocabulary work. */
  bind(names: NameBindings): AutomatonInstance {
    return new AutomatonInstance(this, names);
  }
}

/** Most trie nodes a bound name set may have (its DFA table is dense: 1 KiB per node). */
export const MAX_NAME_NODES = 65536;

/**
 * A finite set of byte strings (name-set members) as a byte DFA: the members' trie with state 1 the
 * root and 0 dead (same numbering invariant as regex.ts), so masks treat names like literals.
 * A child's state is always larger than its parent's. Also kept, for name scopes: per state the
 * first member that ends there (`memberAt`, -1) and its parent state (`parent`), and the longest
 * member. Built in one pass over the members' bytes into a dense table grown by doubling.
 */
export function namesDfa(members: readonly Uint8Array[], setName: string): NamesDfa {
  // dense table grown by doubling (at most twice the final size is ever copied)
  let total = 2;
  for (let i = 0; i < members.length; i++) total += members[i].length;
  let cap = Math.max(16, Math.min(total, 1024));
  let trans = new Int32Array(cap * 256);
  let parent = new Int32Array(cap);
  let at = new Int32Array(cap).fill(-1);
  let next = 2;
  let shortest: Uint8Array | null = null;
  let longest = 0;
  let longestWord = false;
  for (let id = 0; id < members.length; id++) {
    const m = members[id];
    let n = 1;
    for (let i = 0; i < m.length; i++) {
      const k = n * 256 + m[i];
      let c = trans[k];
      if (c === 0) {
        c = next++;
        if (c > MAX_NAME_NODES) throw new BindError(`names.${setName}: the members need more than ${MAX_NAME_NODES} trie nodes; expected a smaller name set`);
        if (c >= cap) {
          cap *= 2;
          const t2 = new Int32Array(cap * 256);
          t2.set(trans);
          trans = t2;
          const p2 = new Int32Array(cap);
          p2.set(parent);
          parent = p2;
          const a2 = new Int32Array(cap).fill(-1);
          a2.set(at);
          at = a2;
        }
        trans[k] = c;
        parent[c] = n;
      }
      n = c;
    }
    if (at[n] < 0) at[n] = id;
    if (shortest === null || m.length < shortest.length) shortest = m;
    if (m.length > longest) {
      longest = m.length;
      longestWord = WORD[m[0]] === 1;
    }
  }
  const count = next;
  const accept = new Uint8Array(count);
  const minAccept = new Int32Array(count).fill(INF);
  for (let n = 1; n < count; n++) {
    if (at[n] >= 0) {
      accept[n] = 1;
      minAccept[n] = 0;
    }
  }
  // children come after their parent: one backward pass settles every shortest completion
  for (let n = count - 1; n >= 2; n--) if (minAccept[n] < INF && minAccept[n] + 1 < minAccept[parent[n]]) minAccept[parent[n]] = minAccept[n] + 1;
  return {
    stateCount: count,
    start: members.length > 0 ? 1 : 0,
    // a view when little is wasted, else a copy (the table is 1 KiB per state)
    trans: cap * 4 <= count * 5 ? trans.subarray(0, count * 256) : trans.slice(0, count * 256),
    accept,
    minAccept,
    shortest,
    memberAt: at.slice(0, count),
    parent: parent.slice(0, count),
    longest,
    longestWord,
  };
}

export class BindError extends Error {}

const utf8 = new TextEncoder();

/**
 * UTF-8 bytes of a name: ASCII by a plain loop (names are mostly ASCII, and binding a schema
 * encodes thousands of them; TextEncoder's per-call cost dominated), anything else by TextEncoder.
 */
function nameBytes(m: string): Uint8Array {
  const n = m.length;
  const out = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const c = m.charCodeAt(i);
    if (c >= 0x80) return utf8.encode(m);
    out[i] = c;
  }
  return out;
}

/**
 * The automaton under one binding of the open name sets. Holds the liveness and distance tables;
 * creates and advances runtime states. Immutable after construction.
 */
export class AutomatonInstance {
  /** per terminal: its lexeme DFA under this binding (name sets: the members' DFA) */
  readonly termDfa: readonly ByteDfa[];
  /** option viability per mode: [0] no variable in scope, [1] some variable in scope */
  readonly optOk: [Uint8Array, Uint8Array];
  /** shortest completion of a node to its nonterminal's end: mode 0 (bytes) */
  readonly dist0: Int32Array;
  /** mode 1: bytes excluding bound-variable lexemes (a) + number of bound-variable lexemes (k) */
  readonly dist1a: Int32Array;
  readonly dist1k: Int32Array;
  /** per node and mode: the chosen shortest completion begins with a word-start terminal */
  readonly firstWord0: Uint8Array;
  readonly firstWord1: Uint8Array;
  /** shortest lexeme length of the classes used by `new` fields (for mode 0 → 1 after a binding) */
  readonly newVarLen: number;
  readonly termCost: Int32Array;
  readonly start: PdaState;
  /** name scopes under this binding; null when the grammar has none */
  readonly scopes: ScopeBinding | null;
  /** kinds under this binding; null when the grammar has none enforced */
  readonly kinds: KindBinding | null;
  /** scratch for window computations (two numbers) */
  private readonly win = new Int32Array(2);

  constructor(readonly automaton: Automaton, names: NameBindings) {
    const g = automaton.grammar;
    const rtn = automaton.rtn;
    for (const key of Object.keys(names)) {
      if (!g.nameSets.some((s) => s.name === key)) {
        throw new BindError(`names: ${JSON.stringify(key)} is not a name set of grammar ${g.name}; expected one of ${g.nameSets.map((s) => s.name).join(', ') || '(none)'}`);
      }
    }
    const sets = g.nameSets.map((s) => {
      const members = names[s.name];
      if (members === undefined) return null;
      if (!Array.isArray(members)) throw new BindError(`names.${s.name}: expected an array of strings`);
      const cls = g.tokens.find((t) => t.name === s.token)!;
      const dfa = rtn.terminals.find((t) => t.tokenClass === cls.index && t.kind !== 'lit')?.dfa;
      const bytes = members.map((m, i) => {
        if (typeof m !== 'string') throw new BindError(`names.${s.name}[${i}]: expected a string`);
        const b = nameBytes(m);
        if (dfa && !dfa.accept[runDfa(dfa, dfa.start, b)]) {
          throw new BindError(`names.${s.name}[${i}]: ${JSON.stringify(m)} is not a lexeme of token class ${cls.name} (/${cls.pattern}/${cls.reserved ? ', reserved: keywords excluded' : ''})`);
        }
        return b;
      });
      return namesDfa(bytes, s.name);
    });
    // unbound sets that the grammar uses are an error
    for (const t of rtn.terminals) {
      if (t.kind === 'names' && sets[t.nameSet] === null) {
        throw new BindError(`names: the name set ${t.name} is not bound; expected a list of ${g.nameSets[t.nameSet].token} lexemes for it (--names FILE with {"${t.name}": [...]} or --db FILE)`);
      }
    }
    this.termDfa = rtn.terminals.map((t) => (t.kind === 'names' ? sets[t.nameSet]! : t.dfa));
    let nv = INF;
    for (const t of rtn.terminals) if (t.kind === 'newvar' && t.dfa.shortest) nv = Math.min(nv, t.dfa.shortest.length);
    this.newVarLen = nv === INF ? 1 : nv;
    // terminal costs: shortest lexeme + 1 when it starts with a word byte (a separating space)
    const termCost = new Int32Array(rtn.terminals.length);
    for (const t of rtn.terminals) {
      let s: string | null = null;
      const dfa = this.termDfa[t.index];
      if (t.kind === 'boundvar') s = '';
      else s = dfa.shortest ? Buffer.from(dfa.shortest).toString('latin1') : null;
      termCost[t.index] = s === null ? INF : t.kind === 'boundvar' ? 1 : s.length + (s.length > 0 && WORD[s.charCodeAt(0)] ? 1 : 0);
    }
    // names read by scope roles count their longest member: which member resolves is known only
    // at run time, so the shortest one would not be an achievable bound (docs/design/scope-masks.md)
    if (automaton.scopes.active) {
      const plan = automaton.scopes;
      for (let node = 0; node < plan.role.length; node++) {
        if (plan.role[node] === 0) continue;
        const set = plan.roleSet[node];
        const term = rtn.terminals.find((t) => t.kind === 'names' && t.nameSet === set);
        const members = names[g.nameSets[set].name];
        if (term === undefined || members === undefined || members.length === 0) continue;
        const d = sets[set]!;
        const longest = d.longest;
        const word = d.longestWord;
        termCost[term.index] = longest + (word ? 1 : 0);
      }
    }
    // names whose members carry kinds count their longest member too: which member agrees with
    // the kinds read so far is known only at run time (docs/design/scopes-and-kinds.md)
    if (automaton.kinds.active) {
      for (const t of rtn.terminals) {
        if (t.kind !== 'names' || g.nameSets[t.nameSet].slots.length === 0) continue;
        const members = names[g.nameSets[t.nameSet].name];
        if (members === undefined || members.length === 0) continue;
        let longest = 0;
        let word = false;
        for (const m of members) {
          const b = utf8.encode(m);
          if (b.length > longest) {
            longest = b.length;
            word = WORD[b[0]] === 1;
          }
        }
        termCost[t.index] = Math.max(termCost[t.index], longest + (word ? 1 : 0));
      }
    }
    this.termCost = termCost;
    const n = rtn.nodeNt.length;
    const dist0 = new Int32Array(n).fill(INF);
    const d1a = new Int32Array(n).fill(INF);
    const d1k = new Int32Array(n).fill(0);
    const w = 1 + this.newVarLen;
    const v1 = (i: number) => (d1a[i] >= INF ? INF : d1a[i] + d1k[i] * w);
    // first terminal of the chosen shortest path starts with a word byte (mode 0 / mode 1)
    const fw0 = new Uint8Array(n);
    const fw1 = new Uint8Array(n);
    const termWord = new Uint8Array(rtn.terminals.length);
    for (const t of rtn.terminals) {
      const sh = this.termDfa[t.index].shortest;
      termWord[t.index] = sh !== null && sh.length > 0 && WORD[sh[0]] ? 1 : 0;
    }
    for (const nt of rtn.nts) {
      dist0[nt.final] = 0;
      d1a[nt.final] = 0;
    }
    for (let changed = true; changed; ) {
      changed = false;
      for (let m = n - 1; m >= 0; m--) {
        for (let e = rtn.edgeStart[m]; e < rtn.edgeStart[m + 1]; e++) {
          const to = rtn.edgeTo[e];
          const kind = rtn.edgeKind[e];
          let c0 = INF;
          let c1a = INF;
          let c1k = 0;
          let f0 = 0;
          let f1 = 0;
          if (kind === EDGE_EPS) {
            c0 = dist0[to];
            c1a = d1a[to];
            c1k = d1k[to];
            f0 = fw0[to];
            f1 = fw1[to];
          } else if (kind === EDGE_TERM) {
            const t = rtn.terminals[rtn.edgeArg[e]];
            f0 = f1 = termWord[t.index];
            const tc = termCost[t.index];
            if (t.kind === 'boundvar') {
              if (d1a[to] < INF) {
                c1a = d1a[to];
                c1k = 1 + d1k[to];
              }
            } else if (tc < INF) {
              if (t.kind === 'newvar') {
                if (d1a[to] < INF) c0 = tc + v1(to);
              } else if (dist0[to] < INF) c0 = tc + dist0[to];
              if (d1a[to] < INF) {
                c1a = tc + d1a[to];
                c1k = d1k[to];
              }
            }
          } else {
            const st = rtn.nts[rtn.edgeArg[e]].start;
            f0 = dist0[st] > 0 ? fw0[st] : fw0[to];
            f1 = d1a[st] + d1k[st] > 0 ? fw1[st] : fw1[to];
            if (dist0[st] < INF && dist0[to] < INF) c0 = dist0[st] + dist0[to];
            if (d1a[st] < INF && d1a[to] < INF) {
              c1a = d1a[st] + d1a[to];
              c1k = d1k[st] + d1k[to];
            }
          }
          // ties prefer a path that starts with a word-start terminal: its space is the one a
          // preceding space makes unnecessary (betweenDist with prevWord false)
          if (c0 < dist0[m] || (c0 < INF && c0 === dist0[m] && f0 > fw0[m])) {
            dist0[m] = c0;
            fw0[m] = f0;
            changed = true;
          }
          if (c1a < INF && (c1a + c1k * w < v1(m) || (c1a + c1k * w === v1(m) && f1 > fw1[m]))) {
            d1a[m] = c1a;
            d1k[m] = c1k;
            fw1[m] = f1;
            changed = true;
          }
        }
      }
    }
    this.dist0 = dist0;
    this.firstWord0 = fw0;
    this.firstWord1 = fw1;
    this.dist1a = d1a;
    this.dist1k = d1k;
    const nOpt = automaton.optTerm.length;
    const ok0 = new Uint8Array(nOpt);
    const ok1 = new Uint8Array(nOpt);
    for (let o = 0; o < nOpt; o++) {
      const t = rtn.terminals[automaton.optTerm[o]];
      const target = automaton.optTarget[o];
      const push = automaton.optPush[o];
      if (termCost[t.index] >= INF) continue;
      let p0 = true;
      let p1 = true;
      for (const r of push) {
        if (dist0[r] >= INF) p0 = false;
        if (d1a[r] >= INF) p1 = false;
      }
      const t0 = t.kind === 'boundvar' ? false : t.kind === 'newvar' ? d1a[target] < INF : dist0[target] < INF;
      const t1 = d1a[target] < INF;
      ok0[o] = p0 && t0 ? 1 : 0;
      ok1[o] = p1 && t1 ? 1 : 0;
    }
    this.optOk = [ok0, ok1];
    if (dist0[automaton.startNode] >= INF) {
      throw new BindError(`names: no program of grammar ${g.name} can be written with the bound names (${g.nameSets.map((s) => `${s.name}: ${names[s.name]?.length ?? 0}`).join(', ')}); expected non-empty name sets where the start sort needs them`);
    }
    this.scopes = automaton.scopes.active ? new ScopeBinding(automaton.scopes, names, sets, dist0, termCost) : null;
    this.kinds = automaton.kinds.active ? new KindBinding(automaton.kinds, rtn.nodeNt, names, sets) : null;
    this.start = {
      threads: [new Thread(automaton.startNode, -1, 0, '', null, null, this.scopes === null ? null : this.scopes.root, this.kinds === null ? null : this.kinds.root)],
      prevWord: false,
      prev: null,
    };
  }

  /** The scope state for a return level on `frames` of a thread whose state is `res` (null: a scope cannot close). */
  levelRes(res: Res, node: number, frames: Frame | null): Res | null {
    const sc = this.scopes!;
    const r = sc.atDepth(res, frames === null ? 0 : frames.depth);
    if (r === null || r === res) return r;
    // references moved out of closed scopes: the enclosing ones must still resolve from here
    return sc.feasibleAt(r, node, frames, this.win) ? r : null;
  }

  /**
   * The scope state once option `o` starts from a level on `frames` in state `res` (scopes it
   * enters are opened), or null when a scope could then no longer resolve.
   */
  optionRes(o: number, res: Res, frames: Frame | null): Res | null {
    const sc = this.scopes!;
    const a = this.automaton;
    const opens = a.optOpens[o];
    let r = res;
    if (opens !== null) {
      const base = frames === null ? 0 : frames.depth;
      for (let i = 0; i < opens.length; i++) r = sc.open(r, base + opens[i]);
    }
    return sc.feasibleAfter(r, a.optTarget[o], a.optPush[o], frames, this.win) ? r : null;
  }

  /**
   * Everything the mask walk needs to start option `o` from a level on `frames` in scope state
   * `lr`: optionRes, and for the state after it the role filter / far table or the penalty.
   * Memoised on `lr` per option (for the last frames seen), so masks of states that share a scope
   * state recompute nothing.
   */
  optionInfo(o: number, lr: Res, frames: Frame | null): OptionInfo {
    if (lr.options === null) lr.options = new Map();
    const hit = lr.options.get(o);
    if (hit !== undefined && hit.frames === frames) return hit;
    const r = this.optionRes(o, lr, frames);
    let filter: Uint8Array | null = null;
    let far: Int32Array | null = null;
    let pen = 0;
    if (r !== null) {
      filter = this.roleFilterAfter(o, r, frames);
      if (filter !== null) far = this.roleFarAfter(o, r, frames);
      else pen = this.penaltyAfter(o, r, frames);
    }
    const info: OptionInfo = { frames, res: r, filter, far, pen };
    lr.options.set(o, info);
    return info;
  }

  /**
   * What starting option `o` from a level on `frames` in kind state `k` means for kinds: the Kin
   * after its calls and entries (null: a clause could no longer hold) and, when its terminal is a
   * constrained names field, the member filter and nearest allowed completions. Memoised on `k`.
   */
  kinOption(o: number, k: Kin, frames: Frame | null, env: Env | null): KindOption {
    const base = frames === null ? 0 : frames.depth;
    const key = o * 4096 + base;
    if (base < 4096) {
      if (k.opts === null) k.opts = new Map();
      const hit = k.opts.get(key);
      if (hit !== undefined && hit.env === env) return hit;
    }
    const a = this.automaton;
    const push = a.optPush[o];
    const target = a.optTarget[o];
    const kin = this.kinds!.afterOption(k, push, target, base);
    let filter: Uint8Array | null = null;
    let far: Int32Array | null = null;
    if (kin !== null && a.rtn.terminals[a.optTerm[o]].kind === 'names') {
      const f = this.kinds!.filter(kin, target, base + push.length, env);
      if (f !== null) {
        filter = f.bits;
        far = f.far;
      }
    }
    const info: KindOption = { kin, filter, far, env };
    if (base < 4096) k.opts!.set(key, info);
    return info;
  }

  /** The kind filter of the names terminal into `node` for a thread (null: none). */
  kinFilter(node: number, k: Kin | null, frames: Frame | null, env: Env | null): { readonly bits: Uint8Array; readonly far: Int32Array } | null {
    if (k === null) return null;
    return this.kinds!.filter(k, node, frames === null ? 0 : frames.depth, env);
  }

  /** `roleFar` for the position option `o` reaches from a level on `frames` (builds no frames). */
  roleFarAfter(o: number, res: Res | null, frames: Frame | null): Int32Array | null {
    const a = this.automaton;
    const target = a.optTarget[o];
    if (res === null || a.scopes.role[target] === ROLE_NONE) return null;
    return this.scopes!.farAfter(res, target, a.optPush[o], frames);
  }

  /** Penalty (bytes) of the scopes at the position option `o` reaches from a level on `frames`; 0 without scopes. */
  penaltyAfter(o: number, res: Res | null, frames: Frame | null): number {
    if (res === null) return 0;
    const a = this.automaton;
    return this.scopes!.penaltyAfter(res, a.optTarget[o], a.optPush[o], frames);
  }

  /** An upper bound on the penalty of any position in scope state `res` (kept masks use it); 0 without scopes. */
  penaltyBound(res: Res | null): number {
    return res === null ? 0 : this.scopes!.penaltyBound(res);
  }

  /** Penalty (bytes) of the scopes at a BETWEEN position; 0 without scopes. */
  penaltyAt(res: Res | null, node: number, frames: Frame | null): number {
    return res === null ? 0 : this.scopes!.penaltyAt(res, node, frames);
  }

  /** `roleFilter` for the position option `o` reaches from a level on `frames` (builds no frames). */
  roleFilterAfter(o: number, res: Res | null, frames: Frame | null): Uint8Array | null {
    const a = this.automaton;
    const target = a.optTarget[o];
    if (res === null || a.scopes.role[target] === ROLE_NONE) return null;
    return this.scopes!.filterAfter(res, target, a.optPush[o], frames);
  }

  /** The filter of a role terminal ending at `node` (scopes.ts), or null when the edge has no role. */
  roleFilter(node: number, res: Res | null, frames: Frame | null): Uint8Array | null {
    if (res === null || this.automaton.scopes.role[node] === ROLE_NONE) return null;
    return this.scopes!.filter(res, node, frames);
  }

  /** Level visitor of `stepThread`: starts every viable option of a level with byte `b` into `out`. */
  private readonly optionStarter: LevelVisitor<Thread[]> = {
    visitLevel: (out, b, node, frames, env) => {
      const a = this.automaton;
      const ok = this.optOk[env === null ? 0 : 1];
      let res: Res | null = null;
      if (this.scopes !== null) {
        res = this.levelRes(this.stepRes!, node, frames);
        if (res === null) return;
      }
      for (let o = a.optStart[node]; o < a.optStart[node + 1]; o++) {
        if (!ok[o]) continue;
        const term = a.optTerm[o];
        const s = this.startLex(term, b, env);
        if (s === 0) continue;
        const t = a.rtn.terminals[term];
        const text = t.kind === 'newvar' || t.kind === 'boundvar' ? String.fromCharCode(b) : '';
        let r = res;
        if (r !== null) {
          r = this.optionRes(o, r, frames);
          if (r === null) continue;
        }
        let kin = this.stepKin;
        if (kin !== null) {
          const ki = this.kinOption(o, kin, frames, env);
          if (ki.kin === null || (ki.filter !== null && (ki.filter[s] & LIVE) === 0)) continue;
          kin = ki.kin;
        }
        const pushed = this.pushFrames(o, frames, env);
        const target = a.optTarget[o];
        const filter = this.roleFilter(target, r, pushed);
        if (filter !== null && (filter[s] & LIVE) === 0) continue;
        if (kin !== null && t.kind === 'boundvar' && !this.boundFits(env, text, kin, target, pushed, false)) continue;
        out.push(new Thread(target, term, s, text, pushed, env, r, kin));
      }
    },
  };
  /** the scope state of the thread `optionStarter` is stepping */
  private stepRes: Res | null = null;
  /** the kind state of that thread */
  private stepKin: Kin | null = null;

  private readonly dispatchCache: (Dispatch | undefined)[] = [];
  private readonly classCache: (Int32Array | undefined)[] = [];

  /**
   * The viable options of `node` in `mode` (0: no variable in scope, 1: some) grouped by the bytes
   * that can begin their terminal (boundvar: any first byte of its class; the scope is checked by
   * startLex). `skipClasses` leaves out `class` terminals. Built on first use, then kept.
   */
  dispatch(node: number, mode: number, skipClasses: boolean): Dispatch {
    const key = node * 4 + mode * 2 + (skipClasses ? 1 : 0);
    const hit = this.dispatchCache[key];
    if (hit !== undefined) return hit;
    const a = this.automaton;
    const rtn = a.rtn;
    const ok = this.optOk[mode];
    const byByte: number[][] = Array.from({ length: 256 }, () => []);
    for (let o = a.optStart[node]; o < a.optStart[node + 1]; o++) {
      if (!ok[o]) continue;
      const t = rtn.terminals[a.optTerm[o]];
      if (skipClasses && t.kind === 'class') continue;
      for (let b = 0; b < 256; b++) {
        const dfa = this.termDfa[t.index];
        const can = dfa.start !== 0 && dfa.trans[dfa.start * 256 + b] !== 0;
        if (can) byByte[b].push(o);
      }
    }
    const bytes: number[] = [];
    const off: number[] = [0];
    const opts: number[] = [];
    for (let b = 0; b < 256; b++) {
      if (byByte[b].length === 0) continue;
      bytes.push(b);
      opts.push(...byByte[b]);
      off.push(opts.length);
    }
    const index = new Int16Array(256).fill(-1);
    bytes.forEach((b, i) => (index[b] = i));
    const d: Dispatch = { bytes: Uint8Array.from(bytes), off: Int32Array.from(off), opts: Int32Array.from(opts), index };
    this.dispatchCache[key] = d;
    return d;
  }

  /** The viable options of `node` in `mode` whose terminal is a token class (`class` kind). */
  classOptions(node: number, mode: number): Int32Array {
    const key = node * 2 + mode;
    const hit = this.classCache[key];
    if (hit !== undefined) return hit;
    const a = this.automaton;
    const out: number[] = [];
    for (let o = a.optStart[node]; o < a.optStart[node + 1]; o++) {
      if (this.optOk[mode][o] && a.rtn.terminals[a.optTerm[o]].kind === 'class') out.push(o);
    }
    const r = Int32Array.from(out);
    this.classCache[key] = r;
    return r;
  }

  /** Shortest completion (bytes, an achievable upper bound) from `node` to its nonterminal's end under `env`. */
  nodeDist(node: number, env: Env | null): number {
    return env === null ? this.dist0[node] : this.scopedDist(node, env.minLen);
  }

  /** `nodeDist` with some variable in scope, the shortest of them `minLen` bytes long. */
  private scopedDist(node: number, minLen: number): number {
    const a = this.dist1a[node];
    return a >= INF ? INF : a + this.dist1k[node] * (1 + minLen);
  }

  /**
   * Shortest completion (bytes) of a BETWEEN thread at `node` with `frames`, `env`. The tables count
   * one separating space before every terminal that starts with a word byte; when the previous
   * byte is not a word byte (`prevWord` false) the first such space is not needed and is not
   * counted — so emitting a space always brings the bound down by one (no dead end under a budget).
   */
  betweenDist(node: number, env: Env | null, frames: Frame | null, prevWord = true): number {
    const here = this.nodeDist(node, env);
    let d = here + (frames === null ? 0 : frames.rest);
    if (!prevWord) {
      const fw = here > 0 ? (env === null ? this.firstWord0[node] : this.firstWord1[node]) === 1 : frames !== null && frames.restFirstWord;
      if (fw) d -= 1;
    }
    return d;
  }

  /** Shortest completion (bytes) of any thread; `prevWord`: the last byte read was a word byte. */
  threadDist(th: Thread, prevWord = true): number {
    if (th.res !== null) return this.scopedThreadDist(th, prevWord);
    if (th.term < 0) return this.betweenDist(th.node, th.env, th.frames, prevWord);
    const t = this.automaton.rtn.terminals[th.term];
    let lexRest: number;
    const env = th.env;
    if (t.kind === 'boundvar') lexRest = th.kin !== null ? this.boundRestKinds(th) : boundRest(th.env, th.text);
    else if (t.kind === 'names' && th.kin !== null) {
      const kf = this.kinFilter(th.node, th.kin, th.frames, th.env);
      lexRest = kf !== null ? kf.far[th.lex] : this.termDfa[th.term].minAccept[th.lex];
    } else {
      lexRest = this.termDfa[th.term].minAccept[th.lex];
      if (t.kind === 'newvar') {
        // the lexeme ends after lexRest more bytes and brings a variable of that length into
        // scope: the distance of `Env.add(env, <that name>)`, without building it
        const len = th.text.length + lexRest;
        const rest = th.frames === null ? 0 : th.frames.rest;
        return lexRest + this.scopedDist(th.node, env === null ? len : Math.min(env.minLen, len)) + rest;
      }
    }
    return lexRest >= INF ? INF : lexRest + this.betweenDist(th.node, env, th.frames);
  }

  /** `boundRest` counting only the variables whose kind agrees with the field (no allocation). */
  private boundRestKinds(th: Thread): number {
    let best = INF;
    const depth = th.frames === null ? 0 : th.frames.depth;
    for (let e = th.env; e !== null; e = e.next) {
      if (!e.name.startsWith(th.text) || shadowed(th.env, e)) continue;
      if (e.name.length - th.text.length < best && this.kinds!.varFits(th.kin!, th.node, depth, e.kv)) best = e.name.length - th.text.length;
    }
    return best;
  }

  /**
   * `threadDist` with name scopes: the references still pending add the introductions they need
   * (ScopeBinding.penaltyAt); a role name in progress counts its farthest allowed completion
   * (`far` of its filter: remaining bytes plus that member's own penalty).
   */
  private scopedThreadDist(th: Thread, prevWord: boolean): number {
    const sc = this.scopes!;
    const res = th.res!;
    if (th.term < 0) return this.betweenDist(th.node, th.env, th.frames, prevWord) + sc.penaltyAt(res, th.node, th.frames);
    const far = this.roleFar(th.node, res, th.frames);
    if (far !== null) {
      const f = far[th.lex];
      return f >= INF ? INF : f + this.betweenDist(th.node, th.env, th.frames);
    }
    const t = this.automaton.rtn.terminals[th.term];
    if (t.kind === 'boundvar' || t.kind === 'newvar') return this.threadDistPlain(th, prevWord) + sc.penaltyAt(res, th.node, th.frames);
    return this.termDfa[th.term].minAccept[th.lex] + this.betweenDist(th.node, th.env, th.frames) + sc.penaltyAt(res, th.node, th.frames);
  }

  private threadDistPlain(th: Thread, prevWord: boolean): number {
    return this.threadDist(new Thread(th.node, th.term, th.lex, th.text, th.frames, th.env, null), prevWord);
  }

  /** The `far` table of a role terminal ending at `node` (null when the edge has no role). */
  roleFar(node: number, res: Res | null, frames: Frame | null): Int32Array | null {
    if (res === null || this.automaton.scopes.role[node] === ROLE_NONE) return null;
    return this.scopes!.farOf(res, node, frames);
  }

  /** Pushes frames for option `o` on top of `frames` (caller scope `env`). */
  pushFrames(o: number, frames: Frame | null, env: Env | null): Frame | null {
    const push = this.automaton.optPush[o];
    let f = frames;
    for (let i = 0; i < push.length; i++) {
      const r = push[i];
      const nd = this.nodeDist(r, env);
      const fw = nd > 0 ? (env === null ? this.firstWord0[r] : this.firstWord1[r]) === 1 : f !== null && f.restFirstWord;
      f = new Frame(r, env, f, nd + (f === null ? 0 : f.rest), fw, this.automaton.canPop[r] !== 0 && (f === null || f.finishes));
    }
    return f;
  }

  /**
   * The frames with return nodes `rets` (innermost first, no variables in scope) on top of
   * `frames`, as pushFrames builds them. Keep in sync with pushFrames.
   */
  rebuildFrames(rets: Int32Array, frames: Frame | null): Frame | null {
    let f = frames;
    for (let i = rets.length - 1; i >= 0; i--) {
      const r = rets[i];
      const nd = this.nodeDist(r, null);
      const fw = nd > 0 ? this.firstWord0[r] === 1 : f !== null && f.restFirstWord;
      f = new Frame(r, null, f, nd + (f === null ? 0 : f.rest), fw);
    }
    return f;
  }

  /**
   * `rest` of the stack `pushFrames(o, frames, env)` would build (0 for an empty stack), without
   * building it. Keep in sync with pushFrames.
   */
  pushedRest(o: number, frames: Frame | null, env: Env | null): number {
    const push = this.automaton.optPush[o];
    let rest = frames === null ? 0 : frames.rest;
    for (let i = 0; i < push.length; i++) rest += this.nodeDist(push[i], env);
    return rest;
  }

  /** The first lexeme state of terminal `term` after byte `b` (0 = cannot start), for DFA/trie kinds. */
  startLex(term: number, b: number, env: Env | null): number {
    const t = this.automaton.rtn.terminals[term];
    switch (t.kind) {
      case 'boundvar':
        return boundHasPrefix(env, String.fromCharCode(b)) ? 1 : 0;
      default: {
        const dfa = this.termDfa[term];
        return dfa.trans[dfa.start * 256 + b];
      }
    }
  }

  /** Steps one thread by byte `b`; pushes the resulting threads onto `out`. */
  stepThread(th: Thread, b: number, prevWord: boolean, out: Thread[]): void {
    const a = this.automaton;
    const rtn = a.rtn;
    if (th.term < 0) {
      if (rtn.space[b]) {
        out.push(th);
        return;
      }
      if (prevWord && WORD[b]) return;
      this.stepRes = th.res;
      this.stepKin = th.kin;
      a.forEachLevel(this.optionStarter, out, b, th.node, th.frames, th.env, null);
      return;
    }
    const cont = this.stepLex(th, b);
    if (cont !== null) out.push(cont);
    if (this.lexAccepting(th)) this.stepThread(this.endLexeme(th), b, prevWord, out);
  }

  /** The LEX thread `th` continuing its lexeme with byte `b`, or null. */
  stepLex(th: Thread, b: number): Thread | null {
    const t = this.automaton.rtn.terminals[th.term];
    let next = 0;
    switch (t.kind) {
      case 'boundvar':
        if (th.kin !== null) next = this.boundFits(th.env, th.text + String.fromCharCode(b), th.kin, th.node, th.frames, false) ? 1 : 0;
        else next = boundHasPrefix(th.env, th.text + String.fromCharCode(b)) ? 1 : 0;
        break;
      default:
        next = this.termDfa[th.term].trans[th.lex * 256 + b];
    }
    if (next === 0) return null;
    if (th.res !== null) {
      const filter = this.roleFilter(th.node, th.res, th.frames);
      if (filter !== null && (filter[next] & LIVE) === 0) return null;
    }
    if (th.kin !== null && t.kind === 'names') {
      const kf = this.kinFilter(th.node, th.kin, th.frames, th.env);
      if (kf !== null && (kf.bits[next] & LIVE) === 0) return null;
    }
    const text = t.kind === 'newvar' || t.kind === 'boundvar' ? th.text + String.fromCharCode(b) : '';
    return new Thread(th.node, th.term, next, text, th.frames, th.env, th.res, th.kin);
  }

  /** The BETWEEN thread after the lexeme of LEX thread `th` ends here. */
  endLexeme(th: Thread): Thread {
    return new Thread(th.node, -1, 0, '', th.frames, this.envAfterLexeme(th), this.resAfterLexeme(th), this.kinAfterLexeme(th));
  }

  /**
   * The kind state once the lexeme of LEX thread `th` ends here: a names member or a variable is
   * united with its clause partners (call only when lexAccepting(th): then it is never null).
   */
  kinAfterLexeme(th: Thread): Kin | null {
    const k = th.kin;
    if (k === null) return null;
    const t = this.automaton.rtn.terminals[th.term];
    const depth = th.frames === null ? 0 : th.frames.depth;
    switch (t.kind) {
      case 'names':
        return this.kinds!.afterName(k, th.node, depth, this.kinds!.memberAt(th.node, th.lex));
      case 'newvar':
        return this.kinds!.afterNewVar(k, th.node, depth, t.tokenClass);
      case 'boundvar':
        return this.kinds!.afterBoundVar(k, th.node, depth, boundClass(th.env, th.text));
      default:
        return k;
    }
  }

  /**
   * Is there a variable in scope, spelled `text` (`whole`) or starting with it, that is not shadowed
   * and whose kind agrees with the `bound` field into `node`? No allocation.
   */
  boundFits(env: Env | null, text: string, k: Kin, node: number, frames: Frame | null, whole: boolean): boolean {
    const depth = frames === null ? 0 : frames.depth;
    const kinds = this.kinds!;
    for (let e = env; e !== null; e = e.next) {
      if (whole ? e.name !== text : !e.name.startsWith(text)) continue;
      if (shadowed(env, e)) continue;
      if (kinds.varFits(k, node, depth, e.kv)) return true;
    }
    return false;
  }

  /** The scope state once the lexeme of LEX thread `th` ends here (a role name updates it). */
  resAfterLexeme(th: Thread): Res | null {
    const res = th.res;
    if (res === null || this.automaton.scopes.role[th.node] === ROLE_NONE) return res;
    const set = this.automaton.scopes.roleSet[th.node];
    return this.scopes!.afterLexeme(res, th.node, this.scopes!.member(set, th.lex));
  }

  /** The variables in scope once the lexeme of LEX thread `th` ends here (a `new` field adds one). */
  envAfterLexeme(th: Thread): Env | null {
    if (this.automaton.rtn.terminals[th.term].kind !== 'newvar') return th.env;
    // with kinds the variable's class is the next one the Kin creates (KindBinding.afterNewVar)
    const kv = th.kin !== null && this.automaton.kinds.tokenFam[this.automaton.rtn.terminals[th.term].tokenClass] >= 0 ? th.kin.size : -1;
    return Env.add(th.env, th.text, kv);
  }

  /** True when the lexeme of LEX thread `th` may end here. */
  lexAccepting(th: Thread): boolean {
    const t = this.automaton.rtn.terminals[th.term];
    if (t.kind === 'boundvar') return th.kin !== null ? this.boundFits(th.env, th.text, th.kin, th.node, th.frames, true) : boundHas(th.env, th.text);
    if (this.termDfa[th.term].accept[th.lex] !== 1) return false;
    if (th.kin !== null && t.kind === 'names') {
      const kf = this.kinFilter(th.node, th.kin, th.frames, th.env);
      if (kf !== null && (kf.bits[th.lex] & ALLOWED) === 0) return false;
    }
    if (th.res === null) return true;
    const filter = this.roleFilter(th.node, th.res, th.frames);
    return filter === null || (filter[th.lex] & ALLOWED) !== 0;
  }

  /**
   * True when a BETWEEN position at `node` with `frames` can finish the program: every frame may
   * return by empty moves (the variables in scope play no part).
   */
  canFinish(node: number, frames: Frame | null): boolean {
    // same answer as forEachLevel(…) === LEVELS_END, without walking the frames (Frame.finishes)
    return this.automaton.canPop[node] !== 0 && (frames === null || frames.finishes);
  }

  /** True when thread `th` can finish the program here (a lexeme in progress must be able to end). */
  threadComplete(th: Thread): boolean {
    if (th.term < 0) return this.canFinish(th.node, th.frames) && (th.res === null || this.scopes!.closesAll(th.res));
    return this.lexAccepting(th) && this.canFinish(th.node, th.frames) && (th.res === null || this.scopes!.closesAll(this.resAfterLexeme(th)!));
  }

  /** The state after `bytes`; a dead state (no threads) when they are not a viable continuation. */
  advanceBytes(state: PdaState, bytes: ArrayLike<number>): PdaState {
    let threads: readonly Thread[] = state.threads;
    let prevWord = state.prevWord;
    for (let i = 0; i < bytes.length && threads.length > 0; i++) {
      const b = bytes[i];
      const out: Thread[] = [];
      for (const th of threads) this.stepThread(th, b, prevWord, out);
      threads = dedupe(out);
      prevWord = WORD[b] === 1;
    }
    return { threads, prevWord, prev: state };
  }

  isComplete(state: PdaState): boolean {
    const threads = state.threads;
    for (let i = 0; i < threads.length; i++) if (this.threadComplete(threads[i])) return true;
    return false;
  }

  viable(state: PdaState): boolean {
    return state.threads.length !== 0;
  }

  /** Fewest bytes (an achievable upper bound on the true minimum) that complete the program. */
  shortestCompletion(state: PdaState): number {
    let best = INF;
    for (const th of state.threads) best = Math.min(best, this.threadDist(th, state.prevWord));
    return best;
  }
}


/** Removes duplicate threads (same fields, same frame/env objects). */
function dedupe(threads: Thread[]): Thread[] {
  if (threads.length < 2) return threads;
  const out: Thread[] = [];
  outer: for (const t of threads) {
    for (const u of out) {
      if (u === t || (u.node === t.node && u.term === t.term && u.lex === t.lex && u.text === t.text && u.frames === t.frames && u.env === t.env && u.res === t.res && u.kin === t.kin)) continue outer;
    }
    out.push(t);
  }
  if (out.length > 4096) throw new AutomatonError(`the text so far has more than 4096 parses; the grammar is too ambiguous for the mask automaton`);
  return out;
}

export function boundHasPrefix(env: Env | null, prefix: string): boolean {
  for (let e = env; e !== null; e = e.next) if (e.name.startsWith(prefix)) return true;
  return false;
}

export function boundHas(env: Env | null, name: string): boolean {
  for (let e = env; e !== null; e = e.next) if (e.name === name) return true;
  return false;
}

/** Is variable entry `e` hidden by an inner entry of the same name? */
function shadowed(env: Env | null, e: Env): boolean {
  for (let x = env; x !== null && x !== e; x = x.next) if (x.name === e.name) return true;
  return false;
}

/** The kind class of the innermost variable spelled `name` (-1 none). */
function boundClass(env: Env | null, name: string): number {
  for (let e = env; e !== null; e = e.next) if (e.name === name) return e.kv;
  return -1;
}

function boundRest(env: Env | null, prefix: string): number {
  let best = INF;
  for (let e = env; e !== null; e = e.next) if (e.name.startsWith(prefix)) best = Math.min(best, e.name.length - prefix.length);
  return best;
}

