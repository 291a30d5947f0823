/**
 * Kinds in the automaton: which names and variables a position may write so that the program can
 * still be well-kinded (`kinds F`, `names X of T with (slot: F)`, `sort S kind F`, `token V … kind
 * F`, `field: T kind REF`; semantics in src/tree/resolve.ts, the oracle; design in
 * docs/design/scopes-and-kinds.md). General: driven by the kind clauses of the IR, with no
 * grammar-specific code.
 *
 * Static part (`KindPlan`, per automaton): per constructor a record layout — offset 0 its own
 * kind (`self`, a kinded sort), then one offset per kind slot of each field (a names field: one per
 * slot; a kinded sort or a variable of a kinded token class: one) — and per field the clause pairs
 * (offset, offset) that say two kinds are equal.
 *
 * Bound part (`KindBinding`, per name binding): the members' kinds per names-automaton state, the
 * domain of each field whose clause partner is read later (the kinds some member of that set can
 * still agree with), and the root state.
 *
 * Runtime (`Kin`, persistent, one per thread): a union–find over kind classes (most specific kind
 * so far and the domain per class), the records of the open constructors (innermost first, by the
 * depth of the frame that entered them), and the class waiting for the next constructor of a
 * kinded sort. Events: an option that calls a kinded-sort field or enters a constructor (its
 * records), the end of a names / variable lexeme (the member's or variable's classes are united
 * with their clause partners). Every event builds a new Kin (small typed arrays copied: allocation
 * at advance time and at the first mask of a new state, never per token); answers that depend only
 * on a Kin (the Kin after an option or lexeme, member filters) are memoised on it.
 *
 * Invariant: a thread's Kin is consistent — every class has its kinds on one ancestor chain and its
 * most specific kind in its domain — so the clauses read so far have a well-kinded completion as
 * long as every kind a future term may need has a constant (checked at binding: `inhabited`).
 *
 * Cost: per event O(classes + open records); per member filter O(members × slots) once per state.
 * Limits (the plan is then inactive and the masks enforce no kinds, as the notation's checker
 * warns): kind clauses in operator constructors, kinded sorts with operators, list fields in a
 * clause, a field that is both a scope role (`enter` / `known`) and kinded.
 */
import type { Grammar } from '../description/ir.ts';
import { bindNames, meetKinds, type BoundFamily, type BoundNames } from '../description/bound.ts';
import { FIELD_STRIDE, type Rtn } from './cfg.ts';
import type { ByteDfa } from './regex.ts';
import { ALLOWED, LIVE, type Filter } from './scopes.ts';

const INF = 0x3fffffff; // keep in sync with pda.ts
/** every kind allowed (domains are bitmasks over a family's kinds; families above 31 kinds keep ALL) */
const ALL = -1;

/** The variables in scope as the automaton keeps them (pda.ts Env): innermost first. */
export interface VarScope {
  readonly name: string;
  /** the variable's class, -1 none */
  readonly kv: number;
  readonly next: VarScope | null;
}

/** One open constructor's kind variables (class ids; -1 not read yet). */
export class KRec {
  constructor(
    /** depth of the frame that entered the constructor */
    readonly depth: number,
    readonly ctor: number,
    readonly vars: Int32Array,
    readonly next: KRec | null,
  ) {}
}

/** What starting option o from a level (at some frame depth) means for kinds. */
export interface KindOption {
  /** the state after the option's calls and entries; null: a clause could no longer hold */
  readonly kin: Kin | null;
  /** member filter of the names terminal the option reads (null: none needed) */
  readonly filter: Uint8Array | null;
  /** nearest allowed completion per names state under that filter */
  readonly far: Int32Array | null;
  /** the variables in scope it was computed for (filters look at them) */
  readonly env: unknown;
}

/** The kind state of a thread (immutable; memo maps aside). */
export class Kin {
  /** option o from depth d → KindOption (key o * 4096 + d) */
  opts: Map<number, KindOption> | null = null;
  /** names node t at depth d → filter (key t * 4096 + d; null: no filter) for the variables `env` (the last seen) */
  filt: Map<number, { readonly env: VarScope | null; readonly f: Filter | null }> | null = null;
  /** lexeme end at node t, depth d, member or variable class x → Kin (null: clash); key lexKey */
  after: Map<number, Kin | null> | null = null;

  constructor(
    /** union–find parent per class (a root is its own parent) */
    readonly parent: Int32Array,
    /** per root: the most specific kind so far (-1 none) */
    readonly kind: Int32Array,
    /** per root: allowed kinds (bitmask) */
    readonly dom: Int32Array,
    /** per class: its kind family index */
    readonly fam: Int32Array,
    readonly recs: KRec | null,
    /** class of the kinded-sort field just called, for the constructor entered next (-1) */
    readonly pend: number,
  ) {}

  get size(): number {
    return this.parent.length;
  }

  find(x: number): number {
    const p = this.parent;
    while (p[x] !== x) x = p[x];
    return x;
  }

  rec(depth: number, ctor: number): KRec | null {
    for (let r = this.recs; r !== null; r = r.next) {
      if (r.depth < depth) return null;
      if (r.depth === depth) return r.ctor === ctor ? r : null;
    }
    return null;
  }
}

export class KindPlan {
  readonly active: boolean;
  /** why kinds are not enforced (null when active or the grammar has no kinds) */
  readonly inactive: string | null;
  /** per constructor: record size (0: no record) */
  readonly recSize: Int32Array;
  /** per constructor: family of its sort's kind (-1 none) */
  readonly selfFam: Int32Array;
  /** per constructor, per field: first record offset (-1: the field has no kind) */
  readonly off: readonly Int32Array[];
  /** per constructor, per field: clause pairs [mine, other, …] touching the field */
  readonly pairs: readonly (readonly Int32Array[])[];
  /** per constructor, per record offset: family of its class */
  readonly offFam: readonly Int32Array[];
  /**
   * per constructor, per record offset: the later names fields' slots its class must agree with
   * ([set, slot, …]); the binding turns them into domains
   */
  readonly later: readonly (readonly number[][])[];
  /** per token class: kind family of its variables (-1) */
  readonly tokenFam: Int32Array;
  /**
   * per constructor, per record offset: the kinded sort (index) of a later field its class must
   * agree with, or -1 — a member's kind there must be one that sort can still be written with
   */
  readonly laterSort: readonly Int32Array[];
  /** per sort: the names fields (set, slot) its constants take their kind from; null: some constructor's kind is free */
  readonly sortConsts: readonly (number[] | null)[];
  /** per sort: some constructor is a variable of the node's kind (`bound V kind self`) */
  readonly sortVars: Uint8Array;
  /** per node: the name set a names terminal edge into it reads (-1) */
  readonly nodeSet: Int32Array;

  constructor(
    readonly grammar: Grammar,
    readonly rtn: Rtn,
    /** per node: 1 when a scope role reads it (scopes.ts ScopePlan.role) */
    role: Uint8Array,
  ) {
    const g = grammar;
    const famIndex = new Map(g.kindFamilies.map((f) => [f.name, f.index]));
    const setIndex = new Map(g.nameSets.map((s) => [s.name, s.index]));
    const sortOf = new Map(g.sorts.map((s) => [s.name, s]));
    const tokenOf = new Map(g.tokens.map((t) => [t.name, t]));
    const nc = g.constructors.length;
    this.recSize = new Int32Array(nc);
    this.selfFam = new Int32Array(nc).fill(-1);
    this.tokenFam = Int32Array.from(g.tokens.map((t) => (t.family === null ? -1 : famIndex.get(t.family)!)));
    const off: Int32Array[] = [];
    const pairs: Int32Array[][] = [];
    const offFam: Int32Array[] = [];
    const later: number[][][] = [];
    const laterSort: Int32Array[] = [];
    let why: string | null = null;
    let any = false;
    /** number of kind slots of a field and their families */
    const slotsOf = (c: (typeof g.constructors)[number], fi: number): number[] => {
      const f = c.fields[fi];
      if (f.type.kind === 'names') return g.nameSets[setIndex.get(f.type.name)!].slots.map((s) => famIndex.get(s.family)!);
      if (f.type.kind === 'sort') {
        const fam = sortOf.get(f.type.name)!.family;
        return fam === null ? [] : [famIndex.get(fam)!];
      }
      const fam = tokenOf.get(f.type.name)?.family ?? null;
      return fam === null || (f.scoping !== 'binds' && f.scoping !== 'bound') ? [] : [famIndex.get(fam)!];
    };
    for (const c of g.constructors) {
      const sort = sortOf.get(c.sort)!;
      const sfam = sort.family === null ? -1 : famIndex.get(sort.family)!;
      const o = new Int32Array(c.fields.length).fill(-1);
      const fams: number[] = [sfam];
      const slotFams = c.fields.map((_, fi) => slotsOf(c, fi));
      c.fields.forEach((_, fi) => {
        if (slotFams[fi].length === 0) return;
        o[fi] = fams.length;
        fams.push(...slotFams[fi]);
      });
      const clauses: [number, number][] = [];
      for (const f of c.fields) {
        if (f.kindOf === null) continue;
        const mine = o[f.index];
        let other = -1;
        if (f.kindOf.kind === 'self') other = sfam >= 0 ? 0 : -1;
        else {
          const ref = f.kindOf;
          const gf = c.fields.find((x) => x.name === ref.field)!;
          const si = ref.slot === null ? 0 : g.nameSets[setIndex.get(gf.type.name)!]?.slots.findIndex((s) => s.name === ref.slot) ?? -1;
          other = o[gf.index] < 0 || si < 0 ? -1 : o[gf.index] + si;
        }
        if (mine < 0 || other < 0) continue;
        clauses.push([mine, other]);
      }
      const involved = sfam >= 0 || clauses.length > 0;
      if (involved) {
        any = true;
        if (c.operator !== null) why ??= `constructor ${c.name} is an operator with kinds`;
        for (const [a, b] of clauses) {
          for (const f of c.fields) {
            const fo = o[f.index];
            if (fo < 0) continue;
            const n = slotFams[f.index].length;
            const inside = (x: number) => x >= fo && x < fo + n;
            if ((inside(a) || inside(b)) && f.card !== 'one' && f.card !== 'optional') why ??= `field ${c.name}.${f.name} is a list in a kind clause`;
          }
        }
      }
      this.recSize[c.index] = involved ? fams.length : 0;
      this.selfFam[c.index] = sfam;
      off.push(o);
      offFam.push(Int32Array.from(fams));
      pairs.push(
        c.fields.map((f) => {
          const fo = o[f.index];
          const out: number[] = [];
          if (fo >= 0) {
            const n = slotFams[f.index].length;
            for (const [a, b] of clauses) {
              if (a >= fo && a < fo + n) out.push(a, b);
              else if (b >= fo && b < fo + n) out.push(b, a);
            }
          }
          return Int32Array.from(out);
        }),
      );
      // text order of the fields: a clause partner that is a names field written later restricts
      // the earlier side's class to the kinds its members can agree with
      const order: string[] = [];
      const walk = (items: typeof c.layout) => {
        for (const it of items) {
          if (it.kind === 'slot') {
            if (!order.includes(it.field)) order.push(it.field);
          } else if (it.kind === 'when') walk(it.items);
        }
      };
      walk(c.layout);
      const pos = (fi: number) => order.indexOf(c.fields[fi].name);
      const lat: number[][] = fams.map(() => []);
      const fieldAt = (x: number) => c.fields.findIndex((f) => o[f.index] >= 0 && x >= o[f.index] && x < o[f.index] + slotFams[f.index].length);
      for (const [a, b] of clauses) {
        for (const [x, y] of [[a, b], [b, a]]) {
          const fy = fieldAt(y);
          const fx = fieldAt(x);
          if (fy < 0 || c.fields[fy].type.kind !== 'names') continue;
          const xPos = fx < 0 ? -1 : pos(fx); // self (x = 0) is known before every field
          if (pos(fy) > xPos) lat[x].push(setIndex.get(c.fields[fy].type.name)!, y - o[fy]);
        }
      }
      later.push(lat);
      const ls = new Int32Array(fams.length).fill(-1);
      for (const [a, b] of clauses) {
        for (const [x, y] of [[a, b], [b, a]]) {
          const fy = fieldAt(y);
          const fx = fieldAt(x);
          if (fy < 0 || c.fields[fy].type.kind !== 'sort') continue;
          const xPos = fx < 0 ? -1 : pos(fx);
          if (pos(fy) > xPos) ls[x] = g.sorts.findIndex((s) => s.name === c.fields[fy].type.name);
        }
      }
      laterSort.push(ls);
    }
    this.sortVars = new Uint8Array(g.sorts.length);
    this.sortConsts = g.sorts.map((s, si) => {
      if (s.family === null) return null;
      const out: number[] = [];
      for (const c of g.constructors) {
        if (c.sort !== s.name) continue;
        const selfField = c.fields.find((f) => f.kindOf?.kind === 'self');
        if (selfField === undefined) return null; // a constructor whose kind nothing fixes: any kind
        if (selfField.type.kind === 'names') out.push(setIndex.get(selfField.type.name)!, 0);
        else if (selfField.scoping === 'bound') this.sortVars[si] = 1;
        else return null;
      }
      return out;
    });
    for (const s of g.sorts) {
      if (s.family !== null && g.constructors.some((c) => c.sort === s.name && c.operator !== null)) why ??= `sort ${s.name} has a kind and operators`;
    }
    // a names field that is a scope role and has a kind clause
    for (let node = 0; node < rtn.nodeField.length; node++) {
      const code = rtn.nodeField[node];
      if (code < 0 || role[node] === 0) continue;
      const ci = Math.floor(code / FIELD_STRIDE);
      if (pairs[ci][code % FIELD_STRIDE].length > 0) why ??= `field ${g.constructors[ci].name}.${g.constructors[ci].fields[code % FIELD_STRIDE].name} is both a scope role and kinded`;
    }
    this.nodeSet = new Int32Array(rtn.nodeField.length).fill(-1);
    for (let node = 0; node < rtn.nodeField.length; node++) {
      const code = rtn.nodeField[node];
      if (code < 0) continue;
      const f = g.constructors[Math.floor(code / FIELD_STRIDE)].fields[code % FIELD_STRIDE];
      if (f.type.kind === 'names') this.nodeSet[node] = setIndex.get(f.type.name)!;
    }
    this.off = off;
    this.pairs = pairs;
    this.offFam = offFam;
    this.later = later;
    this.laterSort = laterSort;
    this.active = any && g.kindFamilies.length > 0 && why === null;
    this.inactive = any ? why : null;
  }
}

/** Per-state data of one names automaton: member id at accepting states, trie parent. */
interface NamesIndex {
  readonly memberAt: Int32Array;
  readonly parent: Int32Array;
}

export class KindBinding {
  readonly bound: BoundNames;
  readonly root: Kin;
  /** per constructor, per record offset: domain of a class created there */
  private readonly domOf: readonly Int32Array[];
  private readonly names: (NamesIndex | null)[];
  /** per sort: the kinds its constants can take (bitmask; ALL when some constructor's kind is free) */
  private readonly constMask: Int32Array;
  /** scratch for filters: per slot the accumulated kind, domain, group */
  private readonly sk = new Int32Array(16);
  private readonly sd = new Int32Array(16);

  constructor(
    readonly plan: KindPlan,
    readonly nodeNt: Int32Array,
    names: Parameters<typeof bindNames>[1],
    /** per name set: its names automaton under this binding (null: not bound) */
    readonly dfas: readonly (ByteDfa | null)[],
  ) {
    const g = plan.grammar;
    this.bound = bindNames(g, names);
    const fams = this.bound.families;
    this.names = g.nameSets.map((s) => {
      const dfa = dfas[s.index];
      if (dfa === null || s.slots.length === 0) return null;
      const memberAt = new Int32Array(dfa.stateCount).fill(-1);
      const parent = new Int32Array(dfa.stateCount).fill(0);
      for (let st = 1; st < dfa.stateCount; st++) {
        for (let b = 0; b < 256; b++) {
          const c = dfa.trans[st * 256 + b];
          if (c !== 0) parent[c] = st;
        }
      }
      const set = this.bound.sets[s.index];
      const enc = new TextEncoder();
      set.members.forEach((m, id) => {
        let st = dfa.start;
        for (const b of enc.encode(m)) st = st === 0 ? 0 : dfa.trans[st * 256 + b];
        if (st !== 0 && memberAt[st] < 0) memberAt[st] = id;
      });
      return { memberAt, parent };
    });
    // domains: the kinds some member of each later partner's slot agrees with
    this.domOf = plan.later.map((lat, ci) =>
      Int32Array.from(
        lat.map((ls, x) => {
          let dom = ALL;
          const fam = fams[plan.offFam[ci][x]];
          if (fam === undefined || fam.kinds.length > 31) return ALL;
          for (let i = 0; i < ls.length; i += 2) {
            const set = this.bound.sets[ls[i]];
            if (!set.bound) continue;
            const nSlots = set.set.slots.length;
            let d = 0;
            for (let m = 0; m < set.members.length && d !== ALL; m++) {
              const km = set.kinds[m * nSlots + ls[i + 1]];
              if (km < 0) d = ALL;
              else for (let k = 0; k < fam.kinds.length; k++) if (meetKinds(fam, k, km) !== -2) d |= 1 << k;
            }
            dom &= d;
          }
          return dom;
        }),
      ),
    );
    this.constMask = Int32Array.from(
      plan.sortConsts.map((list, si) => {
        const sort = g.sorts[si];
        if (list === null || sort.family === null) return ALL;
        const fam = fams[g.kindFamilies.findIndex((f) => f.name === sort.family)];
        if (fam === undefined || fam.kinds.length > 31) return ALL;
        let d = 0;
        for (let i = 0; i < list.length; i += 2) {
          const set = this.bound.sets[list[i]];
          if (!set.bound) return ALL;
          const nSlots = set.set.slots.length;
          for (let m = 0; m < set.members.length; m++) {
            const km = set.kinds[m * nSlots + list[i + 1]];
            if (km < 0) return ALL;
            for (let k = 0; k < fam.kinds.length; k++) if (meetKinds(fam, k, km) !== -2) d |= 1 << k;
          }
        }
        return d;
      }),
    );
    this.root = new Kin(new Int32Array(0), new Int32Array(0), new Int32Array(0), new Int32Array(0), null, -1);
  }

  private family(k: Kin, x: number): BoundFamily {
    return this.bound.families[k.fam[x]];
  }

  /** Can classes a and b be united (kinds on one chain, the meet in both domains)? */
  compatible(k: Kin, a: number, b: number): boolean {
    const ra = k.find(a);
    const rb = k.find(b);
    if (ra === rb) return true;
    const m = meetKinds(this.family(k, ra), k.kind[ra], k.kind[rb]);
    if (m === -2) return false;
    const d = k.dom[ra] & k.dom[rb];
    return d !== 0 && (m < 0 || ((d >>> m) & 1) === 1);
  }

  /** A new class (copying the arrays). */
  private fresh(k: Kin, fam: number, kind: number, dom: number): Kin {
    const n = k.size;
    const parent = new Int32Array(n + 1);
    parent.set(k.parent);
    parent[n] = n;
    const kd = new Int32Array(n + 1);
    kd.set(k.kind);
    kd[n] = kind;
    const dm = new Int32Array(n + 1);
    dm.set(k.dom);
    dm[n] = dom;
    const fm = new Int32Array(n + 1);
    fm.set(k.fam);
    fm[n] = fam;
    return new Kin(parent, kd, dm, fm, k.recs, k.pend);
  }

  /** The state with classes a and b united, or null when they disagree. */
  private unite(k: Kin, a: number, b: number): Kin | null {
    const ra = k.find(a);
    const rb = k.find(b);
    if (ra === rb) return k;
    if (!this.compatible(k, ra, rb)) return null;
    const parent = k.parent.slice();
    const kd = k.kind.slice();
    const dm = k.dom.slice();
    parent[rb] = ra;
    kd[ra] = meetKinds(this.family(k, ra), k.kind[ra], k.kind[rb]);
    dm[ra] = k.dom[ra] & k.dom[rb];
    return new Kin(parent, kd, dm, k.fam, k.recs, k.pend);
  }

  /** Sets record variable `x` of the record at `depth` to class `cls` and applies the clauses of field fi. */
  private setField(k: Kin | null, rec: KRec, fi: number, vars: readonly number[]): Kin | null {
    if (k === null) return null;
    const plan = this.plan;
    const nv = rec.vars.slice();
    const fo = plan.off[rec.ctor][fi];
    for (let s = 0; s < vars.length; s++) nv[fo + s] = vars[s];
    let out: Kin | null = new Kin(k.parent, k.kind, k.dom, k.fam, replaceRec(k.recs, rec, nv), k.pend);
    const pairs = plan.pairs[rec.ctor][fi];
    for (let i = 0; i < pairs.length && out !== null; i += 2) {
      const a = nv[pairs[i]];
      const b = nv[pairs[i + 1]];
      if (a >= 0 && b >= 0) out = this.unite(out, a, b);
    }
    return out;
  }

  /**
   * The Kin once option `o` starts from a level at frame depth `base` (`push`: the return nodes it
   * pushes, `target`: the node its terminal leads to): kinded-sort field calls get a class, entered
   * constructors a record. null when a clause could no longer hold.
   */
  afterOption(k: Kin, push: Int32Array, target: number, base: number): Kin | null {
    const plan = this.plan;
    const rtn = plan.rtn;
    let cur: Kin | null = k;
    for (let i = 1; i <= push.length && cur !== null; i++) {
      const code = rtn.callField[push[i - 1]];
      if (code >= 0) {
        const ci = Math.floor(code / FIELD_STRIDE);
        const fi = code % FIELD_STRIDE;
        const fo = plan.off[ci][fi];
        const rec = fo >= 0 && plan.recSize[ci] > 0 ? cur.rec(base + i - 1, ci) : null;
        if (rec !== null) {
          const id: number = cur.size;
          cur = this.fresh(cur, plan.offFam[ci][fo], -1, this.domOf[ci][fo]);
          cur = this.setField(cur, cur.rec(base + i - 1, ci)!, fi, [id]);
          if (cur === null) return null;
          cur = new Kin(cur.parent, cur.kind, cur.dom, cur.fam, cur.recs, id);
        }
      }
      const nt = this.nodeNt[i < push.length ? push[i] : target];
      const ci = rtn.ntCtor[nt];
      if (ci < 0 || plan.recSize[ci] === 0) continue;
      let self = -1;
      if (plan.selfFam[ci] >= 0) {
        if (cur.pend >= 0) self = cur.pend;
        else {
          self = cur.size;
          cur = this.fresh(cur, plan.selfFam[ci], -1, ALL);
        }
      }
      const vars = new Int32Array(plan.recSize[ci]).fill(-1);
      vars[0] = self;
      const depth = base + i;
      let recs: KRec | null = cur.recs;
      while (recs !== null && recs.depth >= depth) recs = recs.next;
      cur = new Kin(cur.parent, cur.kind, cur.dom, cur.fam, new KRec(depth, ci, vars, recs), -1);
    }
    return cur;
  }

  /** The record of the constructor whose field the terminal edge into `node` reads, at `depth`; null when kinds play no part. */
  private recAt(k: Kin, node: number, depth: number): KRec | null {
    const code = this.plan.rtn.nodeField[node];
    if (code < 0) return null;
    const ci = Math.floor(code / FIELD_STRIDE);
    if (this.plan.recSize[ci] === 0 || this.plan.off[ci][code % FIELD_STRIDE] < 0) return null;
    return k.rec(depth, ci);
  }

  /** The Kin after a names lexeme of member `m` ends at `node` (record depth `depth`); null: a clash. */
  afterName(k: Kin, node: number, depth: number, m: number): Kin | null {
    if (m < 0) return k;
    const key = lexKey(node, depth, m);
    if (k.after === null) k.after = new Map();
    const hit = depth < MEMO_DEPTH ? k.after.get(key) : undefined;
    if (hit !== undefined) return hit;
    let out: Kin | null = k;
    const rec = this.recAt(k, node, depth);
    if (rec !== null) {
      const code = this.plan.rtn.nodeField[node];
      const fi = code % FIELD_STRIDE;
      const set = this.bound.sets[this.plan.nodeSet[node]];
      const nSlots = set.set.slots.length;
      const fo = this.plan.off[rec.ctor][fi];
      let cur: Kin = k;
      const vars: number[] = [];
      for (let s = 0; s < nSlots; s++) {
        vars.push(cur.size);
        cur = this.fresh(cur, this.plan.offFam[rec.ctor][fo + s], set.kinds[m * nSlots + s], ALL);
      }
      out = this.setField(cur, cur.rec(depth, rec.ctor)!, fi, vars);
    }
    if (depth < MEMO_DEPTH) k.after.set(key, out);
    return out;
  }

  /** The Kin after a `new` variable lexeme ends at `node`: its class is the next id (`k.size`). */
  afterNewVar(k: Kin, node: number, depth: number, tokenClass: number): Kin {
    const fam = this.plan.tokenFam[tokenClass];
    if (fam < 0) return k;
    const key = lexKey(node, depth, NEW_VAR);
    if (k.after === null) k.after = new Map();
    const hit = depth < MEMO_DEPTH ? k.after.get(key) : undefined;
    if (hit !== undefined && hit !== null) return hit;
    const rec = this.recAt(k, node, depth);
    const id = k.size;
    const fi = this.plan.rtn.nodeField[node] % FIELD_STRIDE;
    const dom = rec === null ? ALL : this.domOf[rec.ctor][this.plan.off[rec.ctor][fi]];
    let out: Kin = this.fresh(k, fam, -1, dom);
    // a fresh class agrees with anything its domain allows; a clause with an earlier field may still refuse it
    if (rec !== null) out = this.setField(out, out.rec(depth, rec.ctor)!, fi, [id]) ?? out;
    if (depth < MEMO_DEPTH) k.after.set(key, out);
    return out;
  }

  /** The Kin after a `bound` variable lexeme (the variable's class `cls`) ends at `node`; null: a clash. */
  afterBoundVar(k: Kin, node: number, depth: number, cls: number): Kin | null {
    if (cls < 0) return k;
    const key = lexKey(node, depth, cls);
    if (k.after === null) k.after = new Map();
    const hit = depth < MEMO_DEPTH ? k.after.get(key) : undefined;
    if (hit !== undefined) return hit;
    const rec = this.recAt(k, node, depth);
    const out = rec === null ? k : this.setField(k, rec, this.plan.rtn.nodeField[node] % FIELD_STRIDE, [cls]);
    if (depth < MEMO_DEPTH) k.after.set(key, out);
    return out;
  }

  /** May a `bound` variable of class `cls` be read at `node` (record depth `depth`)? No allocation. */
  varFits(k: Kin, node: number, depth: number, cls: number): boolean {
    if (cls < 0) return true;
    const code = this.plan.rtn.nodeField[node];
    if (code < 0) return true;
    const ci = Math.floor(code / FIELD_STRIDE);
    const fi = code % FIELD_STRIDE;
    if (this.plan.recSize[ci] === 0) return true;
    const rec = k.rec(depth, ci);
    if (rec === null) return true;
    const pairs = this.plan.pairs[ci][fi];
    const r = k.find(cls);
    let kind = k.kind[r];
    let dom = k.dom[r];
    const fam = this.family(k, r);
    for (let i = 0; i < pairs.length; i += 2) {
      const b = rec.vars[pairs[i + 1]];
      if (b < 0) continue;
      const rb = k.find(b);
      if (rb === r) continue;
      kind = meetKinds(fam, kind, k.kind[rb]);
      dom &= k.dom[rb];
      if (kind === -2 || dom === 0 || (kind >= 0 && ((dom >>> kind) & 1) === 0)) return false;
    }
    return true;
  }

  /**
   * The member filter of the names terminal into `node` (record depth `depth`): ALLOWED on the
   * member states whose kinds agree with every clause partner read so far, LIVE on states with an
   * allowed member at or below, `far` the nearest allowed completion. null when no partner is read
   * yet (every member agrees). Memoised on the Kin.
   */
  filter(k: Kin, node: number, depth: number, env: VarScope | null): Filter | null {
    if (depth >= MEMO_DEPTH) return this.computeFilter(k, node, depth, env);
    const key = node * MEMO_DEPTH + depth;
    if (k.filt === null) k.filt = new Map();
    const hit = k.filt.get(key);
    if (hit !== undefined && hit.env === env) return hit.f;
    const out = this.computeFilter(k, node, depth, env);
    k.filt.set(key, { env, f: out });
    return out;
  }

  private computeFilter(k: Kin, node: number, depth: number, env: VarScope | null): Filter | null {
    const rec = this.recAt(k, node, depth);
    const si = this.plan.nodeSet[node];
    if (rec === null || si < 0) return null;
    const at = { rec, fi: this.plan.rtn.nodeField[node] % FIELD_STRIDE };
    const idx = this.names[si];
    const dfa = this.dfas[si];
    if (idx === null || dfa === null) return null;
    const pairs = this.plan.pairs[at.rec.ctor][at.fi];
    const fo = this.plan.off[at.rec.ctor][at.fi];
    let constrained = false;
    for (let i = 0; i < pairs.length; i += 2) if (at.rec.vars[pairs[i + 1]] >= 0 || this.plan.laterSort[at.rec.ctor][pairs[i]] >= 0) constrained = true;
    if (!constrained) return null;
    const set = this.bound.sets[si];
    const nSlots = set.set.slots.length;
    const n = dfa.stateCount;
    const bits = new Uint8Array(n);
    const far = new Int32Array(n).fill(INF);
    for (let st = 1; st < n; st++) {
      const m = idx.memberAt[st];
      if (m >= 0 && this.memberFits(k, at.rec, pairs, fo, set.kinds, m * nSlots, nSlots, env)) {
        bits[st] = ALLOWED | LIVE;
        far[st] = 0;
      }
    }
    // children have larger ids than their parents (namesDfa builds the trie in order)
    for (let st = n - 1; st >= 2; st--) {
      if (far[st] >= INF) continue;
      const p = idx.parent[st];
      bits[p] |= LIVE;
      if (far[st] + 1 < far[p]) far[p] = far[st] + 1;
    }
    return { bits, far };
  }

  /** Would member kinds `kinds[base .. base+nSlots)` agree with the record's partners (slots tied to one class checked together)? */
  private memberFits(k: Kin, rec: KRec, pairs: Int32Array, fo: number, kinds: Int32Array, base: number, nSlots: number, env: VarScope | null): boolean {
    const sk = this.sk;
    const sd = this.sd;
    const ns = Math.min(nSlots, 16);
    for (let s = 0; s < ns; s++) {
      sk[s] = kinds[base + s];
      sd[s] = ALL;
    }
    // per slot: meet with every partner's class
    for (let i = 0; i < pairs.length; i += 2) {
      const s = pairs[i] - fo;
      const b = rec.vars[pairs[i + 1]];
      if (b < 0 || s >= ns) continue;
      const rb = k.find(b);
      const fam = this.family(k, rb);
      sk[s] = meetKinds(fam, sk[s], k.kind[rb]);
      sd[s] &= k.dom[rb];
      if (sk[s] === -2 || sd[s] === 0 || (sk[s] >= 0 && ((sd[s] >>> sk[s]) & 1) === 0)) return false;
    }
    // a slot whose kind a later term takes: that sort must be writable with the kind — a constant
    // of an agreeing kind, or a variable in scope whose class agrees
    const later = this.plan.laterSort[rec.ctor];
    for (let s = 0; s < ns; s++) {
      const sort = later[fo + s];
      const ks = sk[s];
      if (sort < 0 || ks < 0 || ((this.constMask[sort] >>> ks) & 1) === 1) continue;
      if (this.plan.sortVars[sort] === 0 || !this.someVarAgrees(k, env, ks)) return false;
    }
    // slots whose partners share a class end up in one class: their kinds must agree too
    for (let i = 0; i < pairs.length; i += 2) {
      const b = rec.vars[pairs[i + 1]];
      if (b < 0) continue;
      const rb = k.find(b);
      for (let j = i + 2; j < pairs.length; j += 2) {
        const c = rec.vars[pairs[j + 1]];
        const s1 = pairs[i] - fo;
        const s2 = pairs[j] - fo;
        if (c < 0 || s1 === s2 || s1 >= ns || s2 >= ns || k.find(c) !== rb) continue;
        const mk = meetKinds(this.family(k, rb), sk[s1], sk[s2]);
        const md = sd[s1] & sd[s2];
        if (mk === -2 || md === 0 || (mk >= 0 && ((md >>> mk) & 1) === 0)) return false;
      }
    }
    return true;
  }

  /** Is some variable in scope (not shadowed) of a class that can take kind `ks`? */
  private someVarAgrees(k: Kin, env: VarScope | null, ks: number): boolean {
    for (let e = env; e !== null; e = e.next) {
      if (e.kv < 0 || e.kv >= k.size) continue;
      let hidden = false;
      for (let x = env; x !== e && x !== null; x = x.next) if (x.name === e.name) hidden = true;
      if (hidden) continue;
      const r = k.find(e.kv);
      const m = meetKinds(this.family(k, r), k.kind[r], ks);
      if (m !== -2 && ((k.dom[r] >>> m) & 1) === 1) return true;
    }
    return false;
  }

  /** The member id of names state `st` for the set read at `node` (-1 none). */
  memberAt(node: number, st: number): number {
    const si = this.plan.nodeSet[node];
    const idx = si < 0 ? null : this.names[si];
    return idx === null ? -1 : idx.memberAt[st];
  }
}

/** Key of a lexeme end: node (< 2^20), depth (capped at 2^12 - 1), member or class (< 2^20). */
const NEW_VAR = 0xfffff;
function lexKey(node: number, depth: number, x: number): number {
  return node * 4294967296 + depth * 1048576 + x;
}
/** Memo keys hold depths below this; deeper positions are computed without the memo. */
const MEMO_DEPTH = 4096;

function replaceRec(list: KRec | null, rec: KRec, vars: Int32Array): KRec | null {
  if (list === null) return null;
  if (list === rec) return new KRec(rec.depth, rec.ctor, vars, rec.next);
  return new KRec(list.depth, list.ctor, list.vars, replaceRec(list.next, rec, vars));
}
