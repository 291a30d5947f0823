/**
 * `oneOf` exclusivity. A document matches `oneOf` only when exactly one branch accepts it, so the
 * union of the branches is the right language only when no text the description writes for one
 * branch is also accepted by another branch *as the schema means it* (with its open objects, its
 * unbounded numbers, any value where `type` is absent). `provablyDisjoint(a, b)` proves
 * "ours(a) ∩ schema(b) = ∅" with a few sound rules; when no rule applies the branches count as
 * overlapping and from-schema refuses the `oneOf` (README, "oneOf").
 *
 * Rules: different JSON types; enum values the other side refuses; string lengths or formats that
 * cannot meet; number ranges that cannot meet; an object key that one side requires and the other
 * forbids (additionalProperties false) or whose values cannot meet; an object key the other side
 * requires and ours never writes; array lengths that cannot meet, or an always-present position
 * whose values cannot meet. References are followed a bounded number of times.
 */
import type { Reader, Sem, TypeName } from './read.ts';
import { FORMAT_LENGTHS } from './lexemes.ts';

const ALL_TYPES: readonly TypeName[] = ['null', 'boolean', 'object', 'array', 'string', 'integer', 'number'];

/** The types of `sem` as the generated description writes it (policies applied). */
export function ourTypes(sem: Extract<Sem, { k: 'typed' }>): readonly TypeName[] {
  return sem.types ?? sem.inferred ?? ALL_TYPES;
}

/** Does any text the description writes for `a` match `b` as the schema means it? false = proven not. */
export function provablyDisjoint(reader: Reader, a: Sem, b: Sem, depth = 0): boolean {
  if (depth > 32) return false;
  if (a.k === 'false' || b.k === 'false') return true;
  if (a.k === 'ref') {
    const t = reader.resolve(a.target, null);
    return t === null || provablyDisjoint(reader, t, b, depth + 1);
  }
  if (b.k === 'ref') {
    const t = reader.resolve(b.target, null);
    return t === null || provablyDisjoint(reader, a, t, depth + 1);
  }
  if (a.k === 'true' || b.k === 'true') return false;
  if (a.k === 'union') return a.branches.every((x) => provablyDisjoint(reader, x, b, depth + 1)) || (a.types !== null && b.k === 'typed' && b.types !== null && !typesMeet(a.types, b.types));
  // a oneOf in the schema accepts a subset of what its branches accept together
  if (b.k === 'union') return b.branches.every((x) => provablyDisjoint(reader, a, x, depth + 1)) || (b.types !== null && a.k === 'typed' && !typesMeet(ourTypes(a), b.types));
  if (a.k === 'enum') return a.values.every((v) => reader.accepts(b, v, 0) === 'no');
  if (b.k === 'enum') return b.values.every((v) => reader.accepts(a, v, 0) === 'no');
  // both typed
  const ta = ourTypes(a);
  const tb = b.types ?? ALL_TYPES;
  for (const t of ta) {
    for (const u of tb) {
      if (!typesMeet([t], [u])) continue;
      if (!disjointAt(reader, t === 'integer' || u === 'integer' ? 'integer' : t, a, b, depth)) return false;
    }
  }
  return true;
}

/** Can a value of one of `x` also be of one of `y` (integers are numbers)? */
function typesMeet(x: readonly TypeName[], y: readonly TypeName[]): boolean {
  const widen = (t: readonly TypeName[]) => new Set<string>(t.flatMap((n) => (n === 'integer' ? ['integer'] : n === 'number' ? ['integer', 'number'] : [n])));
  const a = widen(x);
  return [...widen(y)].some((t) => a.has(t));
}

type Typed = Extract<Sem, { k: 'typed' }>;

function disjointAt(reader: Reader, t: TypeName, a: Typed, b: Typed, depth: number): boolean {
  switch (t) {
    case 'null':
    case 'boolean':
      return false;
    case 'string': {
      const [fa0, fa1] = a.str.format ? FORMAT_LENGTHS[a.str.format] : [0, Infinity];
      const [fb0, fb1] = b.str.format ? FORMAT_LENGTHS[b.str.format] : [0, Infinity];
      const loA = Math.max(a.str.min, fa0);
      const hiA = Math.min(a.str.max ?? Infinity, fa1);
      const loB = Math.max(b.str.min, fb0);
      const hiB = Math.min(b.str.max ?? Infinity, fb1);
      if (hiA < loB || hiB < loA) return true;
      // date has no "T" or "@", date-time no "@", email no ":" — any two different formats are disjoint
      return a.str.format !== null && b.str.format !== null && a.str.format !== b.str.format;
    }
    case 'integer':
    case 'number': {
      const [la, ha] = interval(a);
      const [lb, hb] = interval(b);
      return ha.v < lb.v || hb.v < la.v || (ha.v === lb.v && (ha.open || lb.open)) || (hb.v === la.v && (hb.open || la.open));
    }
    case 'object': {
      const pa = new Map(a.obj.props.map((p) => [p.key, p.sem]));
      const pb = new Map(b.obj.props.map((p) => [p.key, p.sem]));
      for (const k of a.obj.required) {
        if (!pa.has(k)) continue;
        if (b.obj.closed && !pb.has(k)) return true;
        const sb = pb.get(k);
        if (sb && provablyDisjoint(reader, pa.get(k)!, sb, depth + 1)) return true;
      }
      // ours writes only declared keys
      for (const k of b.obj.required) if (!pa.has(k)) return true;
      return false;
    }
    case 'array': {
      const maxA = Math.min(a.arr.max ?? Infinity, a.arr.items?.k === 'false' ? a.arr.prefix.length : Infinity);
      const maxB = Math.min(b.arr.max ?? Infinity, b.arr.items?.k === 'false' ? b.arr.prefix.length : Infinity);
      if (maxA < b.arr.min || maxB < a.arr.min) return true;
      for (let j = 0; j < a.arr.min; j++) {
        const sa = a.arr.prefix[j] ?? a.arr.items;
        const sb = b.arr.prefix[j] ?? b.arr.items;
        if (sa && sb && provablyDisjoint(reader, sa, sb, depth + 1)) return true;
      }
      return false;
    }
  }
  return false;
}

/** The closed/open interval of a number schema (infinite ends when unbounded). */
function interval(s: Typed): [{ v: number; open: boolean }, { v: number; open: boolean }] {
  const { minimum, exclusiveMinimum, maximum, exclusiveMaximum } = s.num;
  let lo = { v: -Infinity, open: true };
  if (minimum !== null) lo = { v: minimum, open: false };
  if (exclusiveMinimum !== null && exclusiveMinimum >= lo.v) lo = { v: exclusiveMinimum, open: true };
  let hi = { v: Infinity, open: true };
  if (maximum !== null) hi = { v: maximum, open: false };
  if (exclusiveMaximum !== null && exclusiveMaximum <= hi.v) hi = { v: exclusiveMaximum, open: true };
  return [lo, hi];
}
