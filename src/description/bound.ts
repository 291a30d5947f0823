/**
 * Bound names as integer ids: what a grammar's name sets, their owners and their kinds are bound
 * to, checked against the grammar and laid out in flat arrays once, so the resolver (resolve.ts),
 * the sampler and the masks index them without string lookups.
 *
 * Example (sql, `--db coop.db`):
 *   const b = bindNames(grammar, names);
 *   const col = b.sets[1];                        // Column (NameSet.index 1)
 *   const m = col.id.get('name')!;                // member id
 *   col.ownerIds.subarray(col.ownerStart[m], col.ownerStart[m + 1])  // Table member ids having `name`
 *
 * Binding never changes the grammar (no recompilation): its cost is linear in the members, owners
 * and kinds given (a schema of 200 tables × 20 columns binds in a few milliseconds).
 *
 * What is not given is not checked (and `incomplete` says so, for a warning): a set without members
 * accepts any spelling of its token class; a set `in Owner` bound without owners has every member
 * resolve without an owner (membership only); a member without kinds is unconstrained (-1).
 */
import type { Grammar, KindFamily, NameBindings, NameSet } from './ir.ts';
import { NAME_FACTS } from './ir.ts';

/**
 * A names file or database that cannot be used; `message` names the file and the JSON path
 * (defined here, not in names.ts, so that names.ts → bound.ts stays a one-way import).
 */
export class NamesError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'NamesError';
  }
}

/** One name set's bound members, owners and kinds. Member id = index in `members`. */
export interface BoundSet {
  readonly set: NameSet;
  /** false when the set is not bound (no members given): any spelling of its token class is accepted */
  readonly bound: boolean;
  readonly members: readonly string[];
  readonly id: ReadonlyMap<string, number>;
  /**
   * For a set `in Owner` bound with owners: member m's owners are the owner-set member ids
   * `ownerIds[ownerStart[m] .. ownerStart[m + 1])`, increasing; ownerStart has members.length + 1
   * entries. null when the set has no owner or no owners were given.
   */
  readonly ownerStart: Uint32Array | null;
  readonly ownerIds: Uint32Array | null;
  /**
   * Kind of member m in slot s: `kinds[m * set.slots.length + s]`, an id of the slot's family
   * (BoundFamily), or -1 when unconstrained. Length members.length × slots.
   */
  readonly kinds: Int32Array;
}

/** One kind family's bound kinds. Kind id = index in `kinds`. */
export interface BoundFamily {
  readonly family: KindFamily;
  readonly kinds: readonly string[];
  readonly id: ReadonlyMap<string, number>;
  /** parent kind id, or -1 for a kind without parent; the parent chain has no cycle */
  readonly parent: Int32Array;
  /** number of ancestors (0 for a root) */
  readonly depth: Uint32Array;
}

export interface BoundNames {
  readonly grammar: Grammar;
  /** by NameSet.index */
  readonly sets: readonly BoundSet[];
  /** by KindFamily.index */
  readonly families: readonly BoundFamily[];
  /** what is not bound, in words (for a warning): e.g. "Column: no owners given (known checks membership only)" */
  readonly incomplete: readonly string[];
}

/**
 * Do kinds `a` and `b` of one family agree — is one the other or an ancestor of it? -1 (unconstrained)
 * agrees with every kind. Returns the more specific of the two when they agree, else -2.
 * Cost: O(depth).
 */
export function meetKinds(f: BoundFamily, a: number, b: number): number {
  if (a < 0) return b;
  if (b < 0 || a === b) return a;
  let lo = a;
  let hi = b;
  if (f.depth[lo]! < f.depth[hi]!) {
    lo = b;
    hi = a;
  }
  // walk the deeper one up to the other's depth
  let x = lo;
  while (f.depth[x]! > f.depth[hi]!) x = f.parent[x]!;
  return x === hi ? lo : -2;
}

const cache = new WeakMap<Grammar, WeakMap<object, BoundNames>>();
const EMPTY: NameBindings = Object.freeze({});

/**
 * Checks `names` against the grammar and lays them out (cached per grammar and names object).
 * Throws NamesError naming the source and JSON path of the first problem: a member that is not
 * a lexeme of the set's token class, an owner that is not a member of the owner set, a kind the
 * family does not have, a kind cycle.
 */
export function bindNames(grammar: Grammar, names: NameBindings | undefined): BoundNames {
  const key = names ?? EMPTY;
  let perGrammar = cache.get(grammar);
  if (!perGrammar) cache.set(grammar, (perGrammar = new WeakMap()));
  const hit = perGrammar.get(key);
  if (hit) return hit;
  const bound = bindUncached(grammar, key);
  perGrammar.set(key, bound);
  return bound;
}

function pathKey(path: string, key: string): string {
  return /^[A-Za-z_$][A-Za-z0-9_$]*$/.test(key) ? `${path}.${key}` : `${path}[${JSON.stringify(key)}]`;
}

function bindUncached(grammar: Grammar, names: NameBindings): BoundNames {
  const facts = names[NAME_FACTS];
  const source = facts?.source ?? 'names';
  const incomplete: string[] = [];

  const families: BoundFamily[] = grammar.kindFamilies.map((family) => {
    const given = facts?.families[family.name];
    const kinds: string[] = [];
    const id = new Map<string, number>();
    const add = (k: string) => {
      if (!id.has(k)) {
        id.set(k, kinds.length);
        kinds.push(k);
      }
    };
    if (given) for (const k of Object.keys(given)) add(k);
    // kinds named only by members (no family list given) are added as roots
    if (!given) {
      for (const set of grammar.nameSets) {
        const per = facts?.kinds[set.name];
        if (!per) continue;
        for (const ks of Object.values(per)) {
          ks.forEach((k, s) => {
            if (k !== null && set.slots[s]?.family === family.name) add(k);
          });
        }
      }
    }
    const parent = new Int32Array(kinds.length).fill(-1);
    if (given) {
      for (const [k, p] of Object.entries(given)) {
        if (p === null) continue;
        const pi = id.get(p);
        if (pi === undefined) {
          throw new NamesError(`${source}: ${pathKey(pathKey('$', family.name), k)}: unknown parent kind '${p}' (kinds of ${family.name}: ${kinds.join(', ') || 'none'})`);
        }
        parent[id.get(k)!] = pi;
      }
    }
    const depth = new Uint32Array(kinds.length);
    for (let k = 0; k < kinds.length; k++) {
      let d = 0;
      const seen = [kinds[k]!];
      for (let x = parent[k]!; x >= 0; x = parent[x]!) {
        if (x === k || d > kinds.length) {
          throw new NamesError(`${source}: ${pathKey(pathKey('$', family.name), kinds[k]!)}: kind cycle: ${seen.join(' → ')} → ${kinds[k]}`);
        }
        seen.push(kinds[x]!);
        d++;
      }
      depth[k] = d;
    }
    if (kinds.length === 0) incomplete.push(`${family.name}: no kinds given (kinds are not checked)`);
    return { family, kinds, id, parent, depth };
  });
  const familyByName = new Map(families.map((f) => [f.family.name, f]));

  const base = grammar.nameSets.map((set) => {
    const list = names[set.name];
    const members = list === undefined ? [] : [...list];
    return { set, bound: list !== undefined, members, id: new Map(members.map((m, i) => [m, i])) };
  });
  const sets: BoundSet[] = base.map((b) => {
    const { set } = b;
    let ownerStart: Uint32Array | null = null;
    let ownerIds: Uint32Array | null = null;
    if (set.owner !== null) {
      const given = facts?.owners[set.name];
      const ownerSet = base.find((x) => x.set.name === set.owner)!;
      if (given && b.bound) {
        ownerStart = new Uint32Array(b.members.length + 1);
        const ids: number[] = [];
        b.members.forEach((m, i) => {
          ownerStart![i] = ids.length;
          const os = given[m] ?? [];
          const mine: number[] = [];
          os.forEach((o, j) => {
            const oi = ownerSet.id.get(o);
            if (oi === undefined) {
              const path = `${pathKey(pathKey('$', set.name), m)}[${j}]`;
              throw new NamesError(`${source}: ${path}: '${o}' is not a member of ${set.owner}${ownerSet.bound ? '' : ` (${set.owner} is not bound)`}`);
            }
            if (!mine.includes(oi)) mine.push(oi);
          });
          mine.sort((x, y) => x - y);
          ids.push(...mine);
        });
        ownerStart[b.members.length] = ids.length;
        ownerIds = Uint32Array.from(ids);
      } else if (b.bound) {
        incomplete.push(`${set.name}: no owners in ${set.owner} given (\`known\` checks membership only)`);
      }
    }
    const nSlots = set.slots.length;
    const kinds = new Int32Array(b.members.length * nSlots).fill(-1);
    if (nSlots > 0) {
      const given = facts?.kinds[set.name];
      if (given) {
        b.members.forEach((m, i) => {
          const ks = given[m];
          if (!ks) return;
          ks.forEach((k, s) => {
            if (k === null) return;
            const fam = familyByName.get(set.slots[s]!.family)!;
            const ki = fam.id.get(k);
            if (ki === undefined) {
              const path = `${pathKey(pathKey('$', set.name), m)}${nSlots > 1 ? `[${s}]` : ''}`;
              throw new NamesError(`${source}: ${path}: unknown kind '${k}' (kinds of ${fam.family.name}: ${fam.kinds.join(', ') || 'none'})`);
            }
            kinds[i * nSlots + s] = ki;
          });
        });
      } else if (b.bound) {
        incomplete.push(`${set.name}: no kinds given (its members are unconstrained)`);
      }
    }
    return { set, bound: b.bound, members: b.members, id: b.id, ownerStart, ownerIds, kinds };
  });
  return { grammar, sets, families, incomplete };
}
