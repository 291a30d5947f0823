/**
 * Name resolution and kinds on a well-typed tree: the rules of `scope`, `enter`, `known`, `by` and
 * `kind` (README "Scopes, relations and kinds"; docs/design/scopes-and-kinds.md), checked on a
 * whole tree. This is the reference the parser, the validator, the sampler and the masks agree
 * with: a tree "resolves" when resolveTree returns no issue.
 *
 * Example (sql, bound from the demo database):
 *   resolveTree(g, parse('SELECT category FROM members'), names)
 *   // [{ path: '$.items[0].col.column', message: '`category` is not a Column of any Table in scope (members)', … }]
 *
 * Rules, in one place (the masks implement exactly these; see /work/coord/issue9-ir.md):
 * - Scopes: a node whose constructor has `scope` opens one, and so does the root. A field's scope
 *   is the nearest ancestor-or-self node that opens one; the chain goes outwards to the root.
 * - `enter X`: the value is introduced into its scope, wherever it stands in the text; a value is
 *   introduced at most once per scope.
 * - `known X`, X standing alone: the value was introduced into some scope of the chain.
 * - `known X`, X `in Y`: with `by f` and f present, f's member owns the value. Otherwise the
 *   innermost scope of the chain where some introduced Y owns the value decides: exactly one owner
 *   there, or the reference is ambiguous; no such scope, unresolved. Owners not bound: membership
 *   only. Members that are not bound (or values that are not members) are left to validation.
 * - Kinds: every kinded-sort node and every variable binding (`new`; its `bound` uses share it)
 *   has a kind; a name-set member's slots have the kinds bound to it (or none). Each `kind` clause
 *   equates two kinds; an equated group agrees when all its bound kinds lie on one ancestor chain.
 *
 * Cost: O(nodes + references × scope depth × owners per member), plus near-constant union–find.
 */
import type { Constructor, Field, Grammar, NameBindings, Span } from '../description/ir.ts';
import { bindNames, meetKinds, type BoundNames, type BoundSet } from '../description/bound.ts';
import type { Tree, TreeValue } from './node.ts';

export interface ResolveIssue {
  /** JSON path of the offending value */
  readonly path: string;
  /** the node holding the field, the field, and the element index (0 for a single value) */
  readonly node: Tree;
  readonly field: string;
  readonly index: number;
  readonly code: 'unresolved' | 'ambiguous' | 'not-owned' | 'duplicate' | 'kind';
  readonly message: string;
}

interface Scope {
  readonly parent: Scope | null;
  /** set index → introduced member → path of the introduction */
  readonly intro: Map<number, Map<string, string>>;
}

interface Ref {
  readonly scope: Scope;
  readonly field: Field;
  readonly set: BoundSet;
  readonly value: string;
  /** the `by` field's value: undefined without `by`, null when the qualifier is absent */
  readonly qualifier: string | null | undefined;
  readonly node: Tree;
  readonly index: number;
  readonly path: string;
}

const q = (s: string) => '`' + s + '`';

function pathKey(path: string, key: string): string {
  return /^[A-Za-z_$][A-Za-z0-9_$]*$/.test(key) ? `${path}.${key}` : `${path}[${JSON.stringify(key)}]`;
}

/** Values of a field as a list (optional absent → none). */
function elements(v: TreeValue | undefined): readonly TreeValue[] {
  return Array.isArray(v) ? v : v === null || v === undefined ? [] : [v as TreeValue];
}

/**
 * Union–find over kind variables of one tree. A class holds the most specific bound kind so far
 * (−1: none) and a description of where it came from, for messages.
 */
export class Kinds {
  private readonly parent: number[] = [];
  private readonly kind: number[] = [];
  private readonly family: number[] = [];
  private readonly witness: string[] = [];

  constructor(private readonly bound: BoundNames) {}

  fresh(family: number, kind = -1, witness = ''): number {
    const id = this.parent.length;
    this.parent.push(id);
    this.kind.push(kind);
    this.family.push(family);
    this.witness.push(witness);
    return id;
  }

  find(x: number): number {
    let r = x;
    while (this.parent[r] !== r) r = this.parent[r]!;
    while (this.parent[x] !== r) {
      const n = this.parent[x]!;
      this.parent[x] = r;
      x = n;
    }
    return r;
  }

  /** Merges two classes; on disagreement returns a message and leaves them apart. */
  union(a: number, b: number): string | null {
    const ra = this.find(a);
    const rb = this.find(b);
    if (ra === rb) return null;
    const fam = this.bound.families[this.family[ra]!]!;
    const ka = this.kind[ra]!;
    const kb = this.kind[rb]!;
    const m = meetKinds(fam, ka, kb);
    if (m === -2) return `kinds disagree: ${this.witness[ra]}, but ${this.witness[rb]}`;
    this.parent[rb] = ra;
    if (m !== ka) {
      this.kind[ra] = m;
      this.witness[ra] = this.witness[rb]!;
    }
    return null;
  }

  kindOf(x: number): number {
    return this.kind[this.find(x)]!;
  }

  /**
   * Would giving variables `vars` the kinds `ks` (−1: none) keep every class consistent? Variables
   * of one class are checked together.
   */
  fits(vars: readonly number[], ks: ArrayLike<number>): boolean {
    const seen = new Map<number, number>();
    for (let i = 0; i < vars.length; i++) {
      const k = ks[i]!;
      if (k < 0) continue;
      const r = this.find(vars[i]!);
      const cur = seen.get(r) ?? this.kind[r]!;
      const m = meetKinds(this.bound.families[this.family[r]!]!, cur, k);
      if (m === -2) return false;
      seen.set(r, m);
    }
    return true;
  }

  /** Gives the variables these kinds (call only after `fits` said yes). */
  assign(vars: readonly number[], ks: ArrayLike<number>, witness: string): void {
    for (let i = 0; i < vars.length; i++) {
      const k = ks[i]!;
      if (k < 0) continue;
      const r = this.find(vars[i]!);
      const m = meetKinds(this.bound.families[this.family[r]!]!, this.kind[r]!, k);
      if (m !== this.kind[r]) {
        this.kind[r] = m;
        this.witness[r] = witness;
      }
    }
  }
}

/** Accepts raw bindings or already-bound names. */
function asBound(grammar: Grammar, names: NameBindings | BoundNames | undefined): BoundNames {
  if (names !== undefined && 'sets' in names && 'families' in names && (names as BoundNames).grammar === grammar) return names as BoundNames;
  return bindNames(grammar, names as NameBindings | undefined);
}

/**
 * Every scope and kind violation of a well-typed tree (validateTree's structure is assumed; values
 * that are not members of a bound set are skipped — validation reports them). Issues come in tree
 * order (depth first, field order): kind issues first, then scope issues.
 */
export function resolveTree(grammar: Grammar, tree: Tree, names?: NameBindings | BoundNames): ResolveIssue[] {
  const bound = asBound(grammar, names);
  if (!grammar.scoped) return [];
  return analyse(grammar, tree, bound, null).issues;
}

/** A name-set value whose member's kinds are still to be chosen (the sampler's kind pass). */
export interface SlotHole {
  readonly node: Tree;
  readonly field: Field;
  /** element index in a list field; -1 for a single value */
  readonly index: number;
  /** the kind variable of each slot of the member, in slot order */
  readonly vars: readonly number[];
}

/**
 * The kind variables of a tree with every equation applied but no member's kinds yet (for fields
 * that are neither `enter` nor `known`): the sampler assigns members hole by hole, keeping each
 * consistent (Kinds.fits / Kinds.assign), and every assignment made that way resolves.
 */
export function kindHoles(grammar: Grammar, tree: Tree, bound: BoundNames): { kinds: Kinds; holes: SlotHole[] } {
  const holes: SlotHole[] = [];
  const { kinds } = analyse(grammar, tree, bound, holes);
  return { kinds, holes };
}

function analyse(grammar: Grammar, tree: Tree, bound: BoundNames, holes: SlotHole[] | null): { issues: ResolveIssue[]; kinds: Kinds } {
  const ctorOf = new Map(grammar.constructors.map((c) => [c.name, c]));
  const setIndex = new Map(grammar.nameSets.map((s) => [s.name, s.index]));
  const familyIndex = new Map(grammar.kindFamilies.map((f) => [f.name, f.index]));
  const sortFamily = new Map(grammar.sorts.map((s) => [s.name, s.family]));
  const tokenFamily = new Map(grammar.tokens.map((t) => [t.name, t.family]));
  const issues: ResolveIssue[] = [];
  const refs: Ref[] = [];
  const kinds = new Kinds(bound);

  const issue = (node: Tree, field: string, index: number, path: string, code: ResolveIssue['code'], message: string) =>
    issues.push({ path, node, field, index, code, message });

  const kindWords = (fam: number, k: number) => bound.families[fam]!.kinds[k] ?? '?';

  /** kind variables of a names value, one per slot */
  const slotVars = (node: Tree, f: Field, index: number, value: string): number[] => {
    const set = bound.sets[setIndex.get(f.type.name)!]!;
    const slots = set.set.slots;
    if (holes !== null && f.scoping !== 'enters' && f.scoping !== 'known') {
      const vars = slots.map((slot) => kinds.fresh(familyIndex.get(slot.family)!, -1, ''));
      holes.push({ node, field: f, index, vars });
      return vars;
    }
    const m = set.id.get(value);
    return slots.map((slot, s) => {
      const fam = familyIndex.get(slot.family)!;
      const k = m === undefined ? -1 : set.kinds[m * slots.length + s]!;
      const witness = slots.length === 1 ? `${q(value)} has kind ${kindWords(fam, k)}` : `${q(value)} has kind ${kindWords(fam, k)} as ${slot.name}`;
      return kinds.fresh(fam, k, witness);
    });
  };

  const visit = (node: Tree, path: string, outer: Scope | null, vars: ReadonlyMap<string, number>): number => {
    const c: Constructor = ctorOf.get(node.kind)!;
    const scope: Scope = c.scope || outer === null ? { parent: outer, intro: new Map() } : outer;
    const fam = sortFamily.get(c.sort) ?? null;
    const self = fam === null ? -1 : kinds.fresh(familyIndex.get(fam)!, -1, `${q(node.kind)} at ${path}`);
    let env = vars;
    /** per field: the kind variables of its elements (sort child, variable, or the slots of a member) */
    const terms = new Map<string, { elems: number[][]; paths: string[] }>();
    for (const f of c.fields) {
      const fpath = pathKey(path, f.name);
      const v = node[f.name];
      const list = Array.isArray(v);
      const elems: number[][] = [];
      const paths: string[] = [];
      const bindsHere: [string, number][] = [];
      elements(v).forEach((x, i) => {
        const p = list ? `${fpath}[${i}]` : fpath;
        paths.push(p);
        if (f.type.kind === 'sort') {
          elems.push([visit(x as Tree, p, scope, env)]);
          return;
        }
        if (f.type.kind === 'token') {
          const tf = tokenFamily.get(f.type.name) ?? null;
          if (tf === null || (f.scoping !== 'binds' && f.scoping !== 'bound')) return void elems.push([]);
          if (f.scoping === 'binds') {
            const id = kinds.fresh(familyIndex.get(tf)!, -1, '');
            bindsHere.push([String(x), id]);
            elems.push([id]);
          } else {
            const id = env.get(String(x));
            elems.push(id === undefined ? [] : [id]);
          }
          return;
        }
        // a name-set value
        const set = bound.sets[setIndex.get(f.type.name)!]!;
        const value = x as string;
        if (f.scoping === 'enters') {
          const si = set.set.index;
          let m = scope.intro.get(si);
          if (!m) scope.intro.set(si, (m = new Map()));
          const first = m.get(value);
          if (first !== undefined) {
            issue(node, f.name, i, p, 'duplicate', `${q(value)} is already a ${set.set.name} of this scope (at ${first}); a scope takes each ${set.set.name} once`);
          } else m.set(value, p);
        } else if (f.scoping === 'known') {
          let qualifier: string | null | undefined;
          if (f.by !== null) qualifier = (node[f.by] as string | null | undefined) ?? null;
          refs.push({ scope, field: f, set, value, qualifier, node, index: i, path: p });
        }
        elems.push(set.set.slots.length > 0 ? slotVars(node, f, list ? i : -1, value) : []);
      });
      // variables bound by this field are visible to the fields after it (and below them)
      if (bindsHere.length > 0) {
        const next = new Map(env);
        for (const [name, id] of bindsHere) next.set(name, id);
        env = next;
      }
      terms.set(f.name, { elems, paths });
    }
    // kind clauses: each element of the field equals the referenced kind
    for (const f of c.fields) {
      if (f.kindOf === null) continue;
      const mine = terms.get(f.name)!;
      let others: number[];
      if (f.kindOf.kind === 'self') others = self >= 0 ? [self] : [];
      else {
        const g = c.fields.find((x) => x.name === (f.kindOf as { field: string }).field)!;
        const slot = f.kindOf.slot;
        const si = slot === null ? 0 : bound.sets[setIndex.get(g.type.name)!]!.set.slots.findIndex((s) => s.name === slot);
        others = terms.get(g.name)!.elems.map((e) => e[si]).filter((x): x is number => x !== undefined);
      }
      mine.elems.forEach((e, i) => {
        const a = e[0];
        if (a === undefined) return;
        for (const b of others) {
          const clash = kinds.union(b, a);
          if (clash !== null) issue(node, f.name, i, mine.paths[i]!, 'kind', clash);
        }
      });
    }
    return self;
  };

  const resolveRef = (r: Ref): [ResolveIssue['code'], string] | null => {
    const set = r.set;
    const m = set.id.get(r.value);
    const ownerName = set.set.owner;
    // not a member: validation's message, except for a related set with owners (no owner has it)
    if (set.bound && m === undefined && (ownerName === null || set.ownerIds === null)) return null;
    if (ownerName === null) {
      for (let s: Scope | null = r.scope; s !== null; s = s.parent) if (s.intro.get(set.set.index)?.has(r.value)) return null;
      const inScope = chainMembers(r.scope, set.set.index);
      return ['unresolved', `${q(r.value)} is not a ${set.set.name} in scope (${inScope.length > 0 ? 'in scope: ' + inScope.join(', ') : `no ${set.set.name} is in scope`})`];
    }
    if (set.ownerIds === null) return null; // owners not bound: membership only
    const owner = bound.sets[setIndex.get(ownerName)!]!;
    const owns = (o: string): boolean => {
      const oi = owner.id.get(o);
      if (oi === undefined || m === undefined) return false;
      for (let k = set.ownerStart![m]!; k < set.ownerStart![m + 1]!; k++) if (set.ownerIds![k] === oi) return true;
      return false;
    };
    if (typeof r.qualifier === 'string') {
      if (owns(r.qualifier)) return null;
      return ['not-owned', `${q(r.value)} is not a ${set.set.name} of ${q(r.qualifier)}${ownedList(set, owner, r.qualifier)}`];
    }
    for (let s: Scope | null = r.scope; s !== null; s = s.parent) {
      const introduced = s.intro.get(owner.set.index);
      if (!introduced) continue;
      const having = [...introduced.keys()].filter(owns);
      if (having.length === 1) return null;
      if (having.length > 1) {
        const how = r.field.by !== null ? `; name its ${ownerName}` : '';
        return ['ambiguous', `${q(r.value)} is ambiguous: a ${set.set.name} of ${having.join(' and ')} in the same scope${how}`];
      }
    }
    const inScope = chainMembers(r.scope, owner.set.index);
    // a scope naming an unknown owner cannot be judged: validation reports the unknown name
    if (owner.bound && inScope.some((o) => !owner.id.has(o))) return null;
    return ['unresolved', `${q(r.value)} is not a ${set.set.name} of any ${ownerName} in scope (${inScope.length > 0 ? inScope.join(', ') : `no ${ownerName} is in scope`})`];
  };

  const chainMembers = (scope: Scope, set: number): string[] => {
    const out: string[] = [];
    for (let s: Scope | null = scope; s !== null; s = s.parent) for (const k of s.intro.get(set)?.keys() ?? []) if (!out.includes(k)) out.push(k);
    return out;
  };

  visit(tree, '$', null, new Map());
  // references are resolved once the whole tree is walked: an introduction may come later in the
  // text, in the reference's own scope or in an enclosing one
  for (const r of refs) {
    const msg = resolveRef(r);
    if (msg !== null) issue(r.node, r.field.name, r.index, r.path, msg[0], msg[1]);
  }
  return { issues, kinds };
}

/** " (its Columns: a, b, …)" — up to eight members owned by `o`. */
function ownedList(set: BoundSet, owner: BoundSet, o: string): string {
  const oi = owner.id.get(o);
  if (oi === undefined) return '';
  const out: string[] = [];
  for (let m = 0; m < set.members.length && out.length <= 8; m++) {
    for (let k = set.ownerStart![m]!; k < set.ownerStart![m + 1]!; k++) if (set.ownerIds![k] === oi) out.push(set.members[m]!);
  }
  if (out.length === 0) return '';
  return ` (its ${set.set.name} names: ${out.slice(0, 8).join(', ')}${out.length > 8 ? ', …' : ''})`;
}

/** Spans the parser records: node → field → span of the value (a list of spans for list fields). */
export type ValueSpans = WeakMap<object, Map<string, Span | Span[]>>;

/**
 * The issue that starts first in the text, with its span: a name or token value's own span; for a
 * sort-typed value (a kind issue on a subterm), the first span recorded inside that subterm.
 */
export function locateIssue(issues: readonly ResolveIssue[], spans: ValueSpans): { span: Span; message: string } | null {
  let best: { span: Span; message: string } | null = null;
  const inside = (v: unknown, depth: number): Span | null => {
    if (depth > 10_000 || v === null || typeof v !== 'object') return null;
    if (Array.isArray(v)) {
      for (const x of v) {
        const s = inside(x, depth + 1);
        if (s) return s;
      }
      return null;
    }
    let first: Span | null = null;
    const own = spans.get(v);
    for (const [key, x] of Object.entries(v as Record<string, unknown>)) {
      if (key === 'kind') continue;
      const s = own?.get(key);
      const cand = s === undefined ? inside(x, depth + 1) : Array.isArray(s) ? (s[0] ?? null) : s;
      if (cand && cand.end > cand.start && (first === null || cand.start < first.start)) first = cand;
    }
    return first;
  };
  for (const i of issues) {
    const s = spans.get(i.node)?.get(i.field);
    let span: Span | null = s === undefined ? null : Array.isArray(s) ? (s[i.index] ?? null) : s;
    if (span === null || span.end === span.start) {
      const v = i.node[i.field];
      span = inside(Array.isArray(v) ? v[i.index] : v, 0);
    }
    if (span === null) continue;
    if (best === null || span.start < best.span.start) best = { span, message: i.message };
  }
  return best;
}
