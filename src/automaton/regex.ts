/**
 * Token-class regular expressions → byte-level DFAs over UTF-8.
 *
 * Pipeline: regjsparser AST → code-point sets → UTF-8 byte-range sequences → Thompson NFA →
 * subset DFA → optional subtraction of a finite word list (the grammar's keywords, for `reserved`
 * classes) → trim (states that cannot reach acceptance become the dead state) → Moore minimisation.
 *
 * Numbering invariant (relied on by every table user): state 0 is the dead state (all transitions
 * to 0, not accepting); state 1 is the start state unless the language is empty (then start is 0).
 * After trimming, every state ≠ 0 can reach an accepting state, so "not dead" means "viable".
 *
 * Semantics: the regex is matched against the whole lexeme (anchors `^`/`$` at the edges are
 * ignored). Character sets are sets of Unicode scalar values (surrogates excluded) whether or not
 * the `u` flag is given — without `u`, ECMAScript matches UTF-16 units, which differs only for a
 * single (unrepeated) negated class or `.` meeting an astral character. Flag `i` adds the simple
 * lower/upper-case variant of each character. Lookaround, back-references and `\b` are refused.
 *
 * Cost: NFA size linear in the pattern (bounded repetitions are expanded); subset construction is
 * exponential in the worst case (refused above MAX_DFA_STATES); the shipped classes give ≤ 120 states.
 */
import regjsparser from 'regjsparser';
const parseRegex = regjsparser.parse;

/** Refuse DFAs larger than this (a regex with large counted repetitions of alternations). */
export const MAX_DFA_STATES = 20000;

export class RegexError extends Error {}

/** An immutable byte DFA. `trans[s * 256 + b]` is the next state; 0 is dead. */
export interface ByteDfa {
  readonly stateCount: number;
  readonly start: number;
  readonly trans: Int32Array;
  readonly accept: Uint8Array;
  /** Fewest bytes from the state to an accepting state (0 when accepting; unused for state 0). */
  readonly minAccept: Int32Array;
  /** A shortest accepted string (bytes), or null when the language is empty. */
  readonly shortest: Uint8Array | null;
}

type Ranges = Array<[number, number]>; // sorted, disjoint, inclusive code-point ranges

const MAX_CP = 0x10ffff;

function normalise(rs: Ranges): Ranges {
  const sorted = rs.filter(([a, b]) => a <= b).sort((x, y) => x[0] - y[0]);
  const out: Ranges = [];
  for (const [a, b] of sorted) {
    const last = out[out.length - 1];
    if (last && a <= last[1] + 1) last[1] = Math.max(last[1], b);
    else out.push([a, b]);
  }
  return out;
}

function complement(rs: Ranges): Ranges {
  const out: Ranges = [];
  let next = 0;
  for (const [a, b] of normalise(rs)) {
    if (a > next) out.push([next, a - 1]);
    next = b + 1;
  }
  if (next <= MAX_CP) out.push([next, MAX_CP]);
  return out;
}

const DIGIT: Ranges = [[0x30, 0x39]];
const WORD: Ranges = [[0x30, 0x39], [0x41, 0x5a], [0x5f, 0x5f], [0x61, 0x7a]];
// ECMAScript WhiteSpace + LineTerminator (ECMA-262 §12.2, §12.3)
const SPACE: Ranges = normalise([
  [0x09, 0x0d], [0x20, 0x20], [0xa0, 0xa0], [0x1680, 0x1680], [0x2000, 0x200a], [0x2028, 0x2029],
  [0x202f, 0x202f], [0x205f, 0x205f], [0x3000, 0x3000], [0xfeff, 0xfeff],
]);
const LINE_TERMINATORS: Ranges = [[0x0a, 0x0a], [0x0d, 0x0d], [0x2028, 0x2029]];

function caseVariants(rs: Ranges, ignoreCase: boolean): Ranges {
  if (!ignoreCase) return rs;
  const extra: Ranges = [];
  for (const [a, b] of rs) {
    const hi = Math.min(b, 0xffff); // simple case folding of the BMP is enough for lexical classes
    for (let c = a; c <= hi; c++) {
      if (c >= 0xd800 && c <= 0xdfff) continue;
      const s = String.fromCodePoint(c);
      for (const v of [s.toLowerCase(), s.toUpperCase()]) {
        const cp = v.codePointAt(0)!;
        if (v.length === String.fromCodePoint(cp).length && cp !== c) extra.push([cp, cp]);
      }
    }
  }
  return normalise([...rs, ...extra]);
}

/** Splits a code-point range into sequences of byte ranges (UTF-8; surrogates dropped). */
function utf8Sequences(lo: number, hi: number, out: Array<Array<[number, number]>>): void {
  if (lo > hi) return;
  if (lo <= 0xdfff && hi >= 0xd800) {
    utf8Sequences(lo, 0xd7ff, out);
    utf8Sequences(0xe000, hi, out);
    return;
  }
  for (const max of [0x7f, 0x7ff, 0xffff]) {
    if (lo <= max && hi > max) {
      utf8Sequences(lo, max, out);
      utf8Sequences(max + 1, hi, out);
      return;
    }
  }
  if (hi <= 0x7f) {
    out.push([[lo, hi]]);
    return;
  }
  const n = hi <= 0x7ff ? 2 : hi <= 0xffff ? 3 : 4;
  for (let i = 1; i < n; i++) {
    const m = (1 << (6 * i)) - 1;
    if ((lo & ~m) !== (hi & ~m)) {
      if ((lo & m) !== 0) {
        utf8Sequences(lo, lo | m, out);
        utf8Sequences((lo | m) + 1, hi, out);
        return;
      }
      if ((hi & m) !== m) {
        utf8Sequences(lo, (hi & ~m) - 1, out);
        utf8Sequences(hi & ~m, hi, out);
        return;
      }
    }
  }
  const a = Buffer.from(String.fromCodePoint(lo), 'utf8');
  const b = Buffer.from(String.fromCodePoint(hi), 'utf8');
  const seq: Array<[number, number]> = [];
  for (let i = 0; i < a.length; i++) seq.push([a[i], b[i]]);
  out.push(seq);
}

/** A Thompson NFA under construction: byte-range edges and epsilon edges. */
class Nfa {
  eps: number[][] = [];
  edges: Array<Array<[number, number, number]>> = []; // [lo, hi, to]
  add(): number {
    this.eps.push([]);
    this.edges.push([]);
    return this.eps.length - 1;
  }
}

interface Frag {
  start: number;
  end: number;
}

function compileNode(nfa: Nfa, node: any, ignoreCase: boolean, fail: (what: string) => never): Frag {
  const charSet = (rs: Ranges): Frag => {
    const start = nfa.add();
    const end = nfa.add();
    const seqs: Array<Array<[number, number]>> = [];
    for (const [a, b] of caseVariants(normalise(rs), ignoreCase)) utf8Sequences(a, b, seqs);
    for (const seq of seqs) {
      let cur = start;
      for (let i = 0; i < seq.length; i++) {
        const to = i === seq.length - 1 ? end : nfa.add();
        nfa.edges[cur].push([seq[i][0], seq[i][1], to]);
        cur = to;
      }
    }
    return { start, end };
  };
  const seq = (items: any[]): Frag => {
    const start = nfa.add();
    let cur = start;
    for (const it of items) {
      const f = compileNode(nfa, it, ignoreCase, fail);
      nfa.eps[cur].push(f.start);
      cur = f.end;
    }
    return { start, end: cur };
  };
  switch (node.type) {
    case 'value':
      return charSet([[node.codePoint, node.codePoint]]);
    case 'dot':
      return charSet(complement(LINE_TERMINATORS));
    case 'characterClassEscape':
      return charSet(escapeSet(node.value));
    case 'characterClass': {
      const rs: Ranges = [];
      for (const item of node.body) {
        if (item.type === 'value') rs.push([item.codePoint, item.codePoint]);
        else if (item.type === 'characterClassRange') rs.push([item.min.codePoint, item.max.codePoint]);
        else if (item.type === 'characterClassEscape') rs.push(...escapeSet(item.value));
        else fail(`unsupported class item ${item.raw}`);
      }
      // case variants before complementing, as ECMAScript canonicalises both sides
      const base = caseVariants(normalise(rs), ignoreCase);
      return charSet(node.negative ? complement(base) : base);
    }
    case 'alternative':
      return seq(node.body);
    case 'disjunction': {
      const start = nfa.add();
      const end = nfa.add();
      for (const alt of node.body) {
        const f = compileNode(nfa, alt, ignoreCase, fail);
        nfa.eps[start].push(f.start);
        nfa.eps[f.end].push(end);
      }
      return { start, end };
    }
    case 'group':
      if (node.behavior !== 'normal' && node.behavior !== 'ignore') fail(`lookaround ${node.raw}`);
      return seq(node.body);
    case 'anchor':
      if (node.kind === 'start' || node.kind === 'end') {
        const s = nfa.add();
        return { start: s, end: s };
      }
      return fail(`word-boundary assertion ${node.raw}`);
    case 'quantifier': {
      const min: number = node.min;
      const max: number | undefined = node.max;
      if (min > 1000 || (max !== undefined && max > 1000)) fail(`repetition count above 1000 in ${node.raw}`);
      const start = nfa.add();
      let cur = start;
      for (let i = 0; i < min; i++) {
        const f = compileNode(nfa, node.body[0], ignoreCase, fail);
        nfa.eps[cur].push(f.start);
        cur = f.end;
      }
      if (max === undefined) {
        const f = compileNode(nfa, node.body[0], ignoreCase, fail);
        const end = nfa.add();
        nfa.eps[cur].push(f.start, end);
        nfa.eps[f.end].push(f.start, end);
        return { start, end };
      }
      const end = nfa.add();
      for (let i = min; i < max; i++) {
        const f = compileNode(nfa, node.body[0], ignoreCase, fail);
        nfa.eps[cur].push(f.start, end);
        cur = f.end;
      }
      nfa.eps[cur].push(end);
      return { start, end };
    }
    default:
      return fail(`${node.type} ${node.raw}`);
  }
}

function escapeSet(v: string): Ranges {
  switch (v) {
    case 'd': return DIGIT;
    case 'D': return complement(DIGIT);
    case 'w': return WORD;
    case 'W': return complement(WORD);
    case 's': return SPACE;
    default: return complement(SPACE);
  }
}

/** Mutable DFA under construction (state 0 reserved for dead). */
interface RawDfa {
  trans: number[]; // n * 256
  accept: boolean[];
  start: number;
}

function determinise(nfa: Nfa, start: number, end: number): RawDfa {
  const closure = (set: number[]): number[] => {
    const seen = new Set<number>(set);
    const stack = [...set];
    while (stack.length) {
      const s = stack.pop()!;
      for (const t of nfa.eps[s]) if (!seen.has(t)) {
        seen.add(t);
        stack.push(t);
      }
    }
    return [...seen].sort((a, b) => a - b);
  };
  const ids = new Map<string, number>();
  const sets: number[][] = [[]];
  const trans: number[] = new Array(256).fill(0);
  const accept: boolean[] = [false];
  ids.set('', 0);
  const intern = (set: number[]): number => {
    const key = set.join(',');
    let id = ids.get(key);
    if (id === undefined) {
      id = sets.length;
      if (id > MAX_DFA_STATES) throw new RegexError(`the DFA would exceed ${MAX_DFA_STATES} states`);
      ids.set(key, id);
      sets.push(set);
      accept.push(set.includes(end));
      for (let b = 0; b < 256; b++) trans.push(0);
    }
    return id;
  };
  const s0 = intern(closure([start]));
  for (let i = 1; i < sets.length; i++) {
    const targets: number[][] = Array.from({ length: 256 }, () => []);
    for (const s of sets[i]) for (const [lo, hi, to] of nfa.edges[s]) for (let b = lo; b <= hi; b++) targets[b].push(to);
    for (let b = 0; b < 256; b++) {
      if (targets[b].length === 0) continue;
      trans[i * 256 + b] = intern(closure(targets[b]));
    }
  }
  return { trans, accept, start: s0 };
}

/** Removes `words` from the language (product with the words' trie). */
function subtractWords(d: RawDfa, words: readonly Uint8Array[]): RawDfa {
  // trie of the words: node 0 = root; -1 = fell off the trie
  const child: Array<Map<number, number>> = [new Map()];
  const isWord: boolean[] = [false];
  for (const w of words) {
    let n = 0;
    for (const b of w) {
      let c = child[n].get(b);
      if (c === undefined) {
        c = child.length;
        child.push(new Map());
        isWord.push(false);
        child[n].set(b, c);
      }
      n = c;
    }
    isWord[n] = true;
  }
  const ids = new Map<string, number>([['dead', 0]]);
  const pairs: Array<[number, number]> = [[0, -1]];
  const trans: number[] = new Array(256).fill(0);
  const accept: boolean[] = [false];
  const intern = (s: number, k: number): number => {
    if (s === 0) return 0;
    const key = `${s},${k}`;
    let id = ids.get(key);
    if (id === undefined) {
      id = pairs.length;
      if (id > MAX_DFA_STATES) throw new RegexError(`the DFA would exceed ${MAX_DFA_STATES} states`);
      ids.set(key, id);
      pairs.push([s, k]);
      accept.push(d.accept[s] && !(k >= 0 && isWord[k]));
      for (let b = 0; b < 256; b++) trans.push(0);
    }
    return id;
  };
  const start = intern(d.start, 0);
  for (let i = 1; i < pairs.length; i++) {
    const [s, k] = pairs[i];
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b];
      if (t === 0) continue;
      const kk = k >= 0 ? child[k].get(b) ?? -1 : -1;
      trans[i * 256 + b] = intern(t, kk);
    }
  }
  return { trans, accept, start };
}

/** Trims states that cannot reach acceptance, minimises (Moore), renumbers (dead 0, start 1). */
function finish(d: RawDfa): ByteDfa {
  const n = d.accept.length;
  // reverse reachability from accepting states
  const rev: number[][] = Array.from({ length: n }, () => []);
  for (let s = 1; s < n; s++) for (let b = 0; b < 256; b++) {
    const t = d.trans[s * 256 + b];
    if (t !== 0) rev[t].push(s);
  }
  const live = new Uint8Array(n);
  const stack: number[] = [];
  for (let s = 1; s < n; s++) if (d.accept[s]) {
    live[s] = 1;
    stack.push(s);
  }
  while (stack.length) {
    const t = stack.pop()!;
    for (const s of rev[t]) if (!live[s]) {
      live[s] = 1;
      stack.push(s);
    }
  }
  // forward reachability from start through live states
  const reach = new Uint8Array(n);
  if (live[d.start]) {
    reach[d.start] = 1;
    stack.push(d.start);
    while (stack.length) {
      const s = stack.pop()!;
      for (let b = 0; b < 256; b++) {
        const t = d.trans[s * 256 + b];
        if (t !== 0 && live[t] && !reach[t]) {
          reach[t] = 1;
          stack.push(t);
        }
      }
    }
  }
  const states: number[] = [];
  for (let s = 1; s < n; s++) if (reach[s]) states.push(s);
  // Moore refinement: class 0 = dead
  const cls = new Int32Array(n);
  for (const s of states) cls[s] = d.accept[s] ? 1 : 2;
  let classCount = 3;
  for (;;) {
    const sig = new Map<string, number>();
    const next = new Int32Array(n);
    let k = 1;
    for (const s of states) {
      const parts: number[] = [cls[s]];
      for (let b = 0; b < 256; b++) {
        const t = d.trans[s * 256 + b];
        parts.push(t !== 0 && reach[t] ? cls[t] : 0);
      }
      const key = parts.join(',');
      let c = sig.get(key);
      if (c === undefined) {
        c = k++;
        sig.set(key, c);
      }
      next[s] = c;
    }
    const stable = k === classCount;
    classCount = k;
    cls.set(next);
    if (stable) break;
  }
  if (states.length === 0) {
    return { stateCount: 1, start: 0, trans: new Int32Array(256), accept: new Uint8Array(1), minAccept: new Int32Array(1), shortest: null };
  }
  // renumber: start first (= 1), then BFS order
  const newId = new Int32Array(classCount).fill(-1);
  const order: number[] = [];
  const rep = new Int32Array(classCount).fill(-1);
  for (const s of states) if (rep[cls[s]] < 0) rep[cls[s]] = s;
  newId[cls[d.start]] = 1;
  order.push(cls[d.start]);
  for (let i = 0; i < order.length; i++) {
    const s = rep[order[i]];
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b];
      if (t !== 0 && reach[t] && newId[cls[t]] < 0) {
        newId[cls[t]] = order.length + 1;
        order.push(cls[t]);
      }
    }
  }
  const count = order.length + 1;
  const trans = new Int32Array(count * 256);
  const accept = new Uint8Array(count);
  for (let i = 0; i < order.length; i++) {
    const s = rep[order[i]];
    accept[i + 1] = d.accept[s] ? 1 : 0;
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b];
      trans[(i + 1) * 256 + b] = t !== 0 && reach[t] ? newId[cls[t]] : 0;
    }
  }
  return withDistances(count, trans, accept);
}

/** Adds minAccept and a shortest accepted string to a numbered DFA. */
export function withDistances(count: number, trans: Int32Array, accept: Uint8Array): ByteDfa {
  const minAccept = new Int32Array(count).fill(0x3fffffff);
  const nextByte = new Int32Array(count).fill(-1);
  // Bellman-Ford style relaxation (DFAs are small)
  for (let s = 1; s < count; s++) if (accept[s]) minAccept[s] = 0;
  let changed = true;
  while (changed) {
    changed = false;
    for (let s = 1; s < count; s++) for (let b = 0; b < 256; b++) {
      const t = trans[s * 256 + b];
      if (t !== 0 && minAccept[t] + 1 < minAccept[s]) {
        minAccept[s] = minAccept[t] + 1;
        nextByte[s] = b;
        changed = true;
      }
    }
  }
  let shortest: Uint8Array | null = null;
  if (count > 1) {
    const out: number[] = [];
    let s = 1;
    while (!accept[s]) {
      out.push(nextByte[s]);
      s = trans[s * 256 + nextByte[s]];
    }
    shortest = Uint8Array.from(out);
  }
  return { stateCount: count, start: count > 1 ? 1 : 0, trans, accept, minAccept, shortest };
}

/**
 * Compiles `pattern` (ECMAScript source, no slashes) with `flags` to a byte DFA. `exclude` lists
 * byte strings removed from the language (a `reserved` class's keywords).
 * Throws RegexError with a plain description of the unsupported construct.
 */
export function compileRegex(pattern: string, flags: string, exclude: readonly Uint8Array[] = []): ByteDfa {
  const fail = (what: string): never => {
    throw new RegexError(`unsupported regular-expression construct: ${what}`);
  };
  let ast: any;
  try {
    ast = parseRegex(pattern, flags.includes('u') ? 'u' : '', {});
  } catch (e) {
    throw new RegexError(`invalid regular expression /${pattern}/: ${(e as Error).message.split('\n')[0]}`);
  }
  const nfa = new Nfa();
  const frag = compileNode(nfa, ast, flags.includes('i'), fail);
  let raw = determinise(nfa, frag.start, frag.end);
  if (exclude.length > 0) raw = subtractWords(raw, exclude);
  return finish(raw);
}

/** A DFA accepting exactly the byte string `bytes` (for literal texts). */
export function literalDfa(bytes: Uint8Array): ByteDfa {
  const count = bytes.length + 2; // 0 dead, 1..len+1 positions
  const trans = new Int32Array(count * 256);
  const accept = new Uint8Array(count);
  for (let i = 0; i < bytes.length; i++) trans[(i + 1) * 256 + bytes[i]] = i + 2;
  accept[count - 1] = 1;
  return withDistances(count, trans, accept);
}

/** Runs the DFA over `bytes` from `state`; returns the final state (0 when it died). */
export function runDfa(dfa: ByteDfa, state: number, bytes: ArrayLike<number>): number {
  let s = state;
  for (let i = 0; i < bytes.length && s !== 0; i++) s = dfa.trans[s * 256 + bytes[i]];
  return s;
}
