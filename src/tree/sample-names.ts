/**
 * The sampler's name pass: given a freshly sampled tree whose shape is fixed, chooses the values of
 * `enter` and `known` fields and of name-set fields with kinds so that the tree resolves
 * (resolve.ts), or says it cannot (the sampler then draws another shape).
 *
 * Order: per scope, `enter` values are drawn without repetition; then `known` values of sets
 * standing alone (e.g. a qualifying table) from what the scope chain introduces; then `known`
 * values of related sets — owned by the qualifier when there is one, else among the members whose
 * innermost scope with an owner has exactly one; last, members of name sets with kinds, hole by
 * hole in tree order, among those whose kinds agree with what is fixed so far (union–find over the
 * whole tree's kind equations, so an agreeing choice never has to be undone).
 *
 * Cost: O(nodes + holes × members × slots) per attempt.
 */
import type { Field, Grammar } from '../description/ir.ts';
import type { BoundNames, BoundSet } from '../description/bound.ts';
import { kindHoles } from './resolve.ts';
import type { Tree, TreeValue } from './validate.ts';

interface Scope {
  readonly parent: Scope | null;
  /** set name → introduced members */
  readonly intro: Map<string, string[]>;
}

interface Hole {
  readonly obj: Record<string, TreeValue>;
  readonly field: Field;
  /** element index in a list field; -1 for a single value */
  readonly index: number;
  readonly scope: Scope;
}

const owned = new WeakMap<BoundSet, Uint32Array[]>();

/** owner member id → ids of the members it owns (inverse of BoundSet.ownerIds) */
function ownedBy(set: BoundSet, owner: BoundSet): Uint32Array[] {
  let inv = owned.get(set);
  if (inv) return inv;
  const lists: number[][] = owner.members.map(() => []);
  for (let m = 0; m < set.members.length; m++) {
    for (let k = set.ownerStart![m]!; k < set.ownerStart![m + 1]!; k++) lists[set.ownerIds![k]!]!.push(m);
  }
  inv = lists.map((l) => Uint32Array.from(l));
  owned.set(set, inv);
  return inv;
}

function setValue(h: { obj: Record<string, TreeValue>; field: Field; index: number }, v: string): void {
  if (h.index < 0) h.obj[h.field.name] = v;
  else (h.obj[h.field.name] as TreeValue[])[h.index] = v;
}

function getValue(h: { obj: Record<string, TreeValue>; field: Field; index: number }): TreeValue {
  return h.index < 0 ? h.obj[h.field.name]! : (h.obj[h.field.name] as TreeValue[])[h.index]!;
}

/**
 * Fills the tree's scoped and kinded names in place; false when no choice resolves (too few members
 * for the introductions, no column that one table in scope has, no member of an agreeing kind).
 * `pool(set)` gives the values a set may take (its bound members, or the sampler's placeholders).
 */
export function fillNames(grammar: Grammar, tree: Tree, bound: BoundNames, pool: (set: string) => readonly string[], rand: () => number): boolean {
  const ctorOf = new Map(grammar.constructors.map((c) => [c.name, c]));
  const setOf = new Map(bound.sets.map((s) => [s.set.name, s]));
  const enters: Hole[] = [];
  const knowns: Hole[] = [];
  const scopes: Scope[] = [];

  const walk = (node: Tree, outer: Scope | null, depth: number): void => {
    const c = ctorOf.get(node.kind)!;
    let scope = outer;
    if (c.scope || outer === null) {
      scope = { parent: outer, intro: new Map() };
      scopes.push(scope);
    }
    const obj = node as unknown as Record<string, TreeValue>;
    for (const f of c.fields) {
      const v = obj[f.name];
      const list = Array.isArray(v);
      const xs: readonly TreeValue[] = list ? (v as TreeValue[]) : v === null || v === undefined ? [] : [v];
      xs.forEach((x, i) => {
        if (f.type.kind === 'sort') walk(x as Tree, scope, depth + 1);
        else if (f.type.kind === 'names' && (f.scoping === 'enters' || f.scoping === 'known')) {
          (f.scoping === 'enters' ? enters : knowns).push({ obj, field: f, index: list ? i : -1, scope: scope! });
        }
      });
    }
  };
  walk(tree, null, 0);

  const shuffled = <T>(xs: readonly T[]): T[] => {
    const a = [...xs];
    for (let i = a.length - 1; i > 0; i--) {
      const j = Math.floor(rand() * (i + 1));
      [a[i], a[j]] = [a[j]!, a[i]!];
    }
    return a;
  };
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]!;

  // 1. introductions: distinct per scope and set
  for (const scope of scopes) {
    const mine = enters.filter((h) => h.scope === scope);
    const bySet = new Map<string, Hole[]>();
    for (const h of mine) bySet.set(h.field.type.name, [...(bySet.get(h.field.type.name) ?? []), h]);
    for (const [set, hs] of bySet) {
      const choices = shuffled(pool(set));
      if (choices.length < hs.length) return false;
      hs.forEach((h, i) => setValue(h, choices[i]!));
      scope.intro.set(set, choices.slice(0, hs.length));
    }
  }
  const chain = (s: Scope, set: string): string[] => {
    const out: string[] = [];
    for (let x: Scope | null = s; x !== null; x = x.parent) for (const m of x.intro.get(set) ?? []) if (!out.includes(m)) out.push(m);
    return out;
  };

  // 2. references to sets standing alone (the qualifiers of related references among them)
  for (const h of knowns) {
    const set = setOf.get(h.field.type.name)!;
    if (set.set.owner !== null) continue;
    const inScope = chain(h.scope, set.set.name);
    if (inScope.length === 0) return false;
    setValue(h, pick(inScope));
  }

  // 3. references through owners
  for (const h of knowns) {
    const set = setOf.get(h.field.type.name)!;
    if (set.set.owner === null) continue;
    if (set.ownerIds === null || !set.bound) {
      const p = pool(set.set.name);
      if (p.length === 0) return false;
      setValue(h, pick(p));
      continue;
    }
    const owner = setOf.get(set.set.owner)!;
    const inv = ownedBy(set, owner);
    const q = h.field.by === null ? null : (h.obj[h.field.by] as string | null);
    let candidates: number[];
    if (q !== null && q !== undefined) {
      const oi = owner.id.get(q);
      candidates = oi === undefined ? [] : [...inv[oi]!];
    } else {
      // innermost scope with an owner decides: exactly one owner there
      const decided = new Set<number>();
      candidates = [];
      for (let s: Scope | null = h.scope; s !== null; s = s.parent) {
        const count = new Map<number, number>();
        for (const o of s.intro.get(owner.set.name) ?? []) {
          const oi = owner.id.get(o);
          if (oi === undefined) continue;
          for (const m of inv[oi]!) count.set(m, (count.get(m) ?? 0) + 1);
        }
        for (const [m, n] of count) {
          if (decided.has(m)) continue;
          decided.add(m);
          if (n === 1) candidates.push(m);
        }
      }
    }
    if (candidates.length === 0) return false;
    setValue(h, set.members[pick(candidates)]!);
  }

  // 4. kinds: members whose kinds agree with what is already fixed
  if (grammar.kindFamilies.length > 0) {
    const { kinds, holes } = kindHoles(grammar, tree, bound);
    for (const h of holes) {
      const set = setOf.get(h.field.type.name)!;
      const n = set.set.slots.length;
      const none = new Int32Array(n).fill(-1);
      const slotKinds = (v: string) => {
        const m = set.id.get(v);
        return m === undefined ? none : set.kinds.subarray(m * n, m * n + n);
      };
      const obj = h.node as unknown as Record<string, TreeValue>;
      const cur = getValue({ obj, field: h.field, index: h.index }) as string;
      let chosen: string | null = kinds.fits(h.vars, slotKinds(cur)) ? cur : null;
      if (chosen === null) {
        const ok = pool(set.set.name).filter((v) => kinds.fits(h.vars, slotKinds(v)));
        if (ok.length === 0) return false;
        chosen = pick(ok);
      }
      kinds.assign(h.vars, slotKinds(chosen), '');
      setValue({ obj, field: h.field, index: h.index }, chosen);
    }
  }
  return true;
}
