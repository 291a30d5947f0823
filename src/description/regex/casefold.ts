/**
 * Case-insensitive matching as ECMAScript defines it (ECMA-262, "Canonicalize ( rer, ch )"): two
 * characters match under flag `i` when their canonical forms are equal.
 * - With `u`: the canonical form is Unicode simple case folding (CaseFolding.txt, statuses C and
 *   S), from the generated table casefold-data.ts (Unicode 17.0.0).
 * - Without `u`: the canonical form of a UTF-16 code unit is its `toUppercase` when that is a
 *   single code unit, except that a non-ASCII unit never maps into ASCII. `String.prototype
 *   .toUpperCase` is Unicode Default Case Conversion, so the table is computed from the running
 *   engine, which is what the specification prescribes.
 *
 * `caseClose(set)` adds every character whose canonical form equals that of a member: the set a
 * class or a literal matches under `i`. Cost: O(classes × log ranges) per set; the classes are
 * computed once per mode (≈ 1,500 with `u`; the non-`u` table scans the 65,536 code units once).
 */
import { SIMPLE_FOLDING } from './casefold-data.ts';
import { makeSet, pairsOf, setHas, type CharSet } from './charset.ts';

/** Equivalence classes with more than one member, each sorted, plus a lookup by member. */
interface Classes {
  readonly classes: readonly (readonly number[])[];
  /** sorted members of all classes, and the class index of each (parallel arrays) */
  readonly members: Int32Array;
  readonly classOf: Int32Array;
}

function fromCanonical(pairs: Array<[number, number]>): Classes {
  // group by canonical form (the canonical form itself is a member of its class)
  const groups = new Map<number, Set<number>>();
  for (const [c, canon] of pairs) {
    let g = groups.get(canon);
    if (g === undefined) groups.set(canon, (g = new Set([canon])));
    g.add(c);
  }
  const classes: number[][] = [];
  for (const g of groups.values()) if (g.size > 1) classes.push([...g].sort((a, b) => a - b));
  const all: Array<[number, number]> = [];
  classes.forEach((cl, i) => cl.forEach((c) => all.push([c, i])));
  all.sort((a, b) => a[0] - b[0]);
  return { classes, members: Int32Array.from(all.map((x) => x[0])), classOf: Int32Array.from(all.map((x) => x[1])) };
}

let unicodeClasses: Classes | undefined;
let legacyClasses: Classes | undefined;

function unicodeTable(): Classes {
  if (unicodeClasses === undefined) {
    const pairs: Array<[number, number]> = [];
    let from = 0;
    for (let i = 0; i < SIMPLE_FOLDING.length; i += 2) {
      from += SIMPLE_FOLDING[i]!;
      pairs.push([from, from + SIMPLE_FOLDING[i + 1]!]);
    }
    unicodeClasses = fromCanonical(pairs);
  }
  return unicodeClasses;
}

/** Canonicalize without `u` (ECMA-262): toUppercase, kept only when one code unit, never non-ASCII → ASCII. */
export function legacyCanonical(ch: number): number {
  if (ch >= 0xd800 && ch <= 0xdfff) return ch;
  const u = String.fromCharCode(ch).toUpperCase();
  if (u.length !== 1) return ch;
  const cu = u.charCodeAt(0);
  if (ch >= 128 && cu < 128) return ch;
  return cu;
}

function legacyTable(): Classes {
  if (legacyClasses === undefined) {
    const pairs: Array<[number, number]> = [];
    for (let c = 0; c <= 0xffff; c++) {
      const k = legacyCanonical(c);
      if (k !== c) pairs.push([c, k]);
    }
    legacyClasses = fromCanonical(pairs);
  }
  return legacyClasses;
}


function lowerBound(a: Int32Array, x: number): number {
  let lo = 0;
  let hi = a.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (a[mid]! < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Every character whose canonical form equals that of a member of `set` (`unicode`: flag `u`). */
export function caseClose(set: CharSet, unicode: boolean): CharSet {
  const t = unicode ? unicodeTable() : legacyTable();
  const extra: Array<[number, number]> = [];
  const seen = new Set<number>();
  for (const [lo, hi] of pairsOf(set)) {
    for (let i = lowerBound(t.members, lo); i < t.members.length && t.members[i]! <= hi; i++) {
      const k = t.classOf[i]!;
      if (seen.has(k)) continue;
      seen.add(k);
      for (const c of t.classes[k]!) if (!setHas(set, c)) extra.push([c, c]);
    }
  }
  return extra.length === 0 ? set : makeSet(pairsOf(set).concat(extra));
}
