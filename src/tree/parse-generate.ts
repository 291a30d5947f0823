/**
 * Grammar generation: the grammar IR → the text of an ohm-js grammar (the parser's PEG).
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
 *   lex<i>       = token class i read by its DFA, longest match (parse-lex.ts installs it)
 *   tok<i>       = lex<i>, not followed by a word character when every lexeme ends with one
 *                  (`reserved` classes have no keyword among their lexemes: their DFA excludes them)
 *   nm<i>        = name set i (its token class under the set's name, for messages)
 *   blk<i>       = blank i (`blank Ws = " \t"`): one or more of its characters; a layout's `Ws?`
 *                  is `blk<i>?`. Its characters are never in `space`, so no rule skips them.
 *   space        = the `space` characters
 * Example: arith's `add` becomes `S0_L0 = S0_L0 kw3 S0_L1 -- c0 | ...` ("+" is keyword 3).
 * Look-ahead guards (`G<i>`, `H<n>`) come from parse-lookahead.ts.
 */
import type { BlankUse, Constructor, Field, Grammar, LayoutItem } from '../description/ir.ts';
import { lastChars, setIntersect, setSize, WORD, isWordCode } from '../description/regex/index.ts';
import { grammarInfo, type GrammarInfo } from './info.ts';
import { fillPlaceholder, lexPlaceholder } from './parse-lex.ts';
import { addLookaheads, app, emit, seq, type PE } from './parse-lookahead.ts';

export interface Generated {
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
const utf8 = new TextEncoder();

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

function generateOhm(info: GrammarInfo): Generated {
  const g = info.grammar;
  const lexical: string[] = [];
  const terms = new Map<string, string>();
  const termOrder = new Map<string, number>();
  const kwIndex = new Map(g.keywords.map((k, i) => [k, i]));
  const kw = (text: string) => `kw${kwIndex.get(text)!}`;
  const mixedEnds = new Set<string>();

  lexical.push(`wordc = "0".."9" | "A".."Z" | "_" | "a".."z"`);
  // filler (comments …) is skipped with the spaces; `fill<i>` is read by its DFA (parse-lex.ts)
  const spaceChars = [...[...g.space].map((c) => charCode(c.codePointAt(0)!)), ...g.fillers.map((_, i) => `fill${i}`)];
  lexical.push(`space := ${spaceChars.length === 0 ? '~any any' : spaceChars.join(' | ')}`);
  g.fillers.forEach((_, i) => lexical.push(`fill${i} = ${fillPlaceholder(i)}`));

  const isWord = isWordCode;
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
    lexical.push(`lex${i} = ${lexPlaceholder(i)}`);
    let body = `lex${i}`;
    const ends = lastChars(t.regex.rx);
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
  g.blanks.forEach((b, i) => {
    lexical.push(`blk${i} (blk${i}) = (${[...b.chars].map((c) => charCode(c.codePointAt(0)!)).join(' | ')})+`);
    terms.set(`blk${i}`, `a blank (${b.name})`);
    termOrder.set(`blk${i}`, 2500 + i);
  });
  const blankIdx = new Map(g.blanks.map((b, i) => [b.name, i]));
  const blankPE = (u: BlankUse | null | undefined): PE[] => {
    if (u === null || u === undefined) return [];
    const a = app(`blk${blankIdx.get(u.blank)!}`);
    return [u.optional ? { k: 'opt', x: a } : a];
  };
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
    if (item.kind === 'blank') return blankPE(item)[0]!;
    const f = info.field(c.name, item.field)!;
    const el = app(fieldRule(c, f));
    const sepPE = (text: string): PE => seq(...blankPE(item.sepBlanks?.before), app(kw(text)), ...blankPE(item.sepBlanks?.after));
    const card = inGroup && f.card === 'list' ? 'nonempty' : inGroup && f.card === 'optional' ? 'one' : f.card;
    switch (card) {
      case 'one': return el;
      case 'optional': return { k: 'opt', x: el };
      case 'nonempty':
        return item.sep === null ? { k: 'plus', x: el } : seq(el, { k: 'star', x: seq(sepPE(item.sep), el) });
      case 'list':
        return item.sep === null ? { k: 'star', x: el } : { k: 'opt', x: seq(el, { k: 'star', x: seq(sepPE(item.sep), el) }) };
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

  const firstBytes = (t: string): ReadonlySet<number> => {
    let m: RegExpExecArray | null;
    if ((m = /^kw(\d+)$/.exec(t)) !== null) return new Set([utf8.encode(g.keywords[Number(m[1])]!)[0]!]);
    if ((m = /^blk(\d+)$/.exec(t)) !== null) return new Set([...g.blanks[Number(m[1])]!.chars].map((c) => utf8.encode(c)[0]!));
    let tokenIndex = -1;
    if ((m = /^tok(\d+)$/.exec(t)) !== null) tokenIndex = Number(m[1]);
    else if ((m = /^nm(\d+)$/.exec(t)) !== null) tokenIndex = g.tokens.findIndex((x) => x.name === g.nameSets[Number(m![1])]!.token);
    if (tokenIndex < 0) return new Set();
    const d = g.tokens[tokenIndex]!.regex.dfa;
    const out = new Set<number>();
    for (let b = 0; b < 256; b++) if (d.trans[d.start * 256 + b] !== 0) out.add(b);
    return out;
  };
  const guards = addLookaheads({ rules, atomAlts, constructorCount: g.constructors.length, firstBytes, termRank });

  const lines = [`G${g.name.replace(/[^A-Za-z0-9_]/g, '_')} {`];
  for (const [name, pe] of rules) lines.push(`  ${name}\n    = ${emit(pe)}`);
  for (const l of guards.text) lines.push(`  ${l}`);
  for (const l of lexical) lines.push(`  ${l}`);
  lines.push('}');
  return { source: lines.join('\n'), terms, termOrder, guardItems: guards.items, mixedEnds };
}
