/**
 * The regex IR → one byte-level DFA over UTF-8: the automaton every consumer of a token class runs
 * (the program parser's lexer, the pushdown automaton and the mask tables).
 *
 * Pipeline: Thompson NFA over character ranges (its size is estimated from the IR first and refused
 * above MAX_NFA_STATES before anything is allocated) → subset construction over ranges, counting
 * states (refused above MAX_STATES) and work (refused above MAX_WORK) → without flag `u`, surrogate
 * pairs of code units become astral code points (what ECMAScript does on such strings) → UTF-8
 * byte-range paths (utf8.ts) → byte subset construction → optional subtraction of a finite word
 * list (a `reserved` class's keywords) → trim → Hopcroft minimisation → renumbering.
 *
 * Numbering invariant (relied on by every table user): state 0 is the dead state (all transitions
 * to 0, not accepting); state 1 is the start state unless the language is empty (then start is 0).
 * After trimming, every state ≠ 0 can reach an accepting state, so "not dead" means "viable".
 *
 * Cost: the NFA is linear in the expanded pattern (bounded repetitions are copied); subset
 * construction is exponential in the worst case — `(a|b)*a(a|b){13}` needs 2^14 states — which is
 * why the limits exist and are counted before the tables are allocated. The shipped classes need
 * at most a few hundred states and compile in milliseconds.
 */
import type { ParsedRegex, Rx } from './syntax.ts';
import { utf8Sequences, type ByteRangeSeq } from './utf8.ts';
import { finish, withDistances, type ByteDfa, type RawDfa } from './minimise.ts';

export { withDistances, type ByteDfa } from './minimise.ts';

/** Largest character-level DFA a token class may need (the limit `regex-too-large` names). */
export const MAX_STATES = 4096;
/** Largest NFA (estimated from the IR before building it). */
export const MAX_NFA_STATES = 100_000;
/** Largest byte-level DFA (multi-byte characters add intermediate states). */
export const MAX_BYTE_STATES = 16_384;
/** Upper bound on NFA states visited while determinising (bounds the time). */
export const MAX_WORK = 3_000_000;

/** The automaton of a token class would exceed a limit; `what` says which, in plain words. */
export class RegexTooLargeError extends Error {
  constructor(readonly what: string) {
    super(what);
    this.name = 'RegexTooLargeError';
  }
}


// ---- size estimate ---------------------------------------------------------------------------

/** NFA states the Thompson construction of `rx` would allocate (saturates above the limit). */
export function nfaSize(rx: Rx): number {
  const cap = MAX_NFA_STATES + 1;
  switch (rx.t) {
    case 'set':
      return 2;
    case 'seq':
    case 'alt':
      return Math.min(cap, rx.items.reduce((n, x) => n + nfaSize(x), 2));
    case 'rep': {
      const copies = rx.max === Infinity ? rx.min + 1 : rx.max;
      return Math.min(cap, 2 + nfaSize(rx.body) * copies);
    }
  }
}

// ---- Thompson NFA over character ranges ---------------------------------------------------------

class Nfa {
  readonly eps: number[][] = [];
  /** flat [lo, hi, to, ...] per state */
  readonly edges: number[][] = [];
  add(): number {
    this.eps.push([]);
    this.edges.push([]);
    return this.eps.length - 1;
  }
}

interface Frag {
  readonly start: number;
  readonly end: number;
}

function thompson(nfa: Nfa, rx: Rx): Frag {
  switch (rx.t) {
    case 'set': {
      const start = nfa.add();
      const end = nfa.add();
      for (let i = 0; i < rx.set.length; i += 2) nfa.edges[start]!.push(rx.set[i]!, rx.set[i + 1]!, end);
      return { start, end };
    }
    case 'seq': {
      const start = nfa.add();
      let cur = start;
      for (const it of rx.items) {
        const f = thompson(nfa, it);
        nfa.eps[cur]!.push(f.start);
        cur = f.end;
      }
      return { start, end: cur };
    }
    case 'alt': {
      const start = nfa.add();
      const end = nfa.add();
      for (const it of rx.items) {
        const f = thompson(nfa, it);
        nfa.eps[start]!.push(f.start);
        nfa.eps[f.end]!.push(end);
      }
      return { start, end };
    }
    case 'rep': {
      const start = nfa.add();
      let cur = start;
      for (let i = 0; i < rx.min; i++) {
        const f = thompson(nfa, rx.body);
        nfa.eps[cur]!.push(f.start);
        cur = f.end;
      }
      const end = nfa.add();
      if (rx.max === Infinity) {
        const f = thompson(nfa, rx.body);
        nfa.eps[cur]!.push(f.start, end);
        nfa.eps[f.end]!.push(f.start, end);
        return { start, end };
      }
      for (let i = rx.min; i < rx.max; i++) {
        const f = thompson(nfa, rx.body);
        nfa.eps[cur]!.push(f.start, end);
        cur = f.end;
      }
      nfa.eps[cur]!.push(end);
      return { start, end };
    }
  }
}

// ---- subset construction over character ranges ---------------------------------------------------

/** A DFA over characters: per state, sorted disjoint [lo, hi, to] triples; state 0 is the start. */
interface CharDfa {
  readonly trans: number[][];
  readonly accept: boolean[];
}

function determiniseChars(nfa: Nfa, frag: Frag): CharDfa {
  let work = 0;
  const stamp = new Int32Array(nfa.eps.length);
  let epoch = 0;
  const closure = (seeds: Iterable<number>): number[] => {
    epoch++;
    const out: number[] = [];
    const stack: number[] = [];
    for (const s of seeds) if (stamp[s] !== epoch) {
      stamp[s] = epoch;
      stack.push(s);
    }
    while (stack.length > 0) {
      const s = stack.pop()!;
      out.push(s);
      for (const t of nfa.eps[s]!) if (stamp[t] !== epoch) {
        stamp[t] = epoch;
        stack.push(t);
      }
    }
    work += out.length;
    if (work > MAX_WORK) throw new RegexTooLargeError(`determinising it takes more than ${MAX_WORK.toLocaleString('en-US')} steps`);
    return out.sort((a, b) => a - b);
  };
  const ids = new Map<string, number>();
  const sets: number[][] = [];
  const trans: number[][] = [];
  const accept: boolean[] = [];
  const intern = (set: number[]): number => {
    const key = set.join(',');
    let id = ids.get(key);
    if (id === undefined) {
      id = sets.length;
      if (id >= MAX_STATES) throw new RegexTooLargeError(`it needs more than ${MAX_STATES.toLocaleString('en-US')} states`);
      ids.set(key, id);
      sets.push(set);
      trans.push([]);
      accept.push(set.includes(frag.end));
    }
    return id;
  };
  intern(closure([frag.start]));
  for (let i = 0; i < sets.length; i++) {
    // sweep over the range boundaries of every edge leaving the set
    const events: number[] = []; // point, +1/-1, target
    for (const s of sets[i]!) {
      const e = nfa.edges[s]!;
      for (let k = 0; k < e.length; k += 3) events.push(e[k]!, 1, e[k + 2]!, e[k + 1]! + 1, -1, e[k + 2]!);
    }
    const n = events.length / 3;
    if (n === 0) continue;
    work += n;
    const order = Array.from({ length: n }, (_, k) => k).sort((a, b) => events[3 * a]! - events[3 * b]!);
    const active = new Map<number, number>();
    const memo = new Map<string, number>();
    const out = trans[i]!;
    for (let k = 0; k < n; ) {
      const point = events[3 * order[k]!]!;
      while (k < n && events[3 * order[k]!]! === point) {
        const j = order[k]!;
        const to = events[3 * j + 2]!;
        const c = (active.get(to) ?? 0) + events[3 * j + 1]!;
        if (c === 0) active.delete(to);
        else active.set(to, c);
        k++;
      }
      if (active.size === 0 || k === n) continue;
      const next = events[3 * order[k]!]! - 1;
      work += active.size;
      const targets = [...active.keys()].sort((a, b) => a - b);
      const key = targets.join(',');
      let to = memo.get(key);
      if (to === undefined) {
        to = intern(closure(targets));
        memo.set(key, to);
      }
      const m = out.length;
      if (m > 0 && out[m - 1] === to && out[m - 2] === point - 1) out[m - 2] = next;
      else out.push(point, next, to);
    }
  }
  return { trans, accept };
}

/**
 * Without flag `u` the DFA reads UTF-16 code units; text is read as code points. A high surrogate
 * followed by a low one is one astral code point (ECMAScript sees the two units); lone surrogates
 * never occur in UTF-8 text and are dropped.
 */
function pairSurrogates(d: CharDfa): CharDfa {
  const trans = d.trans.map((t) => {
    const out: number[] = [];
    for (let k = 0; k < t.length; k += 3) {
      const lo = t[k]!, hi = t[k + 1]!, to = t[k + 2]!;
      if (lo < 0xd800) out.push(lo, Math.min(hi, 0xd7ff), to);
      if (hi > 0xdfff) out.push(Math.max(lo, 0xe000), hi, to);
      const hlo = Math.max(lo, 0xd800), hhi = Math.min(hi, 0xdbff);
      const next = d.trans[to]!;
      if (hlo > hhi) continue;
      for (let j = 0; j < next.length; j += 3) {
        const llo = Math.max(next[j]!, 0xdc00), lhi = Math.min(next[j + 1]!, 0xdfff);
        if (llo > lhi) continue;
        const base = (h: number) => 0x10000 + ((h - 0xd800) << 10);
        // every low unit: the high range maps to one contiguous range of code points
        if (llo === 0xdc00 && lhi === 0xdfff) out.push(base(hlo), base(hhi) + 0x3ff, next[j + 2]!);
        else for (let h = hlo; h <= hhi; h++) out.push(base(h) + llo - 0xdc00, base(h) + lhi - 0xdc00, next[j + 2]!);
      }
    }
    // sort and merge adjacent ranges with the same target
    const triples: Array<[number, number, number]> = [];
    for (let k = 0; k < out.length; k += 3) triples.push([out[k]!, out[k + 1]!, out[k + 2]!]);
    triples.sort((a, b) => a[0] - b[0]);
    const merged: number[] = [];
    for (const [lo, hi, to] of triples) {
      const m = merged.length;
      if (m > 0 && merged[m - 1] === to && merged[m - 2]! + 1 === lo) merged[m - 2] = hi;
      else merged.push(lo, hi, to);
    }
    return merged;
  });
  return { trans, accept: d.accept };
}

// ---- bytes ------------------------------------------------------------------------------------


function tooManyBytes(): never {
  throw new RegexTooLargeError(`its UTF-8 automaton needs more than ${MAX_BYTE_STATES.toLocaleString('en-US')} states`);
}

/** Do the flat [lo, hi, to] edges cover pairwise disjoint byte ranges? */
function disjointEdges(e: readonly number[]): boolean {
  const seen = new Uint8Array(256);
  for (let k = 0; k < e.length; k += 3) {
    for (let b = e[k]!; b <= e[k + 1]!; b++) {
      if (seen[b]) return false;
      seen[b] = 1;
    }
  }
  return true;
}

/** Encodes a character DFA as a byte NFA (shared suffix nodes), then determinises it. */
function toBytes(d: CharDfa): RawDfa {
  const edges: number[][] = d.trans.map(() => []); // flat [lo, hi, to]
  const suffix = new Map<string, number>();
  const node = (seq: ByteRangeSeq, from: number, to: number): number => {
    // the node that reads seq[from..] and then reaches character state `to`
    if (from === seq.length) return to;
    const key = `${to}|${seq.slice(from).map((r) => r.join('-')).join(' ')}`;
    let n = suffix.get(key);
    if (n === undefined) {
      n = edges.length;
      edges.push([]);
      suffix.set(key, n);
      if (edges.length > 4 * MAX_BYTE_STATES) tooManyBytes();
      const [lo, hi] = seq[from]!;
      edges[n]!.push(lo, hi, node(seq, from + 1, to));
    }
    return n;
  };
  d.trans.forEach((t, s) => {
    for (let k = 0; k < t.length; k += 3) {
      const seqs: ByteRangeSeq[] = [];
      utf8Sequences(t[k]!, t[k + 1]!, seqs);
      for (const seq of seqs) edges[s]!.push(seq[0]![0], seq[0]![1], node(seq, 1, t[k + 2]!));
    }
  });
  // byte subset construction (no epsilon edges)
  const ids = new Map<string, number>([['', 0]]);
  const sets: number[][] = [[]];
  const trans: number[] = new Array<number>(256).fill(0);
  const accept: boolean[] = [false];
  const intern = (set: number[]): number => {
    const key = set.join(',');
    let id = ids.get(key);
    if (id === undefined) {
      id = sets.length;
      if (id > MAX_BYTE_STATES) tooManyBytes();
      ids.set(key, id);
      sets.push(set);
      accept.push(set.some((s) => s < d.accept.length && d.accept[s]!));
      for (let b = 0; b < 256; b++) trans.push(0);
    }
    return id;
  };
  const start = intern([0]);
  for (let i = 1; i < sets.length; i++) {
    const set = sets[i]!;
    const single = set.length === 1 ? edges[set[0]!]! : null;
    if (single !== null && disjointEdges(single)) {
      // one NFA state whose edges do not share a byte (two character ranges may share a lead byte)
      const e = single;
      for (let k = 0; k < e.length; k += 3) {
        const to = intern([e[k + 2]!]);
        for (let b = e[k]!; b <= e[k + 1]!; b++) trans[i * 256 + b] = to;
      }
      continue;
    }
    const targets: number[][] = Array.from({ length: 256 }, () => []);
    for (const s of set) {
      const e = edges[s]!;
      for (let k = 0; k < e.length; k += 3) for (let b = e[k]!; b <= e[k + 1]!; b++) targets[b]!.push(e[k + 2]!);
    }
    for (let b = 0; b < 256; b++) {
      const tg = targets[b]!;
      if (tg.length === 0) continue;
      trans[i * 256 + b] = intern([...new Set(tg)].sort((x, y) => x - y));
    }
  }
  return { trans, accept, start };
}

/** Removes `words` from the language (product with the words' trie). */
function subtractWords(d: RawDfa, words: readonly Uint8Array[]): RawDfa {
  const child: Array<Map<number, number>> = [new Map()];
  const isWord: boolean[] = [false];
  for (const w of words) {
    let n = 0;
    for (const b of w) {
      let c = child[n]!.get(b);
      if (c === undefined) {
        c = child.length;
        child.push(new Map());
        isWord.push(false);
        child[n]!.set(b, c);
      }
      n = c;
    }
    isWord[n] = true;
  }
  const ids = new Map<string, number>([['dead', 0]]);
  const pairs: Array<[number, number]> = [[0, -1]];
  const trans: number[] = new Array<number>(256).fill(0);
  const accept: boolean[] = [false];
  const intern = (s: number, k: number): number => {
    if (s === 0) return 0;
    const key = `${s},${k}`;
    let id = ids.get(key);
    if (id === undefined) {
      id = pairs.length;
      if (id > MAX_BYTE_STATES) tooManyBytes();
      ids.set(key, id);
      pairs.push([s, k]);
      accept.push(d.accept[s]! && !(k >= 0 && isWord[k]!));
      for (let b = 0; b < 256; b++) trans.push(0);
    }
    return id;
  };
  const start = intern(d.start, 0);
  for (let i = 1; i < pairs.length; i++) {
    const [s, k] = pairs[i]!;
    for (let b = 0; b < 256; b++) {
      const t = d.trans[s * 256 + b]!;
      if (t === 0) continue;
      const kk = k >= 0 ? (child[k]!.get(b) ?? -1) : -1;
      trans[i * 256 + b] = intern(t, kk);
    }
  }
  return { trans, accept, start };
}

/**
 * Builds the byte DFA of a parsed token regex; `exclude` lists byte strings removed from the
 * language (a `reserved` class's keywords). Throws RegexTooLargeError past a limit.
 */
export function buildByteDfa(parsed: ParsedRegex, exclude: readonly Uint8Array[] = []): ByteDfa {
  const size = nfaSize(parsed.rx);
  if (size > MAX_NFA_STATES) throw new RegexTooLargeError(`its repetitions expand to more than ${MAX_NFA_STATES.toLocaleString('en-US')} states`);
  const nfa = new Nfa();
  const frag = thompson(nfa, parsed.rx);
  let chars = determiniseChars(nfa, frag);
  if (!parsed.unicode) chars = pairSurrogates(chars);
  let raw = toBytes(chars);
  if (exclude.length > 0) raw = subtractWords(raw, exclude);
  return finish(raw);
}

/**
 * The DFA of `dfa`'s language minus the byte strings `words` (a `reserved` class minus the
 * grammar's keywords); null when the product would exceed MAX_BYTE_STATES.
 */
export function withoutWords(dfa: ByteDfa, words: readonly Uint8Array[]): ByteDfa | null {
  const raw: RawDfa = { trans: Array.from(dfa.trans), accept: Array.from(dfa.accept, (a) => a === 1), start: dfa.start };
  try {
    return finish(subtractWords(raw, words));
  } catch (err) {
    if (err instanceof RegexTooLargeError) return null;
    throw err;
  }
}

/** A DFA accepting exactly the byte string `bytes` (for literal texts). */
export function literalDfa(bytes: Uint8Array): ByteDfa {
  const count = bytes.length + 2; // 0 dead, 1..len+1 positions
  const trans = new Int32Array(count * 256);
  const accept = new Uint8Array(count);
  for (let i = 0; i < bytes.length; i++) trans[(i + 1) * 256 + bytes[i]!] = i + 2;
  accept[count - 1] = 1;
  return withDistances(count, trans, accept);
}

/** Runs the DFA over `bytes` from `state`; returns the final state (0 when it died). */
export function runDfa(dfa: ByteDfa, state: number, bytes: ArrayLike<number>): number {
  let s = state;
  for (let i = 0; i < bytes.length && s !== 0; i++) s = dfa.trans[s * 256 + bytes[i]!]!;
  return s;
}

/**
 * Longest match of the DFA in `text` from UTF-16 offset `from`, reading code points as UTF-8 (the
 * lexer of the program parser). Returns the end offset of the longest accepted prefix, or -1.
 * Linear in the length read; lone surrogates end the match (they never belong to a lexeme).
 */
export function longestMatch(dfa: ByteDfa, text: string, from: number): number {
  const { trans, accept } = dfa;
  let s = dfa.start;
  let best = s !== 0 && accept[s] ? from : -1;
  let i = from;
  while (s !== 0 && i < text.length) {
    let c = text.charCodeAt(i);
    let len = 1;
    if (c >= 0xd800 && c <= 0xdbff) {
      const d = text.charCodeAt(i + 1);
      if (!(d >= 0xdc00 && d <= 0xdfff)) break;
      c = 0x10000 + ((c - 0xd800) << 10) + (d - 0xdc00);
      len = 2;
    } else if (c >= 0xdc00 && c <= 0xdfff) break;
    if (c < 0x80) s = trans[s * 256 + c]!;
    else if (c < 0x800) {
      s = trans[s * 256 + (0xc0 | (c >> 6))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | (c & 0x3f))]!;
    } else if (c < 0x10000) {
      s = trans[s * 256 + (0xe0 | (c >> 12))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | ((c >> 6) & 0x3f))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | (c & 0x3f))]!;
    } else {
      s = trans[s * 256 + (0xf0 | (c >> 18))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | ((c >> 12) & 0x3f))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | ((c >> 6) & 0x3f))]!;
      if (s !== 0) s = trans[s * 256 + (0x80 | (c & 0x3f))]!;
    }
    i += len;
    if (s !== 0 && accept[s]) best = i;
  }
  return best;
}
