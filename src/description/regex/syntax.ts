/**
 * Token regex source → the regex IR (`Rx`), the one representation every later consumer reads
 * (description analysis, the program parser, the sampler, the byte automaton and the masks).
 *
 * The meaning of a token regex is fixed here, once: a lexeme L belongs to the class exactly when
 * ECMAScript's `new RegExp('^(?:' + pattern + ')$', flags).test(L)` is true. Parsing is done by
 * regjsparser; this file maps its AST to four node kinds whose character sets are already
 * case-closed (flag `i`, see casefold.ts), so no consumer needs to know the flags.
 *
 * Supported: alternation, sequences, groups (capturing, non-capturing, named), greedy and lazy
 * quantifiers (`? * + {n} {n,} {n,m}`, lazy ones match the same whole lexemes), character classes
 * with ranges and negation, `.`, `\d \D \w \W \s \S`, every character escape; `^` where nothing can
 * come before it and `$` where nothing can come after it (no-ops on a whole lexeme). Flags `i`, `u`.
 * Refused with a located problem (code `regex-unsupported`): other anchors, `\b \B`, look-ahead and
 * look-behind, back-references, unicode property escapes, class set operations, modifier groups.
 *
 * Alphabet: code points with `u`; UTF-16 code units without it (a set may then hold surrogate
 * units, which the automaton pairs into astral code points, as ECMAScript does on such strings).
 */
import regjsparser from 'regjsparser';
import { caseClose } from './casefold.ts';
import { DIGIT, LINE_TERMINATORS, makeSet, setComplement, setUnion, SPACE, WORD, type CharSet } from './charset.ts';

export type Rx =
  | { readonly t: 'set'; readonly set: CharSet }
  | { readonly t: 'seq'; readonly items: readonly Rx[] }
  | { readonly t: 'alt'; readonly items: readonly Rx[] }
  /** `max` is Infinity for an unbounded repetition */
  | { readonly t: 'rep'; readonly body: Rx; readonly min: number; readonly max: number };

/** A parsed token regex: plain data (structured-clonable, like the rest of the grammar IR). */
export interface ParsedRegex {
  readonly rx: Rx;
  /** flag `u`: sets hold code points (else UTF-16 code units) */
  readonly unicode: boolean;
}

/** A problem located in the pattern source (UTF-16 offset into the pattern, without slashes). */
export interface RegexProblem {
  readonly code: 'bad-regex' | 'regex-unsupported';
  readonly message: string;
  readonly offset: number;
  readonly length: number;
}

interface Node {
  type: string;
  range: [number, number];
  [k: string]: unknown;
}

/** Where a node sits: can anything be consumed before / after it in a match of the whole pattern? */
interface Edges {
  readonly first: boolean;
  readonly last: boolean;
}

class Refusal extends Error {
  constructor(readonly problem: RegexProblem) {
    super(problem.message);
  }
}

/** Parses `pattern` with `flags` (only `i` and `u` are read; the caller checks the flags). */
export function parseTokenRegex(pattern: string, flags: string): ParsedRegex | RegexProblem {
  const unicode = flags.includes('u');
  const fold = flags.includes('i');
  const max = unicode ? 0x10ffff : 0xffff;
  let root: Node;
  try {
    root = regjsparser.parse(pattern, unicode ? 'u' : '', { namedGroups: true, lookbehind: true, unicodePropertyEscape: true, modifiers: true } as never) as unknown as Node;
  } catch (err) {
    const message = err instanceof Error ? err.message.split('\n')[0]! : String(err);
    const at = /at position (\d+)/.exec(message);
    const offset = at ? Math.min(Number(at[1]), Math.max(0, pattern.length - 1)) : 0;
    return { code: 'bad-regex', message: message.replace(/ at position \d+/, ''), offset, length: 1 };
  }
  const refuse = (n: Node, what: string, why: string): never => {
    throw new Refusal({ code: 'regex-unsupported', message: `${what} is not supported in token patterns (${why})`, offset: n.range[0], length: Math.max(1, n.range[1] - n.range[0]) });
  };
  const close = (s: CharSet): CharSet => (fold ? caseClose(s, unicode) : s);
  const escapeSet = (v: string): CharSet => {
    // with `i` and `u`, \w also holds the characters that fold to a word character (ECMA-262, WordCharacters)
    const word = fold && unicode ? caseClose(WORD, true) : WORD;
    switch (v) {
      case 'd': return DIGIT;
      case 'D': return setComplement(DIGIT, max);
      case 'w': return word;
      case 'W': return setComplement(word, max);
      case 's': return SPACE;
      default: return setComplement(SPACE, max);
    }
  };
  const classItem = (n: Node): CharSet => {
    switch (n.type) {
      case 'value': {
        const c = n.codePoint as number;
        return makeSet([[c, c]]);
      }
      case 'characterClassRange':
        return makeSet([[(n.min as Node).codePoint as number, (n.max as Node).codePoint as number]]);
      case 'characterClassEscape':
        return escapeSet(n.value as string);
      case 'unicodePropertyEscape':
        return refuse(n, `the property escape ${String(n.value)}`, 'its tables are not part of the automaton');
      default:
        return refuse(n, `a nested class`, 'class set operations need the `v` flag, which is not accepted');
    }
  };
  const walk = (n: Node, e: Edges): Rx => {
    switch (n.type) {
      case 'disjunction':
        return { t: 'alt', items: (n.body as Node[]).map((x) => walk(x, e)) };
      case 'alternative': {
        const body = n.body as Node[];
        const isAnchor = (x: Node | undefined, kind: string) => x !== undefined && x.type === 'anchor' && x.kind === kind;
        const items: Rx[] = [];
        body.forEach((x, i) => {
          const first = e.first && body.slice(0, i).every((y) => isAnchor(y, 'start'));
          const last = e.last && body.slice(i + 1).every((y) => isAnchor(y, 'end'));
          const r = walk(x, { first, last });
          if (!(r.t === 'seq' && r.items.length === 0 && x.type === 'anchor')) items.push(r);
        });
        return items.length === 1 ? items[0]! : { t: 'seq', items };
      }
      case 'group': {
        const behavior = n.behavior as string;
        if (behavior === 'lookahead' || behavior === 'negativeLookahead' || behavior === 'lookbehind' || behavior === 'negativeLookbehind') {
          return refuse(n, `a ${behavior.replace(/([A-Z])/g, ' $1').toLowerCase()} group`, 'the automaton reads each character once and cannot look around');
        }
        if (n.modifierFlags) return refuse(n, 'a modifier group', 'flags apply to the whole pattern');
        const body = n.body as Node[];
        if (body.length === 1) return walk(body[0]!, e);
        return walk({ type: 'alternative', range: n.range, body }, e);
      }
      case 'quantifier': {
        const min = n.min as number;
        const mx = n.max === undefined ? Infinity : (n.max as number);
        // a body that may run more than once has something before (or after) some of its runs
        const inner = mx <= 1 ? e : { first: false, last: false };
        return { t: 'rep', body: walk((n.body as Node[])[0]!, inner), min, max: mx };
      }
      case 'characterClass': {
        if (n.kind !== 'union') return refuse(n, 'a class set operation', 'it needs the `v` flag, which is not accepted');
        let s: CharSet = [];
        for (const item of n.body as Node[]) s = setUnion(s, classItem(item));
        s = close(s);
        return { t: 'set', set: n.negative ? setComplement(s, max) : s };
      }
      case 'characterClassEscape':
        return { t: 'set', set: escapeSet(n.value as string) };
      case 'dot':
        return { t: 'set', set: setComplement(LINE_TERMINATORS, max) };
      case 'value': {
        const c = n.codePoint as number;
        return { t: 'set', set: close(makeSet([[c, c]])) };
      }
      case 'anchor': {
        const kind = n.kind as string;
        if (kind === 'start' && e.first) return { t: 'seq', items: [] };
        if (kind === 'end' && e.last) return { t: 'seq', items: [] };
        if (kind === 'start' || kind === 'end') {
          return refuse(n, `the anchor ${kind === 'start' ? '^' : '$'} here`, `a lexeme is matched whole, so ${kind === 'start' ? '^' : '$'} is allowed only where nothing can come ${kind === 'start' ? 'before' : 'after'} it`);
        }
        return refuse(n, `the assertion ${String(n.raw ?? '\\b')}`, 'a word boundary depends on the characters around the lexeme');
      }
      case 'reference':
        return refuse(n, 'a back-reference', 'it needs a backtracking matcher');
      case 'unicodePropertyEscape':
        return refuse(n, `the property escape ${String(n.value)}`, 'its tables are not part of the automaton');
      default:
        return refuse(n, `a ${n.type}`, 'not part of the supported subset');
    }
  };
  try {
    return { rx: walk(root, { first: true, last: true }), unicode };
  } catch (err) {
    if (err instanceof Refusal) return err.problem;
    throw err;
  }
}

// ---- analyses over the IR -------------------------------------------------------------------------

export function nullable(rx: Rx): boolean {
  switch (rx.t) {
    case 'set': return false;
    case 'seq': return rx.items.every(nullable);
    case 'alt': return rx.items.some(nullable);
    case 'rep': return rx.min === 0 || nullable(rx.body);
  }
}

/** Can the regex match at least one string? (an empty class matches nothing) */
export function inhabited(rx: Rx): boolean {
  switch (rx.t) {
    case 'set': return rx.set.length > 0;
    case 'seq': return rx.items.every(inhabited);
    case 'alt': return rx.items.some(inhabited);
    case 'rep': return rx.min === 0 || inhabited(rx.body);
  }
}

/** The characters (code points or units) a non-empty match can end with. */
export function lastChars(rx: Rx): CharSet {
  switch (rx.t) {
    case 'set': return rx.set;
    case 'alt': return rx.items.reduce<CharSet>((acc, x) => setUnion(acc, lastChars(x)), []);
    case 'rep': return rx.max === 0 ? [] : lastChars(rx.body);
    case 'seq': {
      let acc: CharSet = [];
      for (let i = rx.items.length - 1; i >= 0; i--) {
        acc = setUnion(acc, lastChars(rx.items[i]!));
        if (!nullable(rx.items[i]!)) break;
      }
      return acc;
    }
  }
}

/** The characters (code points or units) a non-empty match can begin with. */
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
