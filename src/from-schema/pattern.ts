/**
 * String `pattern` (JSON Schema 2020-12 Validation §6.3.3): an ECMAScript regex that a string must
 * match *somewhere* — the keyword is not anchored (Core §6.4 names ECMA-262 as the dialect; written
 * from memory). A string is valid when `new RegExp(pattern, 'u').test(string)` is true, which is how
 * ajv, the reference of the tests, reads it.
 *
 * Three steps, each on the regex IR of the project's one front-end (description/regex/syntax.ts):
 * 1. `searchIr`: the pattern's top-level alternatives, each with `^` at its start and `$` at its end
 *    (or not), become `Σ* body Σ*` with the sides an anchor fixes left out. The body is parsed by
 *    `parseTokenRegex`, so every feature the front-end refuses (look-around, back-references,
 *    `\b`, property escapes) is refused here too, with its offset in the pattern.
 * 2. `withLength`: the IR cut to the strings of minLength..maxLength code points, exactly (the
 *    lengths of a repetition's body decide its counts; a sequence with several parts of variable
 *    length is split on the lengths of the first), within a size budget.
 * 3. `lexemeRegex`: the IR printed as the regex of the JSON string lexemes of those strings, each
 *    character spelled as JSON.stringify spells it (the policy for strings with a pattern, README
 *    "From a JSON Schema"): raw, or `\"`, `\\`, `\b \f \n \r \t`, or `\u00xx` for other controls.
 */
import { makeSet, pairsOf, parseTokenRegex, setIntersect, inhabited, type CharSet, type RegexProblem, type Rx } from '../description/regex/index.ts';
import regjsparser from 'regjsparser';

/** Every code point a JSON text can hold in a string (no surrogates: they never decode alone). */
export const ANY_CHAR: CharSet = makeSet([
  [0, 0xd7ff],
  [0xe000, 0x10ffff],
]);
const ANY: Rx = { t: 'rep', body: { t: 'set', set: ANY_CHAR }, min: 0, max: Infinity };

/** Budget of IR nodes that the length cut may write (past it, the pattern is refused as too large). */
export const MAX_NODES = 20_000;

export class PatternTooLarge extends Error {}

interface Node {
  type: string;
  range: [number, number];
  kind?: string;
  body?: Node[] | Node;
  [k: string]: unknown;
}

/**
 * The IR of the strings in which `pattern` (flag `u`) finds a match, or the front-end's problem
 * (offset into the pattern). `^` and `$` are honoured at the start and end of a top-level
 * alternative; anywhere else they are refused.
 */
export function searchIr(pattern: string): Rx | RegexProblem {
  let root: Node;
  try {
    root = regjsparser.parse(pattern, 'u', { namedGroups: true, lookbehind: true, unicodePropertyEscape: true, modifiers: true } as never) as unknown as Node;
  } catch {
    // the front-end words syntax errors (with their position): let it
    const p = parseTokenRegex(pattern, 'u');
    if ('code' in p) return p;
    return { code: 'bad-regex', message: 'the pattern is not a valid ECMAScript regular expression', offset: 0, length: 1 };
  }
  const alternatives: Node[] = root.type === 'disjunction' ? (root.body as Node[]) : [root];
  const items: Rx[] = [];
  for (const alt of alternatives) {
    const body: Node[] = alt.type === 'alternative' ? [...(alt.body as Node[])] : [alt];
    const isAnchor = (n: Node | undefined, kind: string) => n !== undefined && n.type === 'anchor' && n.kind === kind;
    let start = false;
    let end = false;
    while (isAnchor(body[0], 'start')) {
      body.shift();
      start = true;
    }
    while (isAnchor(body[body.length - 1], 'end')) {
      body.pop();
      end = true;
    }
    // an anchor left inside the body would be read by the front-end as a no-op at the body's edges,
    // which is right only where that edge is the string's (the side is anchored)
    const stray = findAnchor(body, !start, !end);
    if (stray !== null) {
      const sym = stray.kind === 'start' ? '^' : '$';
      return {
        code: 'regex-unsupported',
        message: `the anchor ${sym} here is not supported in a pattern (${sym} is supported at the ${stray.kind === 'start' ? 'start' : 'end'} of the pattern or of one of its top-level alternatives)`,
        offset: stray.range[0],
        length: 1,
      };
    }
    let rx: Rx = { t: 'seq', items: [] };
    if (body.length > 0) {
      const from = body[0]!.range[0];
      const to = body[body.length - 1]!.range[1];
      const parsed = parseTokenRegex(pattern.slice(from, to), 'u');
      if ('code' in parsed) return { ...parsed, offset: parsed.offset + from };
      rx = parsed.rx;
    }
    items.push({ t: 'seq', items: [...(start ? [] : [ANY]), rx, ...(end ? [] : [ANY])] });
  }
  return simplify(clean(items.length === 1 ? items[0]! : { t: 'alt', items }));
}

/** Sets without surrogate code points (no JSON string decodes to one alone). */
function clean(rx: Rx): Rx {
  switch (rx.t) {
    case 'set':
      return { t: 'set', set: setIntersect(rx.set, ANY_CHAR, 0x10ffff) };
    case 'rep':
      return { ...rx, body: clean(rx.body) };
    default:
      return { ...rx, items: rx.items.map(clean) };
  }
}

/** The first `^` (when `starts`) or `$` (when `ends`) anywhere in the nodes, or null. */
function findAnchor(nodes: readonly Node[], starts: boolean, ends: boolean): Node | null {
  for (const n of nodes) {
    if (n.type === 'anchor' && ((starts && n.kind === 'start') || (ends && n.kind === 'end'))) return n;
    const kids = Array.isArray(n.body) ? n.body : n.body && typeof n.body === 'object' ? [n.body] : [];
    const hit = findAnchor(kids, starts, ends);
    if (hit) return hit;
  }
  return null;
}

// ---- lengths ---------------------------------------------------------------------------------

/** Shortest and longest match in code points (Infinity: unbounded). */
export function lengths(rx: Rx): [number, number] {
  switch (rx.t) {
    case 'set':
      return [1, 1];
    case 'seq': {
      let a = 0;
      let b = 0;
      for (const x of rx.items) {
        const [p, q] = lengths(x);
        a += p;
        b += q;
      }
      return [a, b];
    }
    case 'alt': {
      let a = Infinity;
      let b = 0;
      for (const x of rx.items) {
        const [p, q] = lengths(x);
        a = Math.min(a, p);
        b = Math.max(b, q);
      }
      return rx.items.length === 0 ? [0, 0] : [a, b];
    }
    case 'rep': {
      const [p, q] = lengths(rx.body);
      return [rx.min * p, rx.max === 0 || q === 0 ? 0 : rx.max * q];
    }
  }
}

/**
 * `rx` restricted to the strings of lo..hi code points (hi may be Infinity); null when none is
 * left. Exact; throws PatternTooLarge past MAX_NODES written nodes.
 */
export function withLength(rx: Rx, lo: number, hi: number): Rx | null {
  const budget = { nodes: 0 };
  const out = cut(rx, Math.max(0, lo), hi, budget);
  return out === null || !inhabited(out) ? null : simplify(out);
}

function spend(budget: { nodes: number }, n: number): void {
  budget.nodes += n;
  if (budget.nodes > MAX_NODES) throw new PatternTooLarge(`more than ${MAX_NODES.toLocaleString('en-US')} regex nodes`);
}

function cut(rx: Rx, lo: number, hi: number, budget: { nodes: number }): Rx | null {
  const [a, b] = lengths(rx);
  const from = Math.max(lo, a);
  const to = Math.min(hi, b);
  if (from > to) return null;
  if (from === a && to === b) return rx;
  spend(budget, 1);
  switch (rx.t) {
    case 'set':
      return rx;
    case 'alt': {
      const items = rx.items.map((x) => cut(x, from, to, budget)).filter((x): x is Rx => x !== null);
      return items.length === 0 ? null : items.length === 1 ? items[0]! : { t: 'alt', items };
    }
    case 'rep': {
      const [p, q] = lengths(rx.body);
      if (p === q) {
        // a body of fixed length p > 0 (p = 0 has one length, covered above): the counts decide
        const min = Math.max(rx.min, Math.ceil(from / p));
        const max = Math.min(rx.max, to === Infinity ? Infinity : Math.floor(to / p));
        return min > max ? null : { t: 'rep', body: rx.body, min, max };
      }
      if (rx.max === 0) return null;
      if (p === 0) {
        // a body that can match the empty string: its empty runs fill any minimum count
        const nonEmpty = cut(rx.body, 1, Infinity, budget);
        return nonEmpty === null ? null : cut({ t: 'rep', body: nonEmpty, min: 0, max: rx.max }, from, to, budget);
      }
      // a body of variable length: one run, then the rest, as a sequence
      const rest: Rx = { t: 'rep', body: rx.body, min: Math.max(0, rx.min - 1), max: rx.max - 1 };
      const once = cut({ t: 'seq', items: [rx.body, rest] }, from, to, budget);
      if (rx.min > 0) return once;
      // zero runs give the empty string, which the window holds only when from is 0
      const parts = [...(from === 0 ? [{ t: 'seq', items: [] } as Rx] : []), ...(once ? [once] : [])];
      return parts.length === 0 ? null : parts.length === 1 ? parts[0]! : { t: 'alt', items: parts };
    }
    case 'seq': {
      const items = rx.items;
      const ls = items.map(lengths);
      const variable = ls.flatMap(([p, q], i) => (p === q ? [] : [i]));
      const fixedSum = ls.reduce((s, [p, q]) => s + (p === q ? p : 0), 0);
      if (variable.length === 1) {
        const i = variable[0]!;
        const part = cut(items[i]!, from - fixedSum, to === Infinity ? Infinity : to - fixedSum, budget);
        if (part === null) return null;
        return { t: 'seq', items: items.map((x, j) => (j === i ? part : x)) };
      }
      // split on the length of the first variable part
      const i = variable[0]!;
      const head = items.slice(0, i);
      const headLen = ls.slice(0, i).reduce((s, [p]) => s + p, 0);
      const x = items[i]!;
      const [xa, xb] = ls[i]!;
      const rest: Rx = { t: 'seq', items: items.slice(i + 1) };
      const [ra, rb] = lengths(rest);
      const alts: Rx[] = [];
      // past this length of x the rest is free of the lower bound (and, when `to` is unbounded, of any bound)
      const free = Math.max(xa, from - headLen - ra);
      const upper = Math.min(xb, to === Infinity ? free - 1 : to - headLen - ra);
      for (let l = Math.max(xa, from - headLen - rb); l <= upper; l++) {
        const px = cut(x, l, l, budget);
        if (px === null) continue;
        const pr = cut(rest, from - headLen - l, to === Infinity ? Infinity : to - headLen - l, budget);
        if (pr === null) continue;
        spend(budget, 1);
        alts.push({ t: 'seq', items: [...head, px, pr] });
      }
      if (to === Infinity) {
        const px = cut(x, free, Infinity, budget);
        if (px !== null) alts.push({ t: 'seq', items: [...head, px, rest] });
      }
      return alts.length === 0 ? null : alts.length === 1 ? alts[0]! : { t: 'alt', items: alts };
    }
  }
}

/** Flattens nested sequences and alternations, drops empty sequences inside sequences. */
function simplify(rx: Rx): Rx {
  switch (rx.t) {
    case 'set':
      return rx;
    case 'rep':
      return { ...rx, body: simplify(rx.body) };
    case 'seq': {
      const items: Rx[] = [];
      for (const x of rx.items.map(simplify)) {
        if (x.t === 'seq') items.push(...x.items);
        else items.push(x);
      }
      return items.length === 1 ? items[0]! : { t: 'seq', items };
    }
    case 'alt': {
      const items: Rx[] = [];
      for (const x of rx.items.map(simplify)) {
        if (x.t === 'alt') items.push(...x.items);
        else items.push(x);
      }
      return items.length === 1 ? items[0]! : { t: 'alt', items };
    }
  }
}

// ---- printing as JSON string lexemes -----------------------------------------------------------

const SHORT: Record<number, string> = { 0x22: '"', 0x5c: '\\\\', 0x08: 'b', 0x0c: 'f', 0x0a: 'n', 0x0d: 'r', 0x09: 't' };
/** Characters JSON.stringify writes raw: all but `"`, `\` and the controls U+0000–U+001F. */
const RAW = makeSet([
  [0x20, 0x21],
  [0x23, 0x5b],
  [0x5d, 0xd7ff],
  [0xe000, 0x10ffff],
]);

/** One character of a regex (flag `u`), escaped where the regex or the `/…/` literal needs it. */
function regexChar(c: number, inClass: boolean): string {
  if (c >= 0x21 && c <= 0x7e) {
    const ch = String.fromCharCode(c);
    const special = inClass ? '\\]^-[/' : '\\^$.*+?()[]{}|/';
    return special.includes(ch) ? '\\' + ch : ch;
  }
  if (c === 0x20) return ' ';
  if (c > 0x7e && c < 0xd800 && !/[\s\p{C}\p{Z}]/u.test(String.fromCodePoint(c))) return String.fromCodePoint(c);
  return c <= 0xffff ? '\\u' + c.toString(16).padStart(4, '0') : `\\u{${c.toString(16)}}`;
}

function classText(set: CharSet): string {
  const pairs = pairsOf(set);
  if (pairs.length === 1 && pairs[0]![0] === pairs[0]![1]) return regexChar(pairs[0]![0], false);
  if (pairs.length === 1 && pairs[0]![0] === 0x30 && pairs[0]![1] === 0x39) return '\\d';
  let out = '[';
  for (const [a, b] of pairs) {
    out += regexChar(a, true);
    if (b > a + 1) out += '-';
    if (b > a) out += regexChar(b, true);
  }
  return out + ']';
}

/**
 * The lexeme spellings of the characters of `set`; `atom`: the text is one regex atom (a class or
 * one character); `alt`: it has a top-level `|`.
 */
function spellSet(set: CharSet): { text: string; atom: boolean; alt: boolean } {
  const alts: string[] = [];
  const raw = setIntersect(set, RAW, 0x10ffff);
  if (raw.length > 0) alts.push(classText(raw));
  const controls = setIntersect(set, makeSet([[0, 0x1f]]), 0x10ffff);
  const short: string[] = [];
  const hex: number[] = [];
  for (const [a, b] of pairsOf(controls)) for (let c = a; c <= b; c++) {
    if (SHORT[c] !== undefined) short.push(SHORT[c]);
    else hex.push(c);
  }
  if (setIntersect(set, makeSet([[0x22, 0x22]]), 0x10ffff).length > 0) short.unshift('"');
  if (setIntersect(set, makeSet([[0x5c, 0x5c]]), 0x10ffff).length > 0) short.unshift('\\\\');
  const esc: string[] = [];
  if (short.length > 0) esc.push(short.length === 1 ? short[0]! : `[${short.join('')}]`);
  if (hex.length > 0) {
    // JSON.stringify writes these as \u00xx with lowercase hex digits
    const byHigh = new Map<string, string[]>();
    for (const c of hex) {
      const h = c.toString(16).padStart(2, '0');
      byHigh.set(h[0]!, [...(byHigh.get(h[0]!) ?? []), h[1]!]);
    }
    const parts = [...byHigh].map(([h, ls]) => `${h}${ls.length === 1 ? ls[0] : hexClass(ls)}`);
    esc.push(`u00${parts.length === 1 ? parts[0] : `(?:${parts.join('|')})`}`);
  }
  if (esc.length > 0) alts.push(`\\\\${esc.length === 1 && !esc[0]!.startsWith('u') ? esc[0] : `(?:${esc.join('|')})`}`);
  if (alts.length === 0) return { text: '[]', atom: true, alt: false };
  return { text: alts.join('|'), atom: alts.length === 1 && raw.length > 0, alt: alts.length > 1 };
}

/** `[0-7bef]` for the hex digits listed (lowercase, ascending). */
function hexClass(digits: readonly string[]): string {
  const v = digits.map((d) => parseInt(d, 16));
  let out = '';
  for (let i = 0; i < v.length; ) {
    let j = i;
    while (j + 1 < v.length && v[j + 1] === v[j]! + 1 && (v[j]! !== 9)) j++;
    out += j - i >= 2 ? `${v[i]!.toString(16)}-${v[j]!.toString(16)}` : v.slice(i, j + 1).map((x) => x.toString(16)).join('');
    i = j + 1;
  }
  return `[${out}]`;
}

/** Regex text of the lexemes (without the quotes) of the strings of `rx`. */
export function lexemeBody(rx: Rx): string {
  return print(rx, 'seq');
}

function print(rx: Rx, ctx: 'alt' | 'seq' | 'atom'): string {
  switch (rx.t) {
    case 'set': {
      const s = spellSet(rx.set);
      const group = ctx === 'atom' ? !s.atom : ctx === 'seq' ? s.alt : false;
      return group ? `(?:${s.text})` : s.text;
    }
    case 'seq': {
      if (rx.items.length === 0) return ctx === 'atom' ? '(?:)' : '';
      const text = rx.items.map((x) => print(x, 'seq')).join('');
      return ctx === 'atom' && rx.items.length > 1 ? `(?:${text})` : text;
    }
    case 'alt': {
      const text = rx.items.map((x) => print(x, 'alt')).join('|');
      return ctx === 'alt' ? text : `(?:${text})`;
    }
    case 'rep': {
      if (rx.max === 0) return ctx === 'atom' ? '(?:)' : '';
      if (rx.min === 1 && rx.max === 1) return print(rx.body, ctx);
      const body = print(rx.body, 'atom');
      const q = rx.max === Infinity ? (rx.min === 0 ? '*' : rx.min === 1 ? '+' : `{${rx.min},}`) : rx.min === rx.max ? `{${rx.min}}` : rx.min === 0 && rx.max === 1 ? '?' : `{${rx.min},${rx.max}}`;
      const text = body + q;
      return ctx === 'atom' ? `(?:${text})` : text;
    }
  }
}
