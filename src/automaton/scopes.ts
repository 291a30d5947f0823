/**
 * Name scopes in the automaton: which names a position may write so that the program can still
 * resolve (`enter` / `known` fields, `in Owner` relations, `scope` constructors; semantics in
 * docs/design/scope-masks.md and src/tree/resolve.ts). General: driven by the field markers of the
 * IR, with no grammar-specific code.
 *
 * Static part (`ScopePlan`, per automaton): per RTN node the role of the terminal edge entering it
 * (ENTER, KNOWN, OWNED), which nonterminals open a scope, and per node how many introductions of
 * each entered set its nonterminal may still read (`minIntro` / `maxIntro`, through non-scope
 * callees), so a position's window of further introductions is a sum over its return levels.
 *
 * Bound part (`ScopeBinding`, per name binding): member ids of the names automata's accepting
 * states, the relations (owners) and their solvers (scope-solver.ts).
 *
 * Runtime (`Res`, persistent, one per thread): the chain of open scopes (`ScopeRec`: members
 * introduced, required and pending unqualified references, per entered set) and the qualifier
 * register (`by`: the owner named just before an owned reference). Threads share Res objects;
 * answers that depend only on a Res (feasibility per window, member filters, the Res after a
 * lexeme or after closing a scope) are memoised on it, so masks recompute nothing per token.
 */
import { NAME_FACTS, type Grammar, type NameBindings } from '../description/ir.ts';
import { EDGE_CALL, EDGE_EPS, EDGE_TERM, FIELD_STRIDE, type Rtn } from './cfg.ts';
import type { ByteDfa, NamesDfa } from './regex.ts';
import { MANY, Relation, ScopeSolver } from './scope-solver.ts';

const INF = 0x3fffffff; // keep in sync with pda.ts

export const ROLE_NONE = 0;
export const ROLE_ENTER = 1;
export const ROLE_KNOWN = 2;
export const ROLE_OWNED = 3;

/** Windows count further introductions up to CAP; CAP stands for "any number". */
const CAP = 3;

/** What a frame needs for scopes: its depth (1 for a frame with nothing below). */
export interface FrameLike {
  readonly depth: number;
  readonly ret: number;
  readonly next: FrameLike | null;
}

export class ScopePlan {
  /** true when the grammar has `enter` / `known` fields */
  readonly active: boolean;
  /** per node: role of the terminal edge entering it */
  readonly role: Uint8Array;
  /** per node: the name set of that edge (-1 none) */
  readonly roleSet: Int32Array;
  /** per node: its field is another field's `by` qualifier (sets the register) */
  readonly qualifier: Uint8Array;
  /** per nonterminal: entering it opens a scope */
  readonly scopeNt: Uint8Array;
  /** name sets entered by some field, in order; per set its slot in this list (-1) */
  readonly introSets: readonly number[];
  readonly slotOf: Int32Array;
  /** per slot, per node: fewest / most (capped) further introductions before the nonterminal ends */
  readonly minIntro: readonly Int32Array[];
  readonly maxIntro: readonly Int32Array[];

  constructor(readonly grammar: Grammar, readonly rtn: Rtn) {
    const n = rtn.nodeNt.length;
    this.role = new Uint8Array(n);
    this.roleSet = new Int32Array(n).fill(-1);
    this.qualifier = new Uint8Array(n);
    this.scopeNt = new Uint8Array(rtn.nts.length);
    const setIndex = new Map(grammar.nameSets.map((s) => [s.name, s.index]));
    const intro: number[] = [];
    let active = false;
    for (let node = 0; node < n; node++) {
      const code = rtn.nodeField[node];
      if (code < 0) continue;
      const c = grammar.constructors[Math.floor(code / FIELD_STRIDE)];
      const f = c.fields[code % FIELD_STRIDE];
      if (f.type.kind !== 'names') continue;
      const scoping = f.scoping;
      const set = setIndex.get(f.type.name)!;
      if (c.fields.some((g) => g.by === f.name)) this.qualifier[node] = 1;
      if (scoping === 'enters') {
        this.role[node] = ROLE_ENTER;
        if (!intro.includes(set)) intro.push(set);
      } else if (scoping === 'known') {
        this.role[node] = grammar.nameSets[set].owner !== null ? ROLE_OWNED : ROLE_KNOWN;
      } else continue;
      this.roleSet[node] = set;
      active = true;
    }
    for (let nt = 0; nt < rtn.nts.length; nt++) {
      const ci = rtn.ntCtor[nt];
      if (ci >= 0 && grammar.constructors[ci].scope) this.scopeNt[nt] = 1;
    }
    this.active = active;
    this.introSets = intro;
    this.slotOf = new Int32Array(grammar.nameSets.length).fill(-1);
    intro.forEach((s, i) => (this.slotOf[s] = i));
    this.minIntro = intro.map((s) => this.counts(s, true));
    this.maxIntro = intro.map((s) => this.counts(s, false));
  }

  /** Per node: fewest (`min`) or most (capped at CAP) ENTER edges of `set` to its nonterminal's end. */
  private counts(set: number, min: boolean): Int32Array {
    const rtn = this.rtn;
    const n = rtn.nodeNt.length;
    const BIG = 0x3fffffff;
    const v = new Int32Array(n).fill(min ? BIG : -1);
    for (const nt of rtn.nts) v[nt.final] = 0;
    for (let changed = true; changed; ) {
      changed = false;
      for (let m = n - 1; m >= 0; m--) {
        for (let e = rtn.edgeStart[m]; e < rtn.edgeStart[m + 1]; e++) {
          const to = rtn.edgeTo[e];
          let c: number;
          const kind = rtn.edgeKind[e];
          if (kind === EDGE_EPS) c = v[to];
          else if (kind === EDGE_TERM) c = v[to] < 0 || v[to] >= BIG ? v[to] : v[to] + (this.role[to] === ROLE_ENTER && this.roleSet[to] === set ? 1 : 0);
          else {
            const callee = rtn.edgeArg[e];
            const inner = this.scopeNt[callee] ? 0 : v[rtn.nts[callee].start];
            c = inner < 0 || v[to] < 0 ? -1 : inner >= BIG || v[to] >= BIG ? BIG : inner + v[to];
          }
          if (min ? c < v[m] : c > v[m] && c >= 0) {
            const next = min ? c : Math.min(c, CAP);
            if (next !== v[m]) {
              v[m] = next;
              changed = true;
            }
          }
        }
      }
    }
    if (!min) for (let i = 0; i < n; i++) if (v[i] < 0) v[i] = 0;
    return v;
  }
}

/** One open scope: members introduced, required and referred, per slot (persistent). */
export class ScopeRec {
  /** feasibility per (slot, lo, hi) window: -1 unknown, 0 no, 1 yes */
  readonly feas: Int8Array;
  /** the Res of the enclosing level once this scope closes (memo; null: cannot close) */
  closed: Res | null | undefined = undefined;

  constructor(
    readonly parent: ScopeRec | null,
    /** depth of the frame whose pop closes the scope (0: the root scope, closed at the end) */
    readonly depth: number,
    readonly intro: readonly Int32Array[],
    readonly req: readonly Int32Array[],
    readonly unq: readonly Int32Array[],
  ) {
    this.feas = new Int8Array(intro.length * 16).fill(-1);
    this.need = new Int32Array(intro.length).fill(-1);
  }
  /** per slot: fewest further introductions that resolve the scope (memo, -1 unknown) */
  readonly need: Int32Array;
}

/** The scope state of a thread. */
export class Res {
  /** per target node of a role edge: the filter over its names automaton's states (memo) */
  filters: Map<number, Filter> | null = null;
  /** after a role lexeme: key node * 2^20 + member → Res (memo; null: not allowed) */
  after: Map<number, Res | null> | null = null;
  /** per option started from a level in this state: what the walk needs (memo, see OptionInfo) */
  options: Map<number, OptionInfo> | null = null;

  constructor(
    readonly scope: ScopeRec,
    /** the qualifier register: the owner member named by a `by` field just read, or -1 */
    readonly qual: number,
  ) {}
}

/**
 * What starting option o from a level on `frames` in a given state means for the scopes: the state
 * after it (null: cannot resolve), the member filter and farthest completions of a role name
 * (null otherwise) and the penalty after it. Kept per (state, option) for the last frames seen.
 */
export interface OptionInfo {
  readonly frames: unknown;
  readonly res: Res | null;
  readonly filter: Uint8Array | null;
  readonly far: Int32Array | null;
  readonly pen: number;
}

/** A member filter: bits (LIVE, ALLOWED) and farthest completions per names-automaton state. */
export interface Filter {
  readonly bits: Uint8Array;
  readonly far: Int32Array;
}

/** Filter bits per names-automaton state: some allowed member at or below / this state's member allowed. */
export const LIVE = 1;
export const ALLOWED = 2;

const EMPTY = new Int32Array(0);

function withMember(list: Int32Array, m: number): Int32Array {
  const out = new Int32Array(list.length + 1);
  out.set(list);
  out[list.length] = m;
  return out;
}

function withoutMember(list: Int32Array, m: number): Int32Array {
  if (!list.includes(m)) return list;
  return list.filter((x) => x !== m);
}

function replaced(arrays: readonly Int32Array[], i: number, a: Int32Array): Int32Array[] {
  const out = arrays.slice();
  out[i] = a;
  return out;
}

/** The scopes under one binding of the names. */
export class ScopeBinding {
  readonly root: Res;
  /** per name set: its names automaton, member id per state (-1), parent state per state */
  private readonly memberAt: (Int32Array | null)[];
  private readonly parentOf: (Int32Array | null)[];
  private readonly dfaOf: (ByteDfa | null)[];
  private readonly count: Int32Array;
  /** per slot: the relation of the set owned by it (null: none bound), the owned set, the solver */
  private readonly rel: (Relation | null)[];
  private readonly ownedSet: Int32Array;
  private readonly solver: ScopeSolver[];
  /** scratch for the mandatory / optional split of unqualified references */
  private readonly mand: Int32Array;
  private readonly opt: Int32Array;

  /** per slot: [dist1, dist2]: shortest completion of a node to its nonterminal's end reading ≥ 1 / ≥ 2 introductions of the slot */
  private readonly distK: (readonly [Int32Array, Int32Array])[];
  /** per slot: an upper bound on the cost of one more introduction beyond the second (loops) */
  private readonly cycle: Int32Array;
  /** per slot: the largest marginal cost of one more introduction anywhere (d1 − d0, d2 − d1, cycle) */
  private readonly marginal: Int32Array;
  private readonly dist0: Int32Array;

  constructor(
    readonly plan: ScopePlan,
    names: NameBindings,
    /** per name set: its names automaton under this binding (null when unbound) */
    dfas: readonly (NamesDfa | null)[],
    /** the instance's shortest completions (bytes) with no introduction counted, and terminal costs */
    dist0: Int32Array,
    termCost: Int32Array,
  ) {
    this.dist0 = dist0;
    const g = plan.grammar;
    const members = g.nameSets.map((s) => (names[s.name] ?? []) as readonly string[]);
    this.count = Int32Array.from(members.map((m) => m.length));
    this.dfaOf = dfas.slice();
    this.memberAt = dfas.map((d) => (d === null ? null : d.memberAt));
    this.parentOf = dfas.map((d) => (d === null ? null : d.parent));
    const facts = names[NAME_FACTS];
    this.rel = [];
    this.ownedSet = new Int32Array(plan.introSets.length).fill(-1);
    this.solver = [];
    let maxRefs = 1;
    plan.introSets.forEach((setIdx, slot) => {
      const owner = g.nameSets[setIdx];
      const owned = g.nameSets.find((s) => s.owner === owner.name);
      let rel: Relation | null = null;
      if (owned && facts?.owners?.[owned.name]) {
        const ownerId = new Map(members[setIdx].map((m, i) => [m, i]));
        const pairs: [number, number][] = [];
        const table = facts.owners[owned.name];
        members[owned.index].forEach((m, r) => {
          for (const o of table[m] ?? []) {
            const t = ownerId.get(o);
            if (t !== undefined) pairs.push([r, t]);
          }
        });
        rel = new Relation(members[owned.index].length, members[setIdx].length, pairs);
        this.ownedSet[slot] = owned.index;
        maxRefs = Math.max(maxRefs, members[owned.index].length);
      }
      this.rel.push(rel);
      this.solver.push(new ScopeSolver(rel ?? new Relation(0, members[setIdx].length, [])));
    });
    this.mand = new Int32Array(maxRefs);
    this.opt = new Int32Array(maxRefs);
    const k = plan.introSets.length;
    const none = Array.from({ length: k }, () => EMPTY);
    this.root = new Res(new ScopeRec(null, 0, none, none, none), -1);
    this.distK = plan.introSets.map((set) => this.introDistances(set, dist0, termCost));
    this.cycle = Int32Array.from(plan.introSets.map((_, slot) => {
      const [d1, d2] = this.distK[slot];
      const ma = plan.maxIntro[slot];
      let c = 0;
      for (let n = 0; n < d1.length; n++) if (ma[n] >= CAP && d1[n] < INF && d2[n] < INF) c = Math.max(c, d2[n] - d1[n]);
      return c;
    }));
    this.marginal = Int32Array.from(plan.introSets.map((_, slot) => {
      const [d1, d2] = this.distK[slot];
      let c = this.cycle[slot];
      for (let n = 0; n < d1.length; n++) {
        if (dist0[n] < INF && d1[n] < INF) c = Math.max(c, d1[n] - dist0[n]);
        if (d1[n] < INF && d2[n] < INF) c = Math.max(c, d2[n] - d1[n]);
      }
      return c;
    }));
  }

  /**
   * An upper bound on `penaltyAt` over every position while the scopes are in state `res`: per scope
   * and slot, need × the largest marginal cost of one more introduction (d1 − d0, d2 − d1, cycle).
   */
  penaltyBound(res: Res): number {
    let total = 0;
    const k = this.plan.introSets.length;
    for (let rec: ScopeRec | null = res.scope; rec !== null; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        const m = this.needOf(rec, s);
        if (m > 0 && m < MANY) total += m * this.marginal[s];
      }
    }
    return total;
  }

  /** dist1 / dist2 of one entered set (see `distK`): the dist0 recurrence with a counter. */
  private introDistances(set: number, dist0: Int32Array, termCost: Int32Array): [Int32Array, Int32Array] {
    const rtn = this.plan.rtn;
    const n = rtn.nodeNt.length;
    const d = [dist0, new Int32Array(n).fill(INF), new Int32Array(n).fill(INF)];
    const add = (a: number, b: number) => (a >= INF || b >= INF ? INF : a + b);
    for (let changed = true; changed; ) {
      changed = false;
      for (let m = n - 1; m >= 0; m--) {
        for (let e = rtn.edgeStart[m]; e < rtn.edgeStart[m + 1]; e++) {
          const to = rtn.edgeTo[e];
          const kind = rtn.edgeKind[e];
          for (let k = 1; k <= 2; k++) {
            let c: number;
            if (kind === EDGE_EPS) c = d[k][to];
            else if (kind === EDGE_TERM) {
              const enter = this.plan.role[to] === ROLE_ENTER && this.plan.roleSet[to] === set ? 1 : 0;
              c = add(termCost[rtn.edgeArg[e]], d[k - enter][to]);
            } else {
              const callee = rtn.edgeArg[e];
              const st = rtn.nts[callee].start;
              if (this.plan.scopeNt[callee]) c = add(dist0[st], d[k][to]);
              else {
                c = INF;
                for (let j = 0; j <= k; j++) c = Math.min(c, add(d[j][st], d[k - j][to]));
              }
            }
            if (c < d[k][m]) {
              d[k][m] = c;
              changed = true;
            }
          }
        }
      }
    }
    return [d[1], d[2]];
  }

  /** Fewest further introductions of slot s that resolve scope `rec` (MANY: none does). */
  needOf(rec: ScopeRec, s: number): number {
    const v = rec.need[s];
    if (v >= 0) return v;
    const solver = this.solver[s];
    const rel = this.rel[s];
    let nm = 0;
    let no = 0;
    for (const r of rec.unq[s]) {
      if (rel !== null && this.outwardResolves(rec.parent, s, r)) this.opt[no++] = r;
      else this.mand[nm++] = r;
    }
    const m = solver.minMore(rec.intro[s], rec.req[s], this.mand.subarray(0, nm), this.opt.subarray(0, no));
    rec.need[s] = m;
    return m;
  }

  /**
   * Bytes that pending references add to the shortest completion at the position (node, frames):
   * per scope and slot needing m ≥ 1 further introductions, the shortest path through its levels
   * that reads m of them (exact for m ≤ 2 — the counted recurrence —, beyond that `cycle` bytes
   * per introduction) minus the shortest path. An achievable upper bound (docs/design/scope-masks.md).
   */
  penaltyAt(res: Res, node: number, frames: FrameLike | null): number {
    return this.penalty(res, node, EMPTY, frames, false);
  }

  /** `penaltyAt` for the position option (target, push) reaches from a level on `frames`. */
  penaltyAfter(res: Res, target: number, push: Int32Array, frames: FrameLike | null): number {
    return this.penalty(res, target, push, frames, true);
  }

  private penalty(res: Res, node: number, push: Int32Array, frames: FrameLike | null, after: boolean): number {
    const k = this.plan.introSets.length;
    let total = 0;
    let upper = MANY;
    const base = frames === null ? 0 : frames.depth;
    for (let rec: ScopeRec | null = res.scope; rec !== null; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        const m = this.needOf(rec, s);
        if (m <= 0 || m >= MANY) continue;
        const [d1, d2] = this.distK[s];
        const d0 = this.dist0;
        // min-plus convolution (k = 0, 1, 2) over the levels that belong to rec
        let a0 = 0;
        let a1 = INF;
        let a2 = INF;
        const level = (n: number) => {
          const b0 = d0[n];
          const b1 = d1[n];
          const b2 = d2[n];
          const n2 = Math.min(a0 + b2, a1 + b1, a2 + b0);
          const n1 = Math.min(a0 + b1, a1 + b0);
          a0 = a0 + b0;
          a1 = n1;
          a2 = n2;
        };
        const d = rec.depth;
        if (after) {
          const top = base + push.length;
          if (top >= d && top < upper) level(node);
          for (let j = push.length - 1; j >= 0; j--) if (base + j >= d && base + j < upper) level(push[j]);
        } else if (base >= d && base < upper) level(node);
        for (let f = frames; f !== null && f.depth > d; f = f.next) if (f.depth - 1 < upper) level(f.ret);
        if (a0 >= INF) continue;
        const am = m === 1 ? a1 : a2;
        if (am >= INF) continue; // no path reads that many here: feasibility rules the position out
        total += am - a0 + (m > 2 ? (m - 2) * this.cycle[s] : 0);
      }
      upper = rec.depth;
    }
    return total;
  }

  /** The member id of names-automaton state `st` of set `set` (-1: not a whole member). */
  member(set: number, st: number): number {
    const at = this.memberAt[set];
    return at === null ? -1 : at[st];
  }

  // ---- windows ----

  /**
   * Fewest / most further introductions of slot s into scope `rec` from the position whose levels
   * are `node` then `frames`' return nodes. A level belongs to the innermost scope whose closing
   * frame it still stands on: rec's levels are those whose frame depth d satisfies
   * rec.depth ≤ d < `upper` (the depth of the scope just inside rec; MANY for the innermost).
   * Writes into `out[0]`, `out[1]` (hi = MANY when unbounded).
   */
  window(rec: ScopeRec, upper: number, s: number, node: number, frames: FrameLike | null, out: Int32Array): void {
    const mi = this.plan.minIntro[s];
    const ma = this.plan.maxIntro[s];
    const d = rec.depth;
    let lo = 0;
    let hi = 0;
    const d0 = frames === null ? 0 : frames.depth;
    if (d0 >= d && d0 < upper) {
      lo += mi[node];
      hi += ma[node];
    }
    for (let f = frames; f !== null && f.depth > d; f = f.next) {
      if (f.depth - 1 < upper) {
        lo += mi[f.ret];
        hi += ma[f.ret];
      }
    }
    out[0] = lo;
    out[1] = hi >= CAP ? MANY : hi;
  }

  /**
   * Same as `window`, for the position an option reaches: its target (on frame depth base + k),
   * its pushed return nodes (push[j] on frame depth base + j, base = depth of `frames`), then
   * `frames`' levels. `own`: count the option's own terminal when it enters the innermost scope
   * (the question before the name is read; filters ask after it).
   */
  windowAfter(rec: ScopeRec, upper: number, s: number, target: number, push: Int32Array, frames: FrameLike | null, out: Int32Array, own = false): void {
    const mi = this.plan.minIntro[s];
    const ma = this.plan.maxIntro[s];
    const d = rec.depth;
    const base = frames === null ? 0 : frames.depth;
    let lo = 0;
    let hi = 0;
    const k = push.length;
    if (base + k >= d && base + k < upper) {
      lo += mi[target];
      hi += ma[target];
    }
    for (let j = 0; j < k; j++) {
      const dj = base + j;
      if (dj >= d && dj < upper) {
        lo += mi[push[j]];
        hi += ma[push[j]];
      }
    }
    for (let f = frames; f !== null && f.depth > d; f = f.next) {
      if (f.depth - 1 < upper) {
        lo += mi[f.ret];
        hi += ma[f.ret];
      }
    }
    // the option's own terminal: an introduction into the innermost scope not yet read
    if (own && upper === MANY && this.plan.role[target] === ROLE_ENTER && this.plan.slotOf[this.plan.roleSet[target]] === s) {
      lo++;
      hi++;
    }
    out[0] = lo;
    out[1] = hi >= CAP ? MANY : hi;
  }

  // ---- feasibility ----

  /** Can scope `rec` still resolve every reference with lo..hi further introductions of slot s? */
  feasible(rec: ScopeRec, s: number, lo: number, hi: number): boolean {
    const key = lo <= 3 ? s * 16 + lo * 4 + (hi >= CAP ? 3 : hi) : -1;
    if (key >= 0) {
      const v = rec.feas[key];
      if (v >= 0) return v === 1;
    }
    const r = this.solve(rec, s, lo, hi);
    if (key >= 0) rec.feas[key] = r ? 1 : 0;
    return r;
  }

  private solve(rec: ScopeRec, s: number, lo: number, hi: number, extraIntro = -1, extraReq = -1, extraUnq = -1): boolean {
    const solver = this.solver[s];
    const rel = this.rel[s];
    let nm = 0;
    let no = 0;
    const unq = rec.unq[s];
    const total = extraUnq >= 0 ? unq.length + 1 : unq.length;
    for (let i = 0; i < total; i++) {
      const r = i < unq.length ? unq[i] : extraUnq;
      if (rel !== null && this.outwardResolves(rec.parent, s, r)) this.opt[no++] = r;
      else this.mand[nm++] = r;
    }
    const intro = extraIntro >= 0 ? withMember(rec.intro[s], extraIntro) : rec.intro[s];
    const req = extraReq >= 0 ? withMember(rec.req[s], extraReq) : rec.req[s];
    return solver.feasible(intro, req, this.mand.subarray(0, nm), lo, hi, this.opt.subarray(0, no));
  }

  /** Some enclosing scope already resolves unqualified reference r exactly (first one with an owner has one). */
  private outwardResolves(p: ScopeRec | null, s: number, r: number): boolean {
    const rel = this.rel[s]!;
    for (; p !== null; p = p.parent) {
      const intro = p.intro[s];
      let n = 0;
      for (let i = 0; i < intro.length; i++) if (rel.owns(intro[i], r)) n++;
      if (n > 0) return n === 1;
    }
    return false;
  }

  /** The chain holds member m of slot s (introduced in some open scope). */
  private inChain(rec: ScopeRec | null, s: number, m: number): boolean {
    for (let p = rec; p !== null; p = p.parent) if (p.intro[s].includes(m)) return true;
    return false;
  }

  /** Every scope of `res` is still feasible after option (target, push) from a level on `frames`. */
  feasibleAfter(res: Res, target: number, push: Int32Array, frames: FrameLike | null, scratch: Int32Array): boolean {
    const k = this.plan.introSets.length;
    let upper = MANY;
    for (let rec: ScopeRec | null = res.scope; rec !== null; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        this.windowAfter(rec, upper, s, target, push, frames, scratch, true);
        if (!this.feasible(rec, s, scratch[0], scratch[1])) return false;
      }
      upper = rec.depth;
    }
    return true;
  }

  /** Every scope of `res` whose window the position (node, frames) bounds is still feasible. */
  feasibleAt(res: Res, node: number, frames: FrameLike | null, scratch: Int32Array): boolean {
    const k = this.plan.introSets.length;
    let upper = MANY;
    for (let rec: ScopeRec | null = res.scope; rec !== null; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        this.window(rec, upper, s, node, frames, scratch);
        if (!this.feasible(rec, s, scratch[0], scratch[1])) return false;
      }
      upper = rec.depth;
    }
    return true;
  }

  // ---- events ----

  /** The Res once a scope opens whose closing frame has depth `depth`. */
  open(res: Res, depth: number): Res {
    const k = this.plan.introSets.length;
    const none = Array.from({ length: k }, () => EMPTY);
    return new Res(new ScopeRec(res.scope, depth, none, none, none), res.qual);
  }

  /**
   * The Res of the enclosing level once the innermost scope closes (null: a reference cannot
   * resolve). Unqualified references with no owner in the closing scope and required members it
   * did not introduce move to the enclosing scope (checked there by the caller's feasibility).
   */
  close(res: Res): Res | null {
    const rec = res.scope;
    if (rec.closed !== undefined) return rec.closed;
    let out: Res | null = null;
    const parent = rec.parent;
    if (parent !== null) {
      const k = this.plan.introSets.length;
      const unq = parent.unq.slice();
      const req = parent.req.slice();
      let ok = true;
      for (let s = 0; s < k && ok; s++) {
        const rel = this.rel[s];
        for (const r of rec.unq[s]) {
          let n = 0;
          if (rel !== null) for (const t of rec.intro[s]) if (rel.owns(t, r)) n++;
          if (n > 1) ok = false;
          else if (n === 0) unq[s] = withMember(unq[s], r);
        }
        for (const m of rec.req[s]) if (!rec.intro[s].includes(m) && !this.inChain(parent, s, m)) req[s] = withMember(req[s], m);
      }
      if (ok) out = new Res(new ScopeRec(parent.parent, parent.depth, parent.intro, req, unq), -1);
    }
    rec.closed = out;
    return out;
  }

  /** True when every scope of `res` closes with every reference resolved (end of program). */
  closesAll(res: Res): boolean {
    let r: Res | null = res;
    while (r !== null && r.scope.parent !== null) r = this.close(r);
    if (r === null) return false;
    const k = this.plan.introSets.length;
    for (let s = 0; s < k; s++) if (!this.feasible(r.scope, s, 0, 0)) return false;
    return true;
  }

  /** The Res for a return level at frame depth `depth`: scopes deeper than it closed (null: one cannot). */
  atDepth(res: Res, depth: number): Res | null {
    let r: Res | null = res;
    while (r !== null && r.scope.depth > depth) r = this.close(r);
    return r;
  }

  /**
   * The Res after a role lexeme of member m ends at `node` (the edge's target), the position then
   * being (node, frames); null when m is not allowed there.
   */
  afterLexeme(res: Res, node: number, m: number): Res | null {
    const key = node * 1048576 + m;
    if (res.after === null) res.after = new Map();
    const hit = res.after.get(key);
    if (hit !== undefined) return hit;
    const out = this.computeAfter(res, node, m);
    res.after.set(key, out);
    return out;
  }

  private computeAfter(res: Res, node: number, m: number): Res | null {
    const plan = this.plan;
    const role = plan.role[node];
    const set = plan.roleSet[node];
    const qual = plan.qualifier[node] === 1 ? m : -1;
    const rec = res.scope;
    if (role === ROLE_ENTER) {
      const s = plan.slotOf[set];
      if (rec.intro[s].includes(m)) return null;
      const req = withoutMember(rec.req[s], m);
      return new Res(new ScopeRec(rec.parent, rec.depth, replaced(rec.intro, s, withMember(rec.intro[s], m)), req === rec.req[s] ? rec.req : replaced(rec.req, s, req), rec.unq), qual);
    }
    if (role === ROLE_KNOWN) {
      const s = plan.slotOf[set];
      if (s < 0) return null; // never entered anywhere: cannot resolve
      if (this.inChain(rec, s, m)) return res.qual === qual ? res : new Res(rec, qual);
      return new Res(new ScopeRec(rec.parent, rec.depth, rec.intro, replaced(rec.req, s, withMember(rec.req[s], m)), rec.unq), qual);
    }
    // ROLE_OWNED
    const s = this.slotOwning(set);
    if (s < 0) return res.qual === -1 ? res : new Res(rec, -1); // no owners bound: membership only
    const rel = this.rel[s]!;
    if (res.qual >= 0) return rel.owns(res.qual, m) ? new Res(rec, -1) : null;
    return new Res(new ScopeRec(rec.parent, rec.depth, rec.intro, rec.req, replaced(rec.unq, s, withMember(rec.unq[s], m))), -1);
  }

  private slotOwning(set: number): number {
    for (let s = 0; s < this.ownedSet.length; s++) if (this.ownedSet[s] === set && this.rel[s] !== null) return s;
    return -1;
  }

  /** Scratch: the windows (lo, hi) of every scope of a chain, innermost first, slot-major per scope. */
  private readonly W = new Int32Array(64);
  private nW = 0;

  /** Fills W with the windows of res's scopes at the position (node, frames). */
  private windowsAt(res: Res, node: number, frames: FrameLike | null): void {
    const k = this.plan.introSets.length;
    const tmp = this.tmp;
    let i = 0;
    let upper = MANY;
    for (let rec: ScopeRec | null = res.scope; rec !== null && i + 2 * k <= this.W.length; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        this.window(rec, upper, s, node, frames, tmp);
        this.W[i++] = tmp[0];
        this.W[i++] = tmp[1];
      }
      upper = rec.depth;
    }
    this.nW = i;
  }

  /** Fills W with the windows of res's scopes at the position option (target, push) reaches from `frames`. */
  private windowsAfter(res: Res, target: number, push: Int32Array, frames: FrameLike | null): void {
    const k = this.plan.introSets.length;
    const tmp = this.tmp;
    let i = 0;
    let upper = MANY;
    for (let rec: ScopeRec | null = res.scope; rec !== null && i + 2 * k <= this.W.length; rec = rec.parent) {
      for (let s = 0; s < k; s++) {
        this.windowAfter(rec, upper, s, target, push, frames, tmp);
        this.W[i++] = tmp[0];
        this.W[i++] = tmp[1];
      }
      upper = rec.depth;
    }
    this.nW = i;
  }
  private readonly tmp = new Int32Array(2);

  /**
   * The filter of the role edge into `node` for a thread in scope state `res` standing at
   * (node, frames) once the lexeme ends: per state of the set's names automaton, LIVE when an
   * allowed member is at or below it, ALLOWED when its own member is allowed (the program can
   * still resolve after it). Memoised per (res, node, windows of res's scopes there).
   */
  filter(res: Res, node: number, frames: FrameLike | null): Uint8Array {
    this.windowsAt(res, node, frames);
    return this.filterW(res, node, EMPTY, frames, false).bits;
  }

  /** `filter` for the position option (target, push) reaches from a level on `frames` (no frames built). */
  filterAfter(res: Res, target: number, push: Int32Array, frames: FrameLike | null): Uint8Array {
    this.windowsAfter(res, target, push, frames);
    return this.filterW(res, target, push, frames, true).bits;
  }

  /**
   * Per state of the names automaton: the farthest completion of the lexeme among the allowed
   * members at or below it, in bytes, plus that member's penalty (INF where none is allowed).
   * An upper bound that drops by at least one per byte along any allowed member (the budget's
   * induction, masks/constraint.ts).
   */
  farOf(res: Res, node: number, frames: FrameLike | null): Int32Array {
    this.windowsAt(res, node, frames);
    return this.filterW(res, node, EMPTY, frames, false).far;
  }

  /** `farOf` for the position option (target, push) reaches from a level on `frames`. */
  farAfter(res: Res, target: number, push: Int32Array, frames: FrameLike | null): Int32Array {
    this.windowsAfter(res, target, push, frames);
    return this.filterW(res, target, push, frames, true).far;
  }

  private filterW(res: Res, node: number, push: Int32Array, frames: FrameLike | null, after: boolean): Filter {
    // the windows, capped, as a key (at most 6 scope × slot pairs; beyond that no memo)
    let sig = 0;
    const W = this.W;
    if (this.nW <= 12) for (let i = 0; i < this.nW; i += 2) sig = sig * 16 + Math.min(W[i], 3) * 4 + (W[i + 1] >= CAP ? 3 : W[i + 1]);
    else sig = -1;
    const key = node * 16777216 + sig;
    if (sig >= 0) {
      if (res.filters === null) res.filters = new Map();
      const hit = res.filters.get(key);
      if (hit !== undefined) return hit;
    }
    const set = this.plan.roleSet[node];
    const dfa = this.dfaOf[set]!;
    const at = this.memberAt[set]!;
    const parent = this.parentOf[set]!;
    const bits = new Uint8Array(dfa.stateCount);
    const far = new Int32Array(dfa.stateCount).fill(-1);
    for (let st = 1; st < dfa.stateCount; st++) {
      const m = at[st];
      if (m < 0) continue;
      const next = this.allowedW(res, node, m);
      if (next === null) continue;
      bits[st] = ALLOWED | LIVE;
      far[st] = this.penalty(next, node, push, frames, after);
    }
    for (let st = dfa.stateCount - 1; st > 1; st--) {
      if ((bits[st] & LIVE) === 0) continue;
      const p = parent[st];
      bits[p] |= LIVE;
      if (far[st] + 1 > far[p]) far[p] = far[st] + 1;
    }
    for (let st = 0; st < far.length; st++) if (far[st] < 0) far[st] = INF;
    const out: Filter = { bits, far };
    if (sig >= 0) res.filters!.set(key, out);
    return out;
  }

  /** The Res after member m at the role edge into `node` when every scope stays feasible in the windows W, else null. */
  private allowedW(res: Res, node: number, m: number): Res | null {
    const next = this.afterLexeme(res, node, m);
    if (next === null) return null;
    if (next.scope === res.scope) return next;
    const k = this.plan.introSets.length;
    let i = 0;
    for (let rec: ScopeRec | null = next.scope; rec !== null && i < this.nW; rec = rec.parent) {
      for (let s = 0; s < k; s++, i += 2) if (!this.feasible(rec, s, this.W[i], this.W[i + 1])) return null;
    }
    return next;
  }
}
