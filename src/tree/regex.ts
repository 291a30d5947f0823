/**
 * Token regular expressions: the ECMAScript regex of a lexical class, parsed by regjsparser, turned
 * into a small regex IR (`Rx`) that the parser generator (ohm lexical rules), the sampler (random
 * lexemes) and the JSON Schema export share.
 *
 * Supported: alternation, sequences, groups (capturing, non-capturing, named), greedy and lazy
 * quantifiers (`? * + {n} {n,} {n,m}`), character classes with ranges and negation, `.`, the class
 * escapes `\d \D \w \W \s \S`, and every character escape. Flags: `i` (ASCII case folding only) and
 * `u` (sets over code points instead of UTF-16 code units).
 * Not supported (a located error): anchors (`^ $ \b \B` — the whole lexeme is matched anyway),
 * look-ahead/look-behind groups, back-references, unicode property escapes and class set
 * operations.
 *
 * Limits: the ohm translation is a PEG, so repetition is greedy and never gives back characters;
 * a regex that needs backtracking into a repetition (`a*a`, `(ab|a)b`) matches fewer lexemes in the
 * parser than in JavaScript. validateTree and the sampler use the JavaScript regex itself.
 */
import regjsparser from 'regjsparser';

/** Sorted, disjoint, non-adjacent inclusive ranges of code points (or code units): [lo0, hi0, lo1, hi1, ...]. */
export type CharSet = readonly number[];

export type Rx =
  | { readonly t: 'set'; readonly set: CharSet }
  | { readonly t: 'seq'; readonly items: readonly Rx[] }
  | { readonly t: 'alt'; readonly items: readonly Rx[] }
  | { readonly t: 'rep'; readonly body: Rx; readonly min: number; readonly max: number };

/** A regex feature outside the supported subset; `offset` is into the pattern source. */
export class RegexFeatureError extends Error {
  readonly offset: number;
  readonly length: number;
  constructor(message: string, offset: number, length: number) {
    super(message);
    this.name = 'RegexFeatureError';
    this.offset = offset;
    this.length = length;
  }
}

// ---- character sets ---------------------------------------------------------------------------

/** Normalises arbitrary [lo, hi] pairs into a CharSet. */
export function makeSet(pairs: readonly (readonly [number, number])[]): CharSet {
  const sorted = pairs.filter(([a, b]) => a <= b).sort((x, y) => x[0] - y[0]);
  const out: number[] = [];
  for (const [lo, hi] of sorted) {
    const n = out.length;
    if (n > 0 && lo <= out[n - 1] + 1) out[n - 1] = Math.max(out[n - 1], hi);
    else out.push(lo, hi);
  }
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
  for (let i = 0; i < a.length; i += 2) if (c >= a[i] && c <= a[i + 1]) return true;
  return false;
}

export function setSize(a: CharSet): number {
  let n = 0;
  for (let i = 0; i < a.length; i += 2) n += a[i + 1] - a[i] + 1;
  return n;
}

export function pairsOf(a: CharSet): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 0; i < a.length; i += 2) out.push([a[i], a[i + 1]]);
  return out;
}

/** `[A-Za-z0-9_]`, the word characters of the word-boundary rule (README, `space`). */
export const WORD: CharSet = makeSet([
  [0x30, 0x39],
  [0x41, 0x5a],
  [0x5f, 0x5f],
  [0x61, 0x7a],
]);
const DIGIT: CharSet = makeSet([[0x30, 0x39]]);
// ECMAScript WhiteSpace and LineTerminator (ECMA-262, "CharacterClassEscape :: s").
const SPACE: CharSet = makeSet([
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
// `.` matches anything but a LineTerminator (ECMA-262).
const LINE_TERMINATORS: CharSet = makeSet([
  [0x0a, 0x0a],
  [0x0d, 0x0d],
  [0x2028, 0x2029],
]);

export function isWordCode(c: number): boolean {
  return setHas(WORD, c);
}

// ---- parsing --------------------------------------------------------------------------------

interface RxNode {
  type: string;
  range: [number, number];
  [k: string]: unknown;
}

/** Parses `pattern` (with `flags`) into the Rx IR; throws RegexFeatureError for unsupported parts. */
export function parseRegex(pattern: string, flags: string): Rx {
  const unicode = flags.includes('u');
  const fold = flags.includes('i');
  const max = unicode ? 0x10ffff : 0xffff;
  let root: RxNode;
  try {
    root = regjsparser.parse(pattern, unicode ? 'u' : '', { namedGroups: true, lookbehind: true, unicodePropertyEscape: true }) as unknown as RxNode;
  } catch (err) {
    const message = err instanceof Error ? err.message.split('\n')[0] : String(err);
    const at = /at position (\d+)/.exec(message);
    throw new RegexFeatureError(`invalid regular expression: ${message}`, at ? Number(at[1]) : 0, 1);
  }
  const unsupported = (n: RxNode, what: string): never => {
    throw new RegexFeatureError(`${what} is not supported in token patterns`, n.range[0], Math.max(1, n.range[1] - n.range[0]));
  };
  const foldSet = (s: CharSet): CharSet => {
    if (!fold) return s;
    const extra: [number, number][] = [];
    for (const [lo, hi] of pairsOf(s)) {
      // ASCII letters only (documented limit)
      const a = Math.max(lo, 0x41), b = Math.min(hi, 0x5a);
      if (a <= b) extra.push([a + 32, b + 32]);
      const c = Math.max(lo, 0x61), d = Math.min(hi, 0x7a);
      if (c <= d) extra.push([c - 32, d - 32]);
    }
    return setUnion(s, makeSet(extra));
  };
  const escapeSet = (v: string): CharSet => {
    switch (v) {
      case 'd': return DIGIT;
      case 'D': return setComplement(DIGIT, max);
      case 'w': return WORD;
      case 'W': return setComplement(WORD, max);
      case 's': return SPACE;
      default: return setComplement(SPACE, max);
    }
  };
  const classItem = (n: RxNode): CharSet => {
    switch (n.type) {
      case 'value': {
        const c = n.codePoint as number;
        return makeSet([[c, c]]);
      }
      case 'characterClassRange': {
        const lo = (n.min as RxNode).codePoint as number;
        const hi = (n.max as RxNode).codePoint as number;
        return makeSet([[lo, hi]]);
      }
      case 'characterClassEscape':
        return escapeSet(n.value as string);
      default:
        return unsupported(n, n.type === 'unicodePropertyEscape' ? 'a unicode property escape' : `a ${n.type}`);
    }
  };
  const walk = (n: RxNode): Rx => {
    switch (n.type) {
      case 'disjunction':
        return { t: 'alt', items: (n.body as RxNode[]).map(walk) };
      case 'alternative':
        return { t: 'seq', items: (n.body as RxNode[]).map(walk) };
      case 'group': {
        const behavior = n.behavior as string;
        if (behavior !== 'normal' && behavior !== 'ignore') return unsupported(n, `a ${behavior} group`);
        if (n.modifierFlags) return unsupported(n, 'a modifier group');
        const body = n.body as RxNode[];
        return body.length === 1 ? walk(body[0]) : { t: 'seq', items: body.map(walk) };
      }
      case 'quantifier': {
        const body = walk((n.body as RxNode[])[0]);
        const min = n.min as number;
        const mx = n.max === undefined ? Infinity : (n.max as number);
        return { t: 'rep', body, min, max: mx };
      }
      case 'characterClass': {
        if (n.kind !== 'union') return unsupported(n, 'a class set operation');
        let s: CharSet = [];
        for (const item of n.body as RxNode[]) s = setUnion(s, classItem(item));
        s = foldSet(s);
        return { t: 'set', set: n.negative ? setComplement(s, max) : s };
      }
      case 'characterClassEscape':
        return { t: 'set', set: escapeSet(n.value as string) };
      case 'dot':
        return { t: 'set', set: setComplement(LINE_TERMINATORS, max) };
      case 'value': {
        const c = n.codePoint as number;
        return { t: 'set', set: foldSet(makeSet([[c, c]])) };
      }
      case 'anchor':
        return unsupported(n, 'an anchor');
      case 'reference':
        return unsupported(n, 'a back-reference');
      case 'unicodePropertyEscape':
        return unsupported(n, 'a unicode property escape');
      default:
        return unsupported(n, `a ${n.type}`);
    }
  };
  return walk(root);
}

// ---- analyses -------------------------------------------------------------------------------

export function nullable(rx: Rx): boolean {
  switch (rx.t) {
    case 'set': return false;
    case 'seq': return rx.items.every(nullable);
    case 'alt': return rx.items.some(nullable);
    case 'rep': return rx.min === 0 || nullable(rx.body);
  }
}

/** The characters a non-empty match can end with. */
export function lastChars(rx: Rx): CharSet {
  switch (rx.t) {
    case 'set': return rx.set;
    case 'alt': return rx.items.reduce<CharSet>((acc, x) => setUnion(acc, lastChars(x)), []);
    case 'rep': return rx.max === 0 ? [] : lastChars(rx.body);
    case 'seq': {
      let acc: CharSet = [];
      for (let i = rx.items.length - 1; i >= 0; i--) {
        acc = setUnion(acc, lastChars(rx.items[i]));
        if (!nullable(rx.items[i])) break;
      }
      return acc;
    }
  }
}

/** The characters a non-empty match can begin with. */
export function firstChars(rx: Rx): CharSet {
  switch (rx.t) {
    case 'set': return rx.set;
    case 'alt': return rx.items.reduce<CharSet>((acc, x) => setUnion(acc, firstChars(x)), []);
    case 'rep': return rx.max === 0 ? [] : firstChars(rx.body);
    case 'seq': {
      let acc: CharSet = [];
      for (const item of rx.items) {
        acc = setUnion(acc, firstChars(item));
        if (!nullable(item)) break;
      }
      return acc;
    }
  }
}

// ---- generation -------------------------------------------------------------------------------

/** A few non-ASCII characters the generator mixes in, so escapes and code points get exercised. */
const EXOTIC = [0xe9, 0xfc, 0x3a9, 0x4e2d, 0x20ac, 0x1f34e];

/**
 * Appends a random match of `rx` to `out`. `rand()` returns a float in [0, 1). Repetitions take at
 * most `min + 3` rounds, so lexemes stay short.
 */
export function generate(rx: Rx, rand: () => number, out: string[]): void {
  switch (rx.t) {
    case 'set':
      out.push(String.fromCodePoint(pickChar(rx.set, rand)));
      return;
    case 'seq':
      for (const item of rx.items) generate(item, rand, out);
      return;
    case 'alt':
      generate(rx.items[Math.floor(rand() * rx.items.length)], rand, out);
      return;
    case 'rep': {
      const room = Math.min(rx.max - rx.min, 3);
      let n = rx.min;
      while (n - rx.min < room && rand() < 0.55) n++;
      for (let i = 0; i < n; i++) generate(rx.body, rand, out);
      return;
    }
  }
}

const PRINTABLE: CharSet = makeSet([[0x20, 0x7e]]);
/** Characters drawn when a set has no printable ASCII, or now and then: no C0 controls, no lone surrogates. */
const SAFE: CharSet = makeSet([
  [0x20, 0xd7ff],
  [0xe000, 0x10ffff],
]);

/** Per-set draws computed once (sets are immutable and shared by the Rx IR). */
const pools = new WeakMap<CharSet, { exotic: number[]; printable: CharSet; safe: CharSet }>();

function pickChar(set: CharSet, rand: () => number): number {
  let pool = pools.get(set);
  if (pool === undefined) {
    pool = {
      exotic: EXOTIC.filter((c) => setHas(set, c)),
      printable: setIntersect(set, PRINTABLE, 0x10ffff),
      safe: setIntersect(set, SAFE, 0x10ffff),
    };
    pools.set(set, pool);
  }
  const r = rand();
  if (r < 0.06) {
    const exotic = pool.exotic;
    if (exotic.length > 0) return exotic[Math.floor(rand() * exotic.length)];
  }
  const { printable, safe } = pool;
  const from = r < 0.97 && printable.length > 0 ? printable : safe.length > 0 ? safe : set;
  let k = Math.floor(rand() * setSize(from));
  for (let i = 0; i < from.length; i += 2) {
    const n = from[i + 1] - from[i] + 1;
    if (k < n) return from[i] + k;
    k -= n;
  }
  return from[0];
}
