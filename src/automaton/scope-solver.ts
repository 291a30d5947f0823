/**
 * Feasibility of one open scope: can the introductions still to come make every reference in it
 * resolve? The question the masks ask before allowing a name, a keyword that ends a scope's
 * introductions, or the end of the program (see docs/design/scope-masks.md).
 *
 * Model (general, from the description's relation between two name sets, e.g. each member of a
 * "referred" set such as Column belongs to one or more members of an "introduced" set such as
 * Table; the relation is bound at decode time with the names):
 * - `intro`: the members introduced into the scope so far (each at most once);
 * - `required`: members that must be introduced before the scope closes (qualified references
 *   `t.c` and plain references to an introduced-set member);
 * - `unqualified`: referred members that must have exactly one owner among the scope's members
 *   (SQLite's rule: otherwise "ambiguous column name" or "no such column");
 * - `optional`: referred members with at most one owner (none: an enclosing scope resolves them).
 * The scope may still take between `minMore` and `maxMore` introductions (from the grammar
 * position: e.g. a FROM still to come is 1..1 in a subquery without joins, 1..∞ with joins).
 *
 * Let S = intro ∪ X be the final members, X the introductions to come. S is valid when it holds
 * every required member and each unqualified reference has exactly one owner in S. Members that
 * own no unqualified reference ("free" members) can pad X at no risk, so the sizes of valid X are
 * what the search below needs: the smallest valid |X| (`m`) and the number of free members (`F`).
 * A valid X with minMore ≤ |X| ≤ maxMore exists if m ≤ maxMore and m + F ≥ minMore (pad a
 * smallest one with free members); when m + F < minMore a second search looks for a larger set
 * (other covers, grown with members that touch only optional references). Valid sets are not
 * closed under size: covers of sizes 1 and 3 may exist without one of size 2, hence the search.
 *
 * Search: exact cover by depth-first search on the uncovered reference with the fewest candidate
 * owners (candidates: not in S and owning no already-covered reference); depth ≤ number of
 * uncovered references; branch-and-bound on the best size found. Exponential in the worst case
 * (exact cover is NP-complete), bounded by `MAX_STEPS` nodes: past it the answer is "infeasible"
 * (sound for masks: a name is refused, never allowed wrongly; the limit is reported by the
 * `exhausted` flag). Allocation: scratch typed arrays owned by the solver, reused per call.
 */

/** A bound relation between a referred set (size `refCount`) and an introduced set (`introCount`). */
export class Relation {
  /** owners of referred member r: owners[ownStart[r] .. ownStart[r+1]) (ascending) */
  readonly ownStart: Int32Array;
  readonly owners: Int32Array;
  /** referred members of introduced member t: members[memStart[t] .. memStart[t+1]) (ascending) */
  readonly memStart: Int32Array;
  readonly members: Int32Array;

  constructor(readonly refCount: number, readonly introCount: number, pairs: readonly (readonly [ref: number, intro: number])[]) {
    // counting sort by referred member, each list sorted and without repeats, then transposed
    const cnt = new Int32Array(refCount + 1);
    for (let i = 0; i < pairs.length; i++) cnt[pairs[i][0] + 1]++;
    for (let r = 0; r < refCount; r++) cnt[r + 1] += cnt[r];
    const raw = new Int32Array(pairs.length);
    const fill = cnt.slice(0, refCount);
    for (let i = 0; i < pairs.length; i++) raw[fill[pairs[i][0]]++] = pairs[i][1];
    const ownStart = new Int32Array(refCount + 1);
    let n = 0;
    for (let r = 0; r < refCount; r++) {
      ownStart[r] = n;
      const seg = raw.subarray(cnt[r], cnt[r + 1]).sort();
      for (let i = 0; i < seg.length; i++) if (i === 0 || seg[i] !== seg[i - 1]) raw[n++] = seg[i];
    }
    ownStart[refCount] = n;
    this.ownStart = ownStart;
    this.owners = raw.slice(0, n);
    const memStart = new Int32Array(introCount + 1);
    for (let i = 0; i < n; i++) memStart[this.owners[i] + 1]++;
    for (let t = 0; t < introCount; t++) memStart[t + 1] += memStart[t];
    const members = new Int32Array(n);
    const at = memStart.slice(0, introCount);
    // referred members ascending, so each introduced member's list comes out ascending
    for (let r = 0; r < refCount; r++) for (let i = ownStart[r]; i < ownStart[r + 1]; i++) members[at[this.owners[i]]++] = r;
    this.memStart = memStart;
    this.members = members;
  }

  /** True when introduced member t owns referred member r. */
  owns(t: number, r: number): boolean {
    const m = this.members;
    for (let i = this.memStart[t], e = this.memStart[t + 1]; i < e; i++) if (m[i] === r) return true;
    return false;
  }
}

const NONE = new Int32Array(0);

/** Unbounded number of further introductions. */
export const MANY = 0x3fffffff;
/** Search nodes per question before giving up (answer: infeasible). */
export const MAX_STEPS = 20000;
export const INFEASIBLE = MANY;

/**
 * Answers feasibility questions about one scope; owns its scratch arrays (one solver per
 * relation, used by one thread of control).
 */
export class ScopeSolver {
  /** per introduced member: 1 when in S (introduced or chosen) */
  private readonly inS: Uint8Array;
  /** per referred member: number of owners in S, for the references of the current question */
  private readonly cover: Int32Array;
  /** per referred member: 1 when it is an unqualified reference of the current question */
  private readonly isRef: Uint8Array;
  private readonly refs: Int32Array;
  private nRefs = 0;
  private best = MANY;
  private steps = 0;
  /** the last question ran out of search steps */
  exhausted = false;

  constructor(readonly rel: Relation) {
    this.inS = new Uint8Array(rel.introCount);
    this.cover = new Int32Array(rel.refCount);
    this.isRef = new Uint8Array(rel.refCount);
    this.refs = new Int32Array(rel.refCount);
  }

  /**
   * The fewest further introductions that make the scope valid (INFEASIBLE when none does), and
   * via `free()` right after, the number of free members. `intro`, `required`, `unqualified` are
   * member lists (duplicates allowed).
   */
  minMore(intro: ArrayLike<number>, required: ArrayLike<number>, unqualified: ArrayLike<number>, optional: ArrayLike<number> = NONE): number {
    const rel = this.rel;
    const { inS, cover, isRef, refs } = this;
    this.exhausted = false;
    this.markRefs(unqualified, optional);
    let added = 0;
    let ok = true;
    for (let i = 0; i < intro.length && ok; i++) ok = this.add(intro[i]);
    for (let i = 0; i < required.length && ok; i++) {
      const t = required[i];
      if (inS[t] === 0) {
        ok = this.add(t);
        added++;
      }
    }
    this.best = MANY;
    if (ok) {
      this.steps = 0;
      this.search(added);
    }
    // free members: not in S, owning no reference
    let free = 0;
    if (this.best < MANY) {
      for (let t = 0; t < rel.introCount; t++) if (inS[t] === 0 && this.ownsNoRef(t)) free++;
    }
    this.lastFree = free;
    // reset scratch
    for (let i = 0; i < intro.length; i++) inS[intro[i]] = 0;
    for (let i = 0; i < required.length; i++) inS[required[i]] = 0;
    for (let i = 0; i < this.nRefs; i++) {
      isRef[refs[i]] = 0;
      cover[refs[i]] = 0;
    }
    return this.best;
  }

  private lastFree = 0;
  /** Free members counted by the last `minMore` (0 when it was infeasible). */
  free(): number {
    return this.lastFree;
  }

  /**
   * True when some valid final set takes between `lo` and `hi` further introductions.
   * (`hi` = MANY: unbounded.)
   */
  feasible(intro: ArrayLike<number>, required: ArrayLike<number>, unqualified: ArrayLike<number>, lo: number, hi: number, optional: ArrayLike<number> = NONE): boolean {
    const m = this.minMore(intro, required, unqualified, optional);
    if (m >= MANY || m > hi) return false;
    if (m + this.lastFree >= lo) return true;
    // a larger set is needed: search for one of size ≥ lo and ≤ hi (grown with members that
    // cover only optional references or none)
    return this.coverAtLeast(intro, required, unqualified, optional, lo, hi);
  }

  /** Marks the references of a question: 1 mandatory (exactly one owner), 2 optional (at most one). */
  private markRefs(unqualified: ArrayLike<number>, optional: ArrayLike<number>): void {
    const { isRef, refs } = this;
    this.nRefs = 0;
    for (let i = 0; i < unqualified.length; i++) {
      const r = unqualified[i];
      if (isRef[r] !== 1) {
        if (isRef[r] === 0) refs[this.nRefs++] = r;
        isRef[r] = 1;
      }
    }
    for (let i = 0; i < optional.length; i++) {
      const r = optional[i];
      if (isRef[r] === 0) {
        isRef[r] = 2;
        refs[this.nRefs++] = r;
      }
    }
  }

  /** Some valid X (without padding) has need ≤ |X| ≤ hi. Same scratch protocol as minMore. */
  private coverAtLeast(intro: ArrayLike<number>, required: ArrayLike<number>, unqualified: ArrayLike<number>, optional: ArrayLike<number>, need: number, hi: number): boolean {
    const { inS, cover, isRef, refs } = this;
    this.markRefs(unqualified, optional);
    let added = 0;
    for (let i = 0; i < intro.length; i++) this.add(intro[i]);
    for (let i = 0; i < required.length; i++) {
      if (inS[required[i]] === 0) {
        this.add(required[i]);
        added++;
      }
    }
    this.steps = 0;
    const found = this.searchSize(added, need, hi);
    for (let i = 0; i < intro.length; i++) inS[intro[i]] = 0;
    for (let i = 0; i < required.length; i++) inS[required[i]] = 0;
    for (let i = 0; i < this.nRefs; i++) {
      isRef[refs[i]] = 0;
      cover[refs[i]] = 0;
    }
    return found;
  }

  private searchSize(size: number, need: number, hi: number, from = 0): boolean {
    if (size > hi) return false;
    if (++this.steps > MAX_STEPS) {
      this.exhausted = true;
      return false;
    }
    const { ownStart, owners } = this.rel;
    let pick = -1;
    for (let i = 0; i < this.nRefs && pick < 0; i++) if (this.cover[this.refs[i]] === 0 && this.isRef[this.refs[i]] === 1) pick = this.refs[i];
    if (pick < 0) {
      if (size >= need) return true;
      // every mandatory reference is covered: grow with members that cover only optional ones
      // (in increasing order, so each set is tried once)
      for (let t = from; t < this.rel.introCount; t++) {
        if (!this.candidate(t)) continue;
        this.add(t);
        const ok = this.searchSize(size + 1, need, hi, t + 1);
        this.remove(t);
        if (ok || this.exhausted) return ok;
      }
      return false;
    }
    for (let k = ownStart[pick], e = ownStart[pick + 1]; k < e; k++) {
      const t = owners[k];
      if (!this.candidate(t)) continue;
      this.add(t);
      const ok = this.searchSize(size + 1, need, hi, from);
      this.remove(t);
      if (ok) return true;
    }
    return false;
  }

  private ownsNoRef(t: number): boolean {
    const { members, memStart } = this.rel;
    for (let i = memStart[t], e = memStart[t + 1]; i < e; i++) if (this.isRef[members[i]] !== 0) return false;
    return true;
  }

  /** Puts t in S; false when a reference then has two owners (the scratch stays consistent). */
  private add(t: number): boolean {
    if (this.inS[t] === 1) return true;
    this.inS[t] = 1;
    const { members, memStart } = this.rel;
    let ok = true;
    for (let i = memStart[t], e = memStart[t + 1]; i < e; i++) {
      const r = members[i];
      if (this.isRef[r] !== 0 && ++this.cover[r] > 1) ok = false;
    }
    return ok;
  }

  private remove(t: number): void {
    this.inS[t] = 0;
    const { members, memStart } = this.rel;
    for (let i = memStart[t], e = memStart[t + 1]; i < e; i++) {
      const r = members[i];
      if (this.isRef[r] !== 0) this.cover[r]--;
    }
  }

  /** t may join S: not in it, and owns no reference that already has an owner. */
  private candidate(t: number): boolean {
    if (this.inS[t] === 1) return false;
    const { members, memStart } = this.rel;
    for (let i = memStart[t], e = memStart[t + 1]; i < e; i++) {
      const r = members[i];
      if (this.isRef[r] !== 0 && this.cover[r] !== 0) return false;
    }
    return true;
  }

  private search(size: number): void {
    if (size >= this.best) return;
    if (++this.steps > MAX_STEPS) {
      this.exhausted = true;
      return;
    }
    const { ownStart, owners } = this.rel;
    // the uncovered reference with the fewest candidates
    let pick = -1;
    let pickCount = MANY;
    for (let i = 0; i < this.nRefs; i++) {
      const r = this.refs[i];
      if (this.cover[r] !== 0 || this.isRef[r] !== 1) continue;
      let n = 0;
      for (let k = ownStart[r], e = ownStart[r + 1]; k < e && n < pickCount; k++) if (this.candidate(owners[k])) n++;
      if (n < pickCount) {
        pick = r;
        pickCount = n;
        if (n === 0) break;
      }
    }
    if (pick < 0) {
      this.best = size; // everything covered exactly once
      return;
    }
    if (pickCount === 0 || size + 1 >= this.best) return;
    for (let k = ownStart[pick], e = ownStart[pick + 1]; k < e; k++) {
      const t = owners[k];
      if (!this.candidate(t)) continue;
      this.add(t); // cannot fail: t owns no covered reference
      this.search(size + 1);
      this.remove(t);
      if (this.exhausted || this.best === size + 1) return;
    }
  }
}
