/**
 * The parser: code → tree, through an ohm-js grammar generated from the IR.
 *
 * Generated rules (names are index-based so no user name can collide):
 *   Start        = S<start> end
 *   S<i>         = S<i>_L0 (sorts with operators) or S<i>_A
 *   S<i>_L<k>    = one precedence level, lowest first: left-infix (left-recursive), postfix,
 *                  right-infix, non-associative and prefix alternatives, then S<i>_L<k+1> (or S<i>_A)
 *   S<i>_A       = the sort's other constructors and the parenthesised S<i>, each followed by a
 *                  one-token look-ahead into FOLLOW(S<i>_A) when there is more than one alternative
 *   C<c>         = a constructor's layout; F<c>_<f> = one element of a field
 *   kw<i>        = keyword i of Grammar.keywords: not followed by a word character when it ends
 *                  with one, and not the start of a longer keyword (longest match)
 *   tok<i>       = token class i, its regex translated to PEG (regex.ts); `reserved` classes refuse
 *                  their keywords; not followed by a word character when every lexeme ends with one
 *   nm<i>        = name set i (its token class under the set's name, for messages)
 *   space        = the `space` characters
 * Example: arith's `add` becomes `S0_L0 = S0_L0 kw3 S0_L1 -- c0 | ...` ("+" is keyword 3).
 *
 * The PEG reads alternatives in order and never reconsiders a choice that succeeded; the FOLLOW
 * look-ahead makes it reconsider when the next token cannot follow (lf: `h($x)` is a class test
 * unless a comparison operator follows). It is added only where two alternatives can begin with
 * the same character. Likewise an optional part or list element that can begin like what follows
 * it (`H<n>` rules) is taken only when the next token can come after it. Beyond that one token,
 * lists and optional parts are greedy.
 *
 * After the syntax, a located check pass reports token values out of range, unknown names (when
 * names are bound) and unbound variables.
 *
 * Cost: ohm memoises every rule at every position: O(n · R) time and memory for n characters and
 * R generated rules (left recursion grows seeds, linear per level). Building the parser is
 * O(size of the grammar) plus ohm's grammar compilation (a few ms for the shipped grammars).
 */
import * as ohm from 'ohm-js';
import { readFileSync } from 'node:fs';
import type { Constructor, Field, Grammar, LayoutItem, NameBindings, Span } from '../description/ir.ts';
import { excerpt, lineColumn } from '../util/source.ts';
import { grammarInfo, spellingToken, type GrammarInfo } from './info.ts';
import { kindWords, lexemeToValue } from './lexeme.ts';
import { RegexFeatureError, firstChars, isWordCode, lastChars, pairsOf, setComplement, setIntersect, setSize, setUnion, WORD, type CharSet, type Rx } from './regex.ts';
import type { Tree, TreeValue } from './validate.ts';
import { guardedMatch, nestingProblem } from './depth.ts';

export interface ParseOptions {
  /** file name for messages (default `<input>`) */
  readonly file?: string;
  /** when given, names of these sets must be members (others are unchecked) */
  readonly names?: NameBindings;
}

export interface Parser {
  /** Parses a whole program of the start sort; throws ParseError. */
  parse(text: string, opts?: string | ParseOptions): Tree;
  /** the generated ohm grammar source (for debugging and docs) */
  readonly source: string;
}

/** A located parse problem; `message` is `file:line:col: ...` and an excerpt with `^~~~`. */
export class ParseError extends Error {
  readonly file: string;
  readonly line: number;
  readonly column: number;
  readonly offset: number;
  /** for syntax errors: the expected items in grammar terms */
  readonly expected: readonly string[];
  constructor(file: string, text: string, span: Span, message: string, expected: readonly string[] = []) {
    const { line, column } = lineColumn(text, span.start);
    super(`${file}:${line}:${column}: ${message}\n${excerpt(text, span)}`);
    this.name = 'ParseError';
    this.file = file;
    this.line = line;
    this.column = column;
    this.offset = span.start;
    this.expected = expected;
  }
}

/** A token class whose regex the parser cannot translate; `message` is located in the description. */
export class GrammarFeatureError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'GrammarFeatureError';
  }
}

// ---- PEG expressions (analysed for FIRST/FOLLOW, then written as ohm text) ---------------------

type PE =
  | { readonly k: 'seq'; readonly xs: readonly PE[] }
  | { readonly k: 'alt'; readonly xs: readonly PE[]; readonly cases: readonly string[] | null }
  | { readonly k: 'opt' | 'star' | 'plus' | 'and'; readonly x: PE }
  | { readonly k: 'app'; readonly rule: string }
  | { readonly k: 'end' };

const seq = (...xs: PE[]): PE => ({ k: 'seq', xs });
const app = (rule: string): PE => ({ k: 'app', rule });

function emit(pe: PE): string {
  switch (pe.k) {
    case 'seq':
      return pe.xs.length === 0 ? '""' : pe.xs.map((x) => (x.k === 'alt' ? `(${emit(x)})` : emit(x))).join(' ');
    case 'alt':
      return pe.xs
        .map((x, i) => (pe.cases === null ? emit(x) : `${emit(x)} -- ${pe.cases[i]}`))
        .join(pe.cases === null ? ' | ' : '\n    | ');
    case 'opt':
    case 'star':
    case 'plus': {
      const inner = pe.x.k === 'app' ? emit(pe.x) : `(${emit(pe.x)})`;
      return inner + (pe.k === 'opt' ? '?' : pe.k === 'star' ? '*' : '+');
    }
    case 'and':
      return `&(${emit(pe.x)})`;
    case 'app':
      return pe.rule;
    case 'end':
      return 'end';
  }
}

// ---- generation -------------------------------------------------------------------------------

interface Generated {
  readonly source: string;
  /** terminal rule name → the item as messages show it */
  readonly terms: ReadonlyMap<string, string>;
  /** order of terms in messages */
  readonly termOrder: ReadonlyMap<string, number>;
  /** guard description → the terminal rule names (or 'end of input') it looks for */
  readonly guardItems: ReadonlyMap<string, readonly string[]>;
  /** token classes whose lexemes may end with or without a word character */
  readonly mixedEnds: ReadonlySet<string>;
}

const cache = new WeakMap<Grammar, Generated>();

/** Generates (and caches) the ohm grammar source for `grammar`. Throws GrammarFeatureError. */
export function ohmSource(grammar: Grammar): Generated {
  let g = cache.get(grammar);
  if (g === undefined) {
    g = generateOhm(grammarInfo(grammar));
    cache.set(grammar, g);
  }
  return g;
}

function ohmString(s: string): string {
  let out = '"';
  for (const ch of s) {
    const c = ch.codePointAt(0)!;
    out += /[A-Za-z0-9 ]/.test(ch) ? ch : `\\u{${c.toString(16)}}`;
  }
  return out + '"';
}

function charCode(c: number): string {
  return `"\\u{${c.toString(16)}}"`;
}

function rangesText(set: CharSet): string {
  const parts = pairsOf(set).map(([lo, hi]) => (lo === hi ? charCode(lo) : `${charCode(lo)}..${charCode(hi)}`));
  return parts.length === 0 ? '(~any any)' : parts.length === 1 ? parts[0]! : `(${parts.join(' | ')})`;
}

function setText(set: CharSet, max: number): string {
  const complement = setComplement(set, max);
  if (setSize(set) === 0) return '(~any any)';
  if (pairsOf(complement).length < pairsOf(set).length) {
    return complement.length === 0 ? 'any' : `(~${rangesText(complement)} any)`;
  }
  return rangesText(set);
}

/**
 * PEG text of a regex (lexical context). Bounded repetitions expand; at most 64 copies.
 * Alternatives that are not a single character set become helper rules `<prefix>_<n>` (ohm wants
 * every alternative of a choice to have the same arity).
 */
function rxText(rx: Rx, max: number, prefix: string, helpers: [string, string][]): string {
  const sub = (x: Rx) => rxText(x, max, prefix, helpers);
  switch (rx.t) {
    case 'set':
      return setText(rx.set, max);
    case 'seq':
      return rx.items.length === 0 ? '""' : `(${rx.items.map(sub).join(' ')})`;
    case 'alt':
      return `(${rx.items
        .map((x) => {
          if (x.t === 'set') return sub(x);
          const body = sub(x);
          const name = `${prefix}_${helpers.length}`;
          helpers.push([name, body]);
          return name;
        })
        .join(' | ')})`;
    case 'rep': {
      const body = sub(rx.body);
      if (rx.min > 64 || (rx.max !== Infinity && rx.max > 64)) throw new RegexFeatureError('repetition counts above 64 are not supported', 0, 1);
      const parts: string[] = [];
      for (let i = 0; i < rx.min; i++) parts.push(body);
      if (rx.max === Infinity) parts.push(`${body}*`);
      else {
        let tail = '';
        for (let i = rx.max - rx.min; i > 0; i--) tail = tail === '' ? `${body}?` : `(${body} ${tail})?`;
        if (tail !== '') parts.push(tail);
      }
      return parts.length === 0 ? '""' : `(${parts.join(' ')})`;
    }
  }
}

function tokenError(info: GrammarInfo, tokenIndex: number, err: RegexFeatureError): GrammarFeatureError {
  const tok = info.grammar.tokens[tokenIndex]!;
  let text: string | null = null;
  try {
    text = readFileSync(info.grammar.file, 'utf8');
  } catch {
    text = null;
  }
  if (text !== null) {
    const slash = text.indexOf('/', tok.span.start);
    const at = slash >= 0 && slash < tok.span.end ? slash + 1 + err.offset : tok.span.start;
    const span = { start: at, end: at + err.length };
    const { line, column } = lineColumn(text, at);
    return new GrammarFeatureError(`${info.grammar.file}:${line}:${column}: token ${tok.name}: ${err.message}\n${excerpt(text, span)}`);
  }
  return new GrammarFeatureError(`${info.grammar.file}: token ${tok.name}: ${err.message} (at offset ${err.offset} of /${tok.pattern}/)`);
}

function generateOhm(info: GrammarInfo): Generated {
  const g = info.grammar;
  const lexical: string[] = [];
  const terms = new Map<string, string>();
  const termOrder = new Map<string, number>();
  const kwIndex = new Map(g.keywords.map((k, i) => [k, i]));
  const kw = (text: string) => `kw${kwIndex.get(text)!}`;
  const mixedEnds = new Set<string>();

  lexical.push(`wordc = "0".."9" | "A".."Z" | "_" | "a".."z"`);
  const spaceChars = [...g.space].map((c) => charCode(c.codePointAt(0)!));
  lexical.push(`space := ${spaceChars.length === 0 ? '~any any' : spaceChars.join(' | ')}`);

  const isWord = (c: number) => WORD.some((_, i) => i % 2 === 0 && c >= WORD[i]! && c <= WORD[i + 1]!);
  g.keywords.forEach((k, i) => {
    const longer = g.keywords.filter((l) => l.length > k.length && l.startsWith(k));
    let body = ohmString(k);
    if (longer.length > 0) body = `~(${longer.map(ohmString).join(' | ')}) ${body}`;
    if (isWord(k.codePointAt(k.length - 1)!)) body += ' ~wordc';
    lexical.push(`kw${i} (kw${i}) = ${body}`);
    terms.set(`kw${i}`, JSON.stringify(k));
    termOrder.set(`kw${i}`, i);
  });
  g.tokens.forEach((t, i) => {
    const ti = info.token.get(t.name)!;
    let body: string;
    let ends: CharSet;
    const max = t.flags.includes('u') ? 0x10ffff : 0xffff;
    try {
      const rx = ti.rx();
      const helpers: [string, string][] = [];
      body = rxText(rx, max, `tok${i}`, helpers);
      for (const [name, text] of helpers) lexical.push(`${name} = ${text}`);
      ends = lastChars(rx);
    } catch (err) {
      if (err instanceof RegexFeatureError) throw tokenError(info, i, err);
      throw err;
    }
    if (t.reserved && ti.keywordClash.length > 0) {
      const clash = ti.keywordClash.map((k) => (isWord(k.codePointAt(k.length - 1)!) ? `${ohmString(k)} ~wordc` : ohmString(k)));
      body = `~(${clash.map((c) => `(${c})`).join(' | ')}) ${body}`;
    }
    // word-boundary rule: in the rule when every lexeme ends with a word character; for classes
    // whose lexemes may end either way, checked on the parsed lexeme (see buildSemantics)
    const wordEnds = setSize(setIntersect(ends, WORD, 0x10ffff));
    if (ends.length > 0 && wordEnds === setSize(ends)) body += ' ~wordc';
    else if (wordEnds > 0) mixedEnds.add(t.name);
    lexical.push(`tok${i} (tok${i}) = ${body}`);
    terms.set(`tok${i}`, t.name);
    termOrder.set(`tok${i}`, 1000 + i);
  });
  g.nameSets.forEach((n, i) => {
    const t = g.tokens.findIndex((x) => x.name === n.token);
    lexical.push(`nm${i} (nm${i}) = tok${t}`);
    terms.set(`nm${i}`, n.name);
    termOrder.set(`nm${i}`, 2000 + i);
  });
  terms.set('end of input', 'end of input');
  termOrder.set('end of input', 3000);
  const termRank = (t: string) => (t === '$' ? 3000 : termOrder.get(t) ?? 4000);

  // syntactic rules
  const rules = new Map<string, PE>();
  const sortIdx = new Map(g.sorts.map((s, i) => [s.name, i]));
  const ctorIdx = new Map(g.constructors.map((c, i) => [c.name, i]));
  const elementRule = (f: Field): string => {
    switch (f.type.kind) {
      case 'sort': return `S${sortIdx.get(f.type.name)!}`;
      case 'token': return `tok${g.tokens.findIndex((t) => t.name === f.type.name)}`;
      case 'names': return `nm${g.nameSets.findIndex((n) => n.name === f.type.name)}`;
    }
  };
  const fieldRule = (c: Constructor, f: Field): string => {
    const name = `F${ctorIdx.get(c.name)!}_${f.index}`;
    if (!rules.has(name)) rules.set(name, app(elementRule(f)));
    return name;
  };
  const itemPE = (c: Constructor, item: LayoutItem, inGroup: boolean): PE => {
    if (item.kind === 'text') return app(kw(item.text));
    if (item.kind === 'when') return { k: 'opt', x: seq(...item.items.map((x) => itemPE(c, x, true))) };
    const f = info.field(c.name, item.field)!;
    const el = app(fieldRule(c, f));
    const card = inGroup && f.card === 'list' ? 'nonempty' : inGroup && f.card === 'optional' ? 'one' : f.card;
    switch (card) {
      case 'one': return el;
      case 'optional': return { k: 'opt', x: el };
      case 'nonempty':
        return item.sep === null ? { k: 'plus', x: el } : seq(el, { k: 'star', x: seq(app(kw(item.sep)), el) });
      case 'list':
        return item.sep === null ? { k: 'star', x: el } : { k: 'opt', x: seq(el, { k: 'star', x: seq(app(kw(item.sep)), el) }) };
    }
  };

  const atomAlts = new Map<number, { xs: PE[]; cases: string[] }>();
  g.sorts.forEach((s, si) => {
    const levels = info.levels.get(s.name) ?? [];
    const atom = `S${si}_A`;
    rules.set(`S${si}`, app(levels.length > 0 ? `S${si}_L0` : atom));
    levels.forEach((p, k) => {
      const self = `S${si}_L${k}`;
      const next = k + 1 < levels.length ? `S${si}_L${k + 1}` : atom;
      const groups: Record<string, { xs: PE[]; cases: string[] }> = { left: { xs: [], cases: [] }, post: { xs: [], cases: [] }, other: { xs: [], cases: [] } };
      for (const cname of s.constructors) {
        const c = info.ctor.get(cname)!;
        const op = c.operator;
        if (op === null || op.precedence !== p) continue;
        const ops = info.operands.get(c.name)!;
        const middle = c.layout
          .filter((item, i) => !((i === 0 && ops.left !== null) || (i === c.layout.length - 1 && ops.right !== null)))
          .map((item) => itemPE(c, item, false));
        const ci = ctorIdx.get(c.name)!;
        if (op.fixity === 'infix') {
          const l = op.assoc === 'left' ? self : next;
          const r = op.assoc === 'right' ? self : next;
          const grp = op.assoc === 'left' ? groups.left! : groups.other!;
          grp.xs.push(seq(app(l), ...middle, app(r)));
          grp.cases.push(`c${ci}`);
        } else if (op.fixity === 'postfix') {
          groups.post!.xs.push(seq(app(self), ...middle));
          groups.post!.cases.push(`c${ci}`);
        } else {
          groups.other!.xs.push(seq(...middle, app(self)));
          groups.other!.cases.push(`c${ci}`);
        }
      }
      const xs = [...groups.left!.xs, ...groups.post!.xs, ...groups.other!.xs, app(next)];
      const cases = [...groups.left!.cases, ...groups.post!.cases, ...groups.other!.cases, 'next'];
      rules.set(self, { k: 'alt', xs, cases });
    });
    const alts = { xs: [] as PE[], cases: [] as string[] };
    for (const cname of s.constructors) {
      const c = info.ctor.get(cname)!;
      if (c.operator !== null) continue;
      const ci = ctorIdx.get(c.name)!;
      rules.set(`C${ci}`, seq(...c.layout.map((item) => itemPE(c, item, false))));
      alts.xs.push(app(`C${ci}`));
      alts.cases.push(`c${ci}`);
    }
    if (s.parens !== null) {
      alts.xs.push(seq(app(kw(s.parens.open)), app(`S${si}`), app(kw(s.parens.close))));
      alts.cases.push('paren');
    }
    atomAlts.set(si, alts);
    rules.set(atom, { k: 'alt', xs: alts.xs, cases: alts.cases });
  });
  const startRule = seq(app(`S${sortIdx.get(g.start)!}`), { k: 'end' });
  rules.set('Start', startRule);

  // FOLLOW sets, then the look-ahead guards on atom alternatives. A guard is a described rule
  // (`G<i> (g<i>)`), so a failing guard shows up as one item that messages expand to its FOLLOW
  // set only when nothing more precise failed at the same position.
  const { follow, firstOf, nullableOf } = analyse(rules);
  const guards: string[] = [];
  const guardItems = new Map<string, readonly string[]>();
  // first characters of terminals: two alternatives can only be confused when these meet
  const termChars = (t: string): CharSet => {
    let m: RegExpExecArray | null;
    if ((m = /^kw(\d+)$/.exec(t)) !== null) {
      const c = g.keywords[Number(m[1])]!.codePointAt(0)!;
      return [c, c];
    }
    if ((m = /^tok(\d+)$/.exec(t)) !== null) return firstChars(info.token.get(g.tokens[Number(m[1])]!.name)!.rx());
    if ((m = /^nm(\d+)$/.exec(t)) !== null) return firstChars(info.token.get(g.nameSets[Number(m[1])]!.token)!.rx());
    return [];
  };
  const charsOf = (terms: Set<string>): CharSet => [...terms].reduce<CharSet>((acc, t) => setUnion(acc, termChars(t)), []);
  for (const [si, alts] of atomAlts) {
    const firsts = alts.xs.map((x) => charsOf(firstOf(x)));
    // alternative i needs the look-ahead when a later alternative can begin the same way
    const needs = alts.xs.map((x, i) => firsts.some((f, j) => j > i && setIntersect(f, firsts[i]!, 0x10ffff).length > 0) || firstOf(x).size === 0);
    if (!needs.some(Boolean)) continue;
    const f = [...(follow.get(`S${si}_A`) ?? [])].sort((a, b) => termRank(a) - termRank(b));
    const body: PE = { k: 'alt', xs: f.map((t) => (t === '$' ? ({ k: 'end' } as PE) : app(t))), cases: null };
    guards.push(`G${si} (g${si})\n    = ${emit(body)}`);
    guardItems.set(`g${si}`, f.map((t) => (t === '$' ? 'end of input' : t)));
    const guard: PE = { k: 'and', x: app(`G${si}`) };
    rules.set(`S${si}_A`, { k: 'alt', xs: alts.xs.map((x, i) => (needs[i] ? seq(x, guard) : x)), cases: alts.cases });
  }

  // Optional parts and list elements inside a constructor's layout: when what they begin with can
  // also begin what follows them, each taken element must be followed by a token that can come
  // next (one-token look-ahead, `H<n>`), so the PEG does not take an element it must leave.
  const seqGuards = new Map<string, string>();
  const lookahead = (after: Set<string>): PE => {
    const f = [...after].sort((a, b) => termRank(a) - termRank(b));
    const key = f.join(' ');
    let name = seqGuards.get(key);
    if (name === undefined) {
      name = `H${seqGuards.size}`;
      seqGuards.set(key, name);
      const body: PE = { k: 'alt', xs: f.map((t) => (t === '$' ? ({ k: 'end' } as PE) : app(t))), cases: null };
      guards.push(`${name} (${name.toLowerCase()})\n    = ${emit(body)}`);
      guardItems.set(name.toLowerCase(), f.map((t) => (t === '$' ? 'end of input' : t)));
    }
    return { k: 'and', x: app(name) };
  };
  const overlaps = (a: Set<string>, b: Set<string>) => setIntersect(charsOf(a), charsOf(b), 0x10ffff).length > 0;
  const guardItemsIn = (pe: PE, after: Set<string>): PE => {
    switch (pe.k) {
      case 'seq': {
        const xs = [...pe.xs];
        let acc = after;
        for (let i = xs.length - 1; i >= 0; i--) {
          const x = xs[i]!;
          xs[i] = guardItemsIn(x, acc);
          const f = firstOf(x);
          acc = nullableOf(x) ? new Set([...f, ...acc]) : f;
        }
        return { k: 'seq', xs };
      }
      case 'opt': {
        const inner = guardItemsIn(pe.x, after);
        return overlaps(firstOf(pe.x), after) ? { k: 'opt', x: seq(inner, lookahead(after)) } : { k: 'opt', x: inner };
      }
      case 'star':
      case 'plus': {
        const next = new Set([...firstOf(pe.x), ...after]);
        const inner = guardItemsIn(pe.x, next);
        return overlaps(firstOf(pe.x), after) ? { k: pe.k, x: seq(inner, lookahead(next)) } : { k: pe.k, x: inner };
      }
      default:
        return pe;
    }
  };
  for (const c of g.constructors) {
    const name = `C${c.index}`;
    const pe = rules.get(name);
    if (pe !== undefined) rules.set(name, guardItemsIn(pe, follow.get(name) ?? new Set()));
  }

  const lines = [`G${g.name.replace(/[^A-Za-z0-9_]/g, '_')} {`];
  for (const [name, pe] of rules) lines.push(`  ${name}\n    = ${emit(pe)}`);
  for (const l of guards) lines.push(`  ${l}`);
  for (const l of lexical) lines.push(`  ${l}`);
  lines.push('}');
  return { source: lines.join('\n'), terms, termOrder, guardItems, mixedEnds };
}

/**
 * FIRST and FOLLOW over the syntactic rules, read as a context-free grammar (terminals: lexical
 * rule names and '$' for the end; look-aheads are ignored).
 */
function analyse(rules: ReadonlyMap<string, PE>): { follow: Map<string, Set<string>>; firstOf(pe: PE): Set<string>; nullableOf(pe: PE): boolean } {
  const isTerminal = (r: string) => !rules.has(r);
  const nullable = new Map<string, boolean>();
  const first = new Map<string, Set<string>>();
  for (const r of rules.keys()) {
    nullable.set(r, false);
    first.set(r, new Set());
  }
  const nul = (pe: PE): boolean => {
    switch (pe.k) {
      case 'seq': return pe.xs.every(nul);
      case 'alt': return pe.xs.some(nul);
      case 'opt': case 'star': case 'and': return true;
      case 'plus': return nul(pe.x);
      case 'app': return isTerminal(pe.rule) ? false : nullable.get(pe.rule)!;
      case 'end': return false;
    }
  };
  const fst = (pe: PE, out: Set<string>): void => {
    switch (pe.k) {
      case 'seq':
        for (const x of pe.xs) {
          fst(x, out);
          if (!nul(x)) return;
        }
        return;
      case 'alt':
        for (const x of pe.xs) fst(x, out);
        return;
      case 'opt': case 'star': case 'plus':
        fst(pe.x, out);
        return;
      case 'and':
        return;
      case 'app':
        if (isTerminal(pe.rule)) out.add(pe.rule);
        else for (const t of first.get(pe.rule)!) out.add(t);
        return;
      case 'end':
        out.add('$');
        return;
    }
  };
  for (let changed = true; changed; ) {
    changed = false;
    for (const [r, pe] of rules) {
      if (!nullable.get(r) && nul(pe)) {
        nullable.set(r, true);
        changed = true;
      }
      const f = first.get(r)!;
      const before = f.size;
      fst(pe, f);
      if (f.size !== before) changed = true;
    }
  }
  const follow = new Map<string, Set<string>>();
  for (const r of rules.keys()) follow.set(r, new Set());
  // walk: `after` is the set that follows pe; `afterNullableOf` the rule whose FOLLOW also follows
  const visit = (pe: PE, after: Set<string>, owner: string, changedRef: { v: boolean }): void => {
    switch (pe.k) {
      case 'seq': {
        // right to left, accumulating what follows each element
        let acc = new Set(after);
        for (let i = pe.xs.length - 1; i >= 0; i--) {
          const x = pe.xs[i]!;
          visit(x, acc, owner, changedRef);
          const f = new Set<string>();
          fst(x, f);
          acc = nul(x) ? new Set([...f, ...acc]) : f;
        }
        return;
      }
      case 'alt':
        for (const x of pe.xs) visit(x, after, owner, changedRef);
        return;
      case 'opt':
        visit(pe.x, after, owner, changedRef);
        return;
      case 'star':
      case 'plus': {
        const f = new Set<string>();
        fst(pe.x, f);
        visit(pe.x, new Set([...after, ...f]), owner, changedRef);
        return;
      }
      case 'and':
      case 'end':
        return;
      case 'app': {
        if (isTerminal(pe.rule)) return;
        const target = follow.get(pe.rule)!;
        const before = target.size;
        for (const t of after) target.add(t);
        if (target.size !== before) changedRef.v = true;
        return;
      }
    }
  };
  for (let changedRef = { v: true }; changedRef.v; ) {
    changedRef.v = false;
    for (const [r, pe] of rules) visit(pe, follow.get(r)!, r, changedRef);
  }
  return {
    follow,
    nullableOf: nul,
    firstOf: (pe) => {
      const out = new Set<string>();
      fst(pe, out);
      return out;
    },
  };
}

// ---- the parser -------------------------------------------------------------------------------

interface Built {
  readonly ohmGrammar: ohm.Grammar;
  readonly semantics: ohm.Semantics;
  readonly generated: Generated;
}

const builtCache = new WeakMap<Grammar, Built>();

/** Where parsed token and name values sit in the source, for the located check pass. */
type SpanTable = WeakMap<object, Map<string, Span | Span[]>>;

export function createParser(grammar: Grammar): Parser {
  const info = grammarInfo(grammar);
  let built = builtCache.get(grammar);
  if (built === undefined) {
    const generated = ohmSource(grammar);
    const ohmGrammar = ohm.grammar(generated.source);
    const semantics = buildSemantics(info, ohmGrammar, generated.mixedEnds);
    built = { ohmGrammar, semantics, generated };
    builtCache.set(grammar, built);
  }
  const b = built;
  return {
    source: b.generated.source,
    parse(text: string, opts?: string | ParseOptions): Tree {
      const o: ParseOptions = typeof opts === 'string' ? { file: opts } : (opts ?? {});
      const file = o.file ?? '<input>';
      try {
        const m = guardedMatch(b.ohmGrammar, text, 'Start');
        if (m.failed()) throw syntaxError(b.generated, file, text, m);
        const spans: SpanTable = new WeakMap();
        const ctx = { file, text, spans };
        const tree = (b.semantics(m) as unknown as { tree(ctx: unknown): Tree }).tree(ctx);
        checkParsed(info, tree, o.names, ctx);
        return tree;
      } catch (e) {
        const deep = nestingProblem(e, text);
        throw deep === null ? e : new ParseError(file, text, { start: deep.offset, end: deep.offset + 1 }, deep.message);
      }
    },
  };
}

function syntaxError(gen: Generated, file: string, text: string, m: ohm.MatchResult): ParseError {
  // ohm 17 has these on failed match results; its typings omit them
  const failed = m as unknown as { getRightmostFailurePosition(): number; getRightmostFailures(): { getText(): string }[] };
  let pos = failed.getRightmostFailurePosition();
  const seen = new Set<string>();
  const guarded = new Set<string>();
  for (const f of failed.getRightmostFailures()) {
    const t = f.getText();
    if (gen.terms.has(t)) seen.add(t);
    for (const x of gen.guardItems.get(t) ?? []) guarded.add(x);
  }
  for (const x of guarded) seen.add(x);
  // a failure after trailing whitespace is reported where the text ends
  const trimmed = text.trimEnd().length;
  if (pos > trimmed && /^\s*$/.test(text.slice(trimmed))) pos = trimmed;
  const items = [...seen].sort((a, b) => gen.termOrder.get(a)! - gen.termOrder.get(b)!).map((t) => gen.terms.get(t)!);
  const list = items.length <= 1 ? (items[0] ?? 'nothing') : `${items.slice(0, -1).join(', ')} or ${items[items.length - 1]}`;
  return new ParseError(file, text, { start: pos, end: pos + 1 }, `expected ${list}`, items);
}

interface Ctx {
  readonly file: string;
  readonly text: string;
  readonly spans: SpanTable;
}

interface Wrapper {
  readonly ctorName: string;
  readonly children: Wrapper[];
  readonly sourceString: string;
  readonly source: { startIdx: number; endIdx: number };
  isIteration(): boolean;
  isTerminal(): boolean;
  tree(ctx: Ctx): TreeValue;
}

function buildSemantics(info: GrammarInfo, og: ohm.Grammar, mixedEnds: ReadonlySet<string>): ohm.Semantics {
  const g = info.grammar;
  const sem = og.createSemantics();
  // classify every generated rule once; the action below dispatches on a map lookup
  type Kind =
    | { k: 'op'; c: Constructor }
    | { k: 'ctor'; c: Constructor }
    | { k: 'paren' }
    | { k: 'field'; c: Constructor; f: Field }
    | { k: 'leaf' }
    | { k: 'pass' };
  const kinds = new Map<string, Kind>();
  for (const name of Object.keys(og.rules)) {
    let m: RegExpExecArray | null;
    if ((m = /^S\d+_(?:L\d+|A)_c(\d+)$/.exec(name)) !== null) {
      const c = g.constructors[Number(m[1])]!;
      kinds.set(name, c.operator === null ? { k: 'pass' } : { k: 'op', c });
    } else if (/^S\d+_A_paren$/.test(name)) kinds.set(name, { k: 'paren' });
    else if ((m = /^C(\d+)$/.exec(name)) !== null) kinds.set(name, { k: 'ctor', c: g.constructors[Number(m[1])]! });
    else if ((m = /^F(\d+)_(\d+)$/.exec(name)) !== null) {
      const c = g.constructors[Number(m[1])]!;
      kinds.set(name, { k: 'field', c, f: c.fields[Number(m[2])]! });
    } else if (/^(kw|tok|nm|G)\d+$/.test(name)) kinds.set(name, { k: 'leaf' });
    else kinds.set(name, { k: 'pass' });
  }
  const build = (c: Constructor, operands: { left?: Wrapper; right?: Wrapper }, rest: Wrapper[], ctx: Ctx): Tree => {
    const collected: Wrapper[][] = c.fields.map(() => []);
    const collect = (w: Wrapper) => {
      if (w.isTerminal()) return;
      const kind = kinds.get(w.ctorName);
      if (kind !== undefined) {
        if (kind.k === 'field' && kind.c === c) {
          collected[kind.f.index]!.push(w);
          return;
        }
        if (kind.k === 'leaf') return;
      }
      for (const child of w.children) collect(child);
    };
    for (const w of rest) collect(w);
    const ops = info.operands.get(c.name);
    const out: Record<string, TreeValue> = { kind: c.name };
    const spans = new Map<string, Span | Span[]>();
    for (const f of c.fields) {
      if (ops !== undefined && (ops.left === f.name || ops.right === f.name)) {
        const w = ops.left === f.name ? operands.left! : operands.right!;
        out[f.name] = w.tree(ctx);
        continue;
      }
      const ws = collected[f.index]!;
      const values = ws.map((w) => w.tree(ctx));
      const spanOf = (w: Wrapper): Span => {
        const inner = w.children[0]!;
        return { start: inner.source.startIdx, end: inner.source.endIdx };
      };
      if (f.type.kind !== 'sort') {
        spans.set(f.name, f.card === 'one' || f.card === 'optional' ? (ws[0] ? spanOf(ws[0]) : { start: 0, end: 0 }) : ws.map(spanOf));
      }
      out[f.name] = f.card === 'one' ? values[0]! : f.card === 'optional' ? (values[0] ?? null) : values;
    }
    ctx.spans.set(out, spans);
    return out as Tree;
  };
  const actions = {
    _nonterminal(this: Wrapper, ...children: Wrapper[]): TreeValue {
      const ctx = (this as unknown as { args: { ctx: Ctx } }).args.ctx;
      const kind = kinds.get(this.ctorName) ?? { k: 'pass' };
      switch (kind.k) {
        case 'op': {
          const ops = info.operands.get(kind.c.name)!;
          const left = ops.left !== null ? children[0] : undefined;
          const right = ops.right !== null ? children[children.length - 1] : undefined;
          const rest = children.slice(left ? 1 : 0, right ? children.length - 1 : children.length);
          return build(kind.c, { left, right }, rest, ctx);
        }
        case 'paren':
          return children[1]!.tree(ctx);
        case 'ctor':
          return build(kind.c, {}, children, ctx);
        case 'field': {
          const f = kind.f;
          const child = children[0]!;
          if (f.type.kind === 'sort') return child.tree(ctx);
          const tok = spellingToken(info, f.type)!.token;
          const end = child.source.endIdx;
          if (mixedEnds.has(tok.name) && isWordCode(ctx.text.charCodeAt(end - 1)) && isWordCode(ctx.text.charCodeAt(end))) {
            const what = f.type.kind === 'names' ? f.type.name : tok.name;
            throw new ParseError(ctx.file, ctx.text, { start: end, end: end + 1 }, `expected a space after ${what} ${child.sourceString} (a word character may not follow it)`);
          }
          if (f.type.kind === 'names') return child.sourceString;
          const v = lexemeToValue(tok.value, child.sourceString);
          if (v === null) {
            throw new ParseError(ctx.file, ctx.text, { start: child.source.startIdx, end: child.source.endIdx }, `${tok.name} ${child.sourceString} is not ${kindWords(tok.value)} value (out of range)`);
          }
          return v;
        }
        default:
          // Start, S<i>, S<i>_L<k>, S<i>_A and their `next` cases: the first child carries the tree
          return children[0]!.tree(ctx);
      }
    },
  };
  sem.addOperation<TreeValue>('tree(ctx)', actions as unknown as ohm.ActionDict<TreeValue>);
  return sem;
}

/** Names (when bound) and variable scoping, with locations. */
function checkParsed(info: GrammarInfo, tree: Tree, names: NameBindings | undefined, ctx: Ctx): void {
  const visit = (node: Tree, scope: readonly string[]): void => {
    const c = info.ctor.get(node.kind)!;
    const spans = ctx.spans.get(node);
    let inScope = scope;
    for (const f of c.fields) {
      const v = node[f.name];
      const values = Array.isArray(v) ? (v as TreeValue[]) : v === null ? [] : [v];
      const s = spans?.get(f.name);
      const spanAt = (i: number): Span => (Array.isArray(s) ? s[i]! : (s as Span));
      values.forEach((x, i) => {
        if (f.type.kind === 'sort') visit(x as Tree, inScope);
        else if (f.type.kind === 'names') {
          const members = names?.[f.type.name];
          if (members !== undefined && !members.includes(x as string)) {
            throw new ParseError(ctx.file, ctx.text, spanAt(i), `unknown name '${String(x)}' for ${f.type.name}`);
          }
        } else if (f.scoping === 'bound' && !inScope.includes(x as string)) {
          throw new ParseError(ctx.file, ctx.text, spanAt(i), `unbound variable '${String(x)}'`);
        }
      });
      if (f.scoping === 'binds') inScope = inScope.concat(values as string[]);
    }
  };
  visit(tree, []);
}
