/**
 * Character sets of the regex front-end: sorted, disjoint, non-adjacent inclusive ranges of code
 * points (flag `u`) or UTF-16 code units (no `u`), stored flat as [lo0, hi0, lo1, hi1, ...].
 * Sets are immutable once built; every operation returns a new array.
 */

export type CharSet = readonly number[];

/** Normalises arbitrary [lo, hi] pairs into a CharSet. */
export function makeSet(pairs: readonly (readonly [number, number])[]): CharSet {
  const sorted = pairs.filter(([a, b]) => a <= b).sort((x, y) => x[0] - y[0]);
  const out: number[] = [];
  for (const [lo, hi] of sorted) {
    const n = out.length;
    if (n > 0 && lo <= out[n - 1]! + 1) out[n - 1] = Math.max(out[n - 1]!, hi);
    else out.push(lo, hi);
  }
  return out;
}

export function pairsOf(a: CharSet): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 0; i < a.length; i += 2) out.push([a[i]!, a[i + 1]!]);
  return out;
}

export function setUnion(a: CharSet, b: CharSet): CharSet {
  return makeSet(pairsOf(a).concat(pairsOf(b)));
}

export function setComplement(a: CharSet, max: number): CharSet {
  const out: [number, number][] = [];
  let next = 0;
  for (const [lo, hi] of pairsOf(a)) {
    if (lo > next) out.push([next, lo - 1]);
    next = hi + 1;
  }
  if (next <= max) out.push([next, max]);
  return makeSet(out);
}

export function setIntersect(a: CharSet, b: CharSet, max: number): CharSet {
  return setComplement(setUnion(setComplement(a, max), setComplement(b, max)), max);
}

export function setHas(a: CharSet, c: number): boolean {
  // binary search over the range starts
  let lo = 0;
  let hi = a.length / 2 - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (c < a[2 * mid]!) hi = mid - 1;
    else if (c > a[2 * mid + 1]!) lo = mid + 1;
    else return true;
  }
  return false;
}

export function setSize(a: CharSet): number {
  let n = 0;
  for (let i = 0; i < a.length; i += 2) n += a[i + 1]! - a[i]! + 1;
  return n;
}

/** `[A-Za-z0-9_]`: ECMAScript's basic word characters (`\w`) and the word-boundary rule's set. */
export const WORD: CharSet = makeSet([
  [0x30, 0x39],
  [0x41, 0x5a],
  [0x5f, 0x5f],
  [0x61, 0x7a],
]);
export const DIGIT: CharSet = makeSet([[0x30, 0x39]]);
/** ECMAScript WhiteSpace and LineTerminator (ECMA-262, "CharacterClassEscape :: s"). */
export const SPACE: CharSet = makeSet([
  [0x09, 0x0d],
  [0x20, 0x20],
  [0xa0, 0xa0],
  [0x1680, 0x1680],
  [0x2000, 0x200a],
  [0x2028, 0x2029],
  [0x202f, 0x202f],
  [0x205f, 0x205f],
  [0x3000, 0x3000],
  [0xfeff, 0xfeff],
]);
/** `.` matches anything but a LineTerminator (ECMA-262, "Atom :: ."). */
export const LINE_TERMINATORS: CharSet = makeSet([
  [0x0a, 0x0a],
  [0x0d, 0x0d],
  [0x2028, 0x2029],
]);

export function isWordCode(c: number): boolean {
  return (c >= 0x30 && c <= 0x39) || (c >= 0x41 && c <= 0x5a) || c === 0x5f || (c >= 0x61 && c <= 0x7a);
}
