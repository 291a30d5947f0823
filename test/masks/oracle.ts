/**
 * An independent oracle for the mask tests: the grammar IR compiled to character-level rules for
 * nearley (npm `nearley`, a general Earley parser), written separately from src/automaton:
 * - precedence levels in the textbook left-recursive form (E_i → E_i op E_{i+1} | E_{i+1} …),
 *   which Earley parsing handles directly;
 * - token classes from the regjsparser AST, each character matcher a JavaScript RegExp built from
 *   the AST node's own source (so V8 decides what a class matches);
 * - the word-boundary rule as a postprocessor on each terminal's first character (rejects a word
 *   character that directly follows a word character), `reserved` as a postprocessor rejecting a
 *   complete lexeme equal to a keyword;
 * - spaces: an optional run before every terminal and at the end.
 * Viable prefix: feed() does not throw and the last column still has a state expecting a character
 * (or a complete parse) — rejected completions stay in nearley's column, so `states.length` alone
 * would over-approximate. Scoping (`new`/`bound`) is modelled for complete programs only, as an
 * attribute of the parse (description/ir.ts, `Scoping`): a `bound` lexeme is a free variable, a
 * `new` lexeme binds its name in the fields that follow it in the same constructor, and a program
 * with a free variable is rejected. Viability ignores scoping: compare `viableAfter` against
 * grammars without scoping markers.
 */
import nearley from 'nearley';
import regjsparser from 'regjsparser';
const parseRegex = regjsparser.parse;
import type { Constructor, Grammar, LayoutItem, NameBindings } from '../../src/description/ir.ts';

type Sym = string | { test: (c: string) => boolean; label: string };
interface Rule {
  name: string;
  symbols: Sym[];
  postprocess?: (d: any[], loc: number, reject: object) => any;
}

/** A tiny regex AST: charset, sequence, alternation, repetition. */
type Rx =
  | { k: 'chr'; test: (c: string) => boolean; label: string }
  | { k: 'seq'; items: Rx[] }
  | { k: 'alt'; items: Rx[] }
  | { k: 'rep'; body: Rx; min: number; max: number };

const isWord = (c: string | undefined) => c !== undefined && /^[A-Za-z0-9_]$/.test(c);

function toRx(node: any, flags: string): Rx {
  const charTest = (raw: string): Rx => {
    const re = new RegExp(`^(?:${raw})$`, flags.replace('g', ''));
    return { k: 'chr', test: (c) => re.test(c), label: raw };
  };
  switch (node.type) {
    case 'value':
    case 'characterClass':
    case 'characterClassEscape':
    case 'dot':
      return charTest(node.raw);
    case 'alternative':
      return { k: 'seq', items: node.body.map((n: any) => toRx(n, flags)) };
    case 'disjunction':
      return { k: 'alt', items: node.body.map((n: any) => toRx(n, flags)) };
    case 'group':
      return { k: 'seq', items: node.body.map((n: any) => toRx(n, flags)) };
    case 'quantifier':
      return { k: 'rep', body: toRx(node.body[0], flags), min: node.min, max: node.max ?? Infinity };
    case 'anchor':
      return { k: 'seq', items: [] };
    default:
      throw new Error(`oracle: unsupported regex node ${node.type}`);
  }
}

function nullable(r: Rx): boolean {
  switch (r.k) {
    case 'chr': return false;
    case 'seq': return r.items.every(nullable);
    case 'alt': return r.items.some(nullable);
    case 'rep': return r.min === 0 || nullable(r.body);
  }
}

/** First-character split: pairs (first char matcher, rest) with L(r) minus ε = ∪ first·rest. */
function firsts(r: Rx): Array<[Extract<Rx, { k: 'chr' }>, Rx]> {
  switch (r.k) {
    case 'chr':
      return [[r, { k: 'seq', items: [] }]];
    case 'seq': {
      const out: Array<[Extract<Rx, { k: 'chr' }>, Rx]> = [];
      for (let i = 0; i < r.items.length; i++) {
        for (const [c, rest] of firsts(r.items[i])) out.push([c, { k: 'seq', items: [rest, ...r.items.slice(i + 1)] }]);
        if (!nullable(r.items[i])) break;
      }
      return out;
    }
    case 'alt':
      return r.items.flatMap(firsts);
    case 'rep': {
      const after: Rx = { k: 'rep', body: r.body, min: Math.max(0, r.min - 1), max: r.max - 1 };
      return firsts(r.body).map(([c, rest]) => [c, { k: 'seq', items: [rest, after] }]);
    }
  }
}

/** Scoping attributes of a parse: a nested structure of these, strings and arrays. */
type ScopeValue = { readonly free: readonly string[] } | { readonly binds: string };

/** The free variables of a constructor's parse data `d` (its items in layout order). */
function freeVariables(d: unknown): string[] {
  const free: string[] = [];
  const bound: string[] = [];
  const visit = (v: unknown): void => {
    if (Array.isArray(v)) v.forEach(visit);
    else if (v !== null && typeof v === 'object') {
      const sv = v as ScopeValue;
      if ('binds' in sv) bound.push(sv.binds);
      else for (const x of sv.free) if (!bound.includes(x)) free.push(x);
    }
  };
  visit(d);
  return free;
}

export class NearleyOracle {
  private readonly rules: Rule[] = [];
  private n = 0;
  private text = '';
  private readonly grammar: nearley.Grammar;

  constructor(g: Grammar, names: NameBindings) {
    const space = g.space;
    const keywords = new Set(g.keywords);
    this.rules.push({ name: '_', symbols: [] }, { name: '_', symbols: ['_', { test: (c) => space.includes(c), label: 'space' }] });
    // filler (comments …) may stand wherever spaces may: `_` also takes whole filler matches
    const flatten = (d: any): string => (Array.isArray(d) ? d.map(flatten).join('') : d == null ? '' : String(d));

    // a rule for a regex (no first-char split), returns its name
    const rxRule = (r: Rx): string => {
      const name = `rx${this.n++}`;
      switch (r.k) {
        case 'chr':
          this.rules.push({ name, symbols: [{ test: r.test, label: r.label }] });
          break;
        case 'seq':
          this.rules.push({ name, symbols: r.items.map(rxRule) });
          break;
        case 'alt':
          for (const it of r.items) this.rules.push({ name, symbols: [rxRule(it)] });
          break;
        case 'rep': {
          const body = rxRule(r.body);
          const min = Math.min(r.min, 8);
          if (r.max === Infinity) {
            const star = `rx${this.n++}`;
            this.rules.push({ name: star, symbols: [] }, { name: star, symbols: [star, body] });
            this.rules.push({ name, symbols: [...Array(min).fill(body), star] });
          } else {
            for (let k = r.min; k <= r.max; k++) this.rules.push({ name, symbols: Array(k).fill(body) });
          }
        }
      }
      return name;
    };
    // a terminal: optional spaces, a checked first character, the rest; `reject` filters lexemes
    const terminalRule = (r: Rx, rejectLexeme: ((s: string) => boolean) | null): string => {
      const name = `T${this.n++}`;
      const lex = `L${this.n++}`;
      for (const [first, rest] of firsts(r)) {
        const f = `F${this.n++}`;
        this.rules.push({
          name: f,
          symbols: [{ test: first.test, label: first.label }],
          postprocess: (d, loc, reject) => (isWord(this.text[loc]) && isWord(this.text[loc - 1]) ? reject : d),
        });
        this.rules.push({
          name: lex,
          symbols: [f, rxRule(rest)],
          postprocess: rejectLexeme ? (d, _loc, reject) => (rejectLexeme(flatten(d)) ? reject : d) : undefined,
        });
      }
      this.rules.push({ name, symbols: ['_', lex] });
      return name;
    };
    const literalRx = (s: string): Rx => ({
      k: 'seq',
      items: [...s].map((ch) => ({ k: 'chr' as const, test: (c: string) => c === ch, label: JSON.stringify(ch) })),
    });
    const litCache = new Map<string, string>();
    const literal = (s: string): string => {
      let r = litCache.get(s);
      if (!r) {
        r = terminalRule(literalRx(s), null);
        litCache.set(s, r);
      }
      return r;
    };
    for (const f of g.fillers) {
      const rx = toRx(parseRegex(f.pattern, f.flags.includes('u') ? 'u' : '', {}), f.flags);
      this.rules.push({ name: '_', symbols: ['_', rxRule(rx)] });
    }
    const classRule = new Map<string, string>();
    for (const t of g.tokens) {
      const rx = toRx(parseRegex(t.pattern, t.flags.includes('u') ? 'u' : '', {}), t.flags);
      const except = new Set(t.except);
      classRule.set(t.name, terminalRule(rx, t.reserved || except.size > 0 ? (s) => (t.reserved && keywords.has(s)) || except.has(s) : null));
    }
    // a declared blank: one or more of its characters (never in `space`)
    const blankRule = new Map<string, string>();
    for (const b of g.blanks) {
      blankRule.set(b.name, terminalRule({ k: 'rep', body: { k: 'chr', test: (c) => b.chars.includes(c), label: b.name }, min: 1, max: Infinity }, null));
    }
    const blankUse = (u: { blank: string; optional: boolean } | null | undefined): string[] => {
      if (u === null || u === undefined) return [];
      if (!u.optional) return [blankRule.get(u.blank)!];
      const opt = `O${this.n++}`;
      this.rules.push({ name: opt, symbols: [] }, { name: opt, symbols: [blankRule.get(u.blank)!] });
      return [opt];
    };
    const setRule = new Map<string, string>();
    for (const s of g.nameSets) {
      const members = names[s.name] ?? [];
      setRule.set(s.name, terminalRule({ k: 'alt', items: members.map(literalRx) }, null));
    }

    // sorts: entry rule per sort; levels for sorts with operators or parens
    const ctors = new Map(g.constructors.map((c) => [c.name, c]));
    const entry = (sort: string) => `S_${sort}`;
    const lexemeOf = (d: any[]): string => flatten(d[0][1]); // a terminal's data: [spaces, lexeme]
    const fieldRule = (c: Constructor, field: string, operand?: string): string => {
      if (operand) return operand;
      const f = c.fields.find((x) => x.name === field)!;
      if (f.type.kind === 'sort') return entry(f.type.name);
      if (f.type.kind === 'names') return setRule.get(f.type.name)!;
      if (f.scoping === 'none') return classRule.get(f.type.name)!;
      const name = `V${this.n++}`;
      this.rules.push({
        name,
        symbols: [classRule.get(f.type.name)!],
        postprocess: f.scoping === 'binds' ? (d) => ({ binds: lexemeOf(d) }) : (d) => ({ free: [lexemeOf(d)] }),
      });
      return name;
    };
    const constructorScope = (d: any[]): ScopeValue => ({ free: freeVariables(d) });
    const itemsRule = (c: Constructor, items: readonly LayoutItem[], operands: Map<string, string>, present: boolean): string[] => {
      const out: string[] = [];
      for (const it of items) {
        if (it.kind === 'text') out.push(literal(it.text));
        else if (it.kind === 'blank') out.push(...blankUse(it));
        else if (it.kind === 'when') {
          const opt = `W${this.n++}`;
          this.rules.push({ name: opt, symbols: [] }, { name: opt, symbols: itemsRule(c, it.items, operands, true) });
          out.push(opt);
        } else {
          const f = c.fields.find((x) => x.name === it.field)!;
          const elem = fieldRule(c, f.name, operands.get(f.name));
          const card = present && f.card === 'optional' ? 'one' : present && f.card === 'list' ? 'nonempty' : f.card;
          if (card === 'one') out.push(elem);
          else if (card === 'optional') {
            const opt = `O${this.n++}`;
            this.rules.push({ name: opt, symbols: [] }, { name: opt, symbols: [elem] });
            out.push(opt);
          } else {
            const list = `N${this.n++}`;
            this.rules.push({ name: list, symbols: [elem] });
            const sep = it.sep !== null ? [...blankUse(it.sepBlanks?.before), literal(it.sep), ...blankUse(it.sepBlanks?.after)] : [];
            this.rules.push({ name: list, symbols: [list, ...sep, elem] });
            if (card === 'nonempty') out.push(list);
            else {
              const opt = `O${this.n++}`;
              this.rules.push({ name: opt, symbols: [] }, { name: opt, symbols: [list] });
              out.push(opt);
            }
          }
        }
      }
      return out;
    };
    const isOperand = (c: Constructor, it: LayoutItem | undefined): string | null => {
      if (!it || it.kind !== 'slot') return null;
      const f = c.fields.find((x) => x.name === it.field)!;
      return f.type.kind === 'sort' && f.type.name === c.sort ? f.name : null;
    };
    for (const s of g.sorts) {
      const cs = s.constructors.map((n) => ctors.get(n)!);
      const ops = cs.filter((c) => c.operator);
      const precs = [...new Set(ops.map((c) => c.operator!.precedence))].sort((a, b) => a - b);
      const level = (i: number) => `E_${s.name}_${i}`;
      this.rules.push({ name: entry(s.name), symbols: [level(0)] });
      for (let i = 0; i < precs.length; i++) {
        this.rules.push({ name: level(i), symbols: [level(i + 1)] });
        for (const c of ops.filter((x) => x.operator!.precedence === precs[i])) {
          const { fixity, assoc } = c.operator!;
          const first = isOperand(c, c.layout[0]);
          const last = isOperand(c, c.layout[c.layout.length - 1]);
          const operands = new Map<string, string>();
          if (fixity === 'infix') {
            operands.set(first!, assoc === 'left' ? level(i) : level(i + 1));
            operands.set(last!, assoc === 'right' ? level(i) : level(i + 1));
          } else if (fixity === 'prefix') operands.set(last!, level(i));
          else operands.set(first!, level(i));
          this.rules.push({ name: level(i), symbols: itemsRule(c, c.layout, operands, false), postprocess: constructorScope });
        }
      }
      const atom = level(precs.length);
      for (const c of cs.filter((x) => !x.operator)) this.rules.push({ name: atom, symbols: itemsRule(c, c.layout, new Map(), false), postprocess: constructorScope });
      if (s.parens) this.rules.push({ name: atom, symbols: [literal(s.parens.open), level(0), literal(s.parens.close)] });
    }
    this.rules.push({ name: 'PROGRAM', symbols: [entry(g.start), '_'], postprocess: (d, _loc, reject) => (freeVariables(d).length > 0 ? reject : d) });
    this.grammar = nearley.Grammar.fromCompiled({ ParserStart: 'PROGRAM', ParserRules: this.rules as any });
  }

  private parser(): nearley.Parser {
    return new nearley.Parser(this.grammar);
  }

  private static alive(p: nearley.Parser): boolean {
    const col = (p as any).table[(p as any).current];
    return col.scannable.length > 0 || p.results.length > 0;
  }

  /** Is `text` a viable prefix, and a complete program? */
  check(text: string): { viable: boolean; complete: boolean } {
    this.text = text;
    const p = this.parser();
    try {
      p.feed(text);
    } catch {
      return { viable: false, complete: false };
    }
    return { viable: NearleyOracle.alive(p), complete: p.results.length > 0 };
  }

  /**
   * Whether each prefix of `text` is a complete program: result[i] for text.slice(0, i), i = 0 …
   * text.length (one incremental parse; false from the first character no parse can read on).
   */
  completePrefixes(text: string): boolean[] {
    this.text = text;
    const p = this.parser();
    const out: boolean[] = [p.finish().length > 0];
    for (let i = 0; i < text.length; i++) {
      try {
        p.feed(text[i]);
      } catch {
        while (out.length <= text.length) out.push(false);
        return out;
      }
      out.push(p.results.length > 0);
    }
    return out;
  }

  /** For each continuation, whether prefix + continuation is a viable prefix. */
  viableAfter(prefix: string, continuations: readonly string[]): boolean[] {
    this.text = prefix;
    const p = this.parser();
    p.feed(prefix);
    const saved = p.save();
    return continuations.map((cont) => {
      this.text = prefix + cont;
      p.restore(saved);
      try {
        p.feed(cont);
      } catch {
        return false;
      }
      return NearleyOracle.alive(p);
    });
  }
}
