/**
 * Whole-grammar analyses on a compiled IR (run only when compile.ts found no error, so every name
 * resolves and every layout is well-formed):
 *
 * - productivity: a sort is productive when some constructor has only productive required sort
 *   fields (least fixpoint; token and name-set fields always have a value). Unproductive → error.
 * - reachability from the start sort through field types. Unreachable → warning.
 * - `bound T` fields need some `new T` field somewhere in the grammar.
 * - identical layouts: two constructors of one sort whose layouts agree item by item, where a slot
 *   is compared by its field's type, cardinality and separator (not by its name) and glue is ignored
 *   (the parser accepts any spacing). Such trees print the same text.
 * - list separators (sound approximation, may reject some unambiguous lists):
 *   with `sep S`: error when an element can print as nothing, or when S can begin or end an element
 *   (S is in the element's first/last literal set, or a non-reserved token class that can begin or
 *   end an element matches S);
 *   without a separator: error unless the element is a sort that cannot print as nothing, every
 *   element begins with literal text (no token class or name set can begin it), and each such
 *   beginning literal occurs nowhere else inside an element (not in any other layout position or
 *   parens of a sort reachable from the element sort). Then each occurrence of such a literal at
 *   list level starts a new element, so boundaries are recoverable.
 * - left recursion: the left-corner graph links sort A to sort B when a constructor of A can begin
 *   with a slot of sort B (skipping items that can print as nothing). The self-edge of an infix or
 *   postfix operator on its own first operand is left out (the parser climbs precedence there).
 *   A constructor with an edge to a sort that leads back to its own sort is an error.
 * - numeric digits: an `as int` / `as number` class whose lexemes can hold more than 15 digits
 *   (past 2^53 for integers; past the 15 significant digits a double keeps for numbers), or for
 *   `as number` more than 6 digits after a `.` (JSON.stringify prints 0.0000001 as 1e-7), has
 *   lexemes whose value does not print back as written. Warning. Counted over the regex IR with
 *   each character set reduced to "may be a digit" / "may be a point".
 *   Limits: exponents are not checked (`[0-9]e[0-9]{3}` admits 9e999).
 *
 * Cost: each fixpoint is O(rounds · L) with rounds ≤ S + 1 (L layout items, S sorts); the
 * left-corner closure is O(S · (S + E)). Limits: the separator and adjacency checks look at first
 * and last literals only, not at arbitrary interior overlaps between elements and separators.
 */
import type { Constructor, Field, Grammar, LayoutItem, Sort, Span, TokenClass } from './ir.ts';
import * as E from './errors.ts';
import { stronglyConnected } from './graph.ts';
import type { Diagnostic } from './errors.ts';
import { runDfa, type Rx } from './regex/index.ts';

/** What can begin (or end) a printed term: literal texts and token classes. */
interface Edge {
  readonly texts: Set<string>;
  readonly tokens: Set<string>;
}

class Facts {
  readonly sorts = new Map<string, Sort>();
  readonly ctors = new Map<string, Constructor>();
  readonly tokens = new Map<string, TokenClass>();
  readonly nameSetToken = new Map<string, string>();
  readonly nullable = new Set<string>();
  readonly first = new Map<string, Edge>();
  readonly last = new Map<string, Edge>();

  constructor(readonly g: Grammar) {
    for (const s of g.sorts) this.sorts.set(s.name, s);
    for (const c of g.constructors) this.ctors.set(c.name, c);
    for (const t of g.tokens) {
      this.tokens.set(t.name, t);
    }
    for (const n of g.nameSets) this.nameSetToken.set(n.name, n.token);
    this.computeNullable();
    this.computeEdges('first');
    this.computeEdges('last');
  }

  field(c: Constructor, name: string): Field {
    return c.fields.find((f) => f.name === name)!;
  }

  /** Can this field's slot print as nothing? */
  fieldNullable(f: Field): boolean {
    if (f.card === 'optional' || f.card === 'list') return true;
    return f.type.kind === 'sort' && this.nullable.has(f.type.name);
  }

  itemNullable(c: Constructor, item: LayoutItem): boolean {
    if (item.kind === 'text') return false;
    if (item.kind === 'when') return true;
    if (item.kind === 'blank') return item.optional;
    return this.fieldNullable(this.field(c, item.field));
  }

  private computeNullable(): void {
    let changed = true;
    while (changed) {
      changed = false;
      for (const s of this.g.sorts) {
        if (this.nullable.has(s.name)) continue;
        const c = s.constructors.map((n) => this.ctors.get(n)!);
        if (c.some((k) => k.layout.every((i) => this.itemNullable(k, i)))) {
          this.nullable.add(s.name);
          changed = true;
        }
      }
    }
  }

  /**
   * Literal texts / token classes that can begin (`first`) or end (`last`) a term of each sort.
   * A sort's set is its own direct contributions plus the sets of the sorts its layouts can begin
   * (end) with; closed in one pass over the strongly connected components of that dependency graph.
   */
  private computeEdges(which: 'first' | 'last'): void {
    const table = which === 'first' ? this.first : this.last;
    const sorts = this.g.sorts;
    const id = new Map(sorts.map((s, i) => [s.name, i]));
    const direct: Edge[] = [];
    const deps: number[][] = [];
    for (const s of sorts) {
      const e: Edge = { texts: new Set(), tokens: new Set() };
      if (s.parens) e.texts.add(which === 'first' ? s.parens.open : s.parens.close);
      const d = new Set<string>();
      for (const n of s.constructors) {
        const c = this.ctors.get(n)!;
        this.edgeOfItems(c, c.layout, which, e, d);
      }
      direct.push(e);
      deps.push([...d].map((x) => id.get(x)!));
    }
    for (const comp of stronglyConnected(sorts.length, deps)) {
      const e: Edge = { texts: new Set(), tokens: new Set() };
      for (const v of comp) {
        for (const t of direct[v]!.texts) e.texts.add(t);
        for (const t of direct[v]!.tokens) e.tokens.add(t);
        for (const w of deps[v]!) {
          const done = table.get(sorts[w]!.name);
          if (!done) continue; // same component, added via direct sets
          for (const t of done.texts) e.texts.add(t);
          for (const t of done.tokens) e.tokens.add(t);
        }
      }
      for (const v of comp) table.set(sorts[v]!.name, e);
    }
  }

  /**
   * Adds what can begin/end `items` to `into`; returns whether all of `items` can print as nothing.
   * With `deps`, sorts met at the edge are recorded there instead of being looked up.
   */
  edgeOfItems(c: Constructor, items: readonly LayoutItem[], which: 'first' | 'last', into: Edge, deps?: Set<string>): boolean {
    const ordered = which === 'first' ? items : [...items].reverse();
    for (const item of ordered) {
      if (item.kind === 'text') {
        into.texts.add(item.text);
        return false;
      }
      if (item.kind === 'when') {
        this.edgeOfItems(c, item.items, which, into, deps);
        continue;
      }
      if (item.kind === 'blank') {
        // never at a layout's edge (compile.ts): reached only inside, after empty items
        if (!item.optional) return false;
        continue;
      }
      const f = this.field(c, item.field);
      if (deps && f.type.kind === 'sort') deps.add(f.type.name);
      else this.edgeOfType(f, which, into);
      if (!this.fieldNullable(f)) return false;
    }
    return true;
  }

  edgeOfType(f: Field, which: 'first' | 'last', into: Edge): void {
    if (f.type.kind === 'token') into.tokens.add(f.type.name);
    else if (f.type.kind === 'names') into.tokens.add(this.nameSetToken.get(f.type.name)!);
    else {
      const e = (which === 'first' ? this.first : this.last).get(f.type.name);
      if (e) {
        for (const t of e.texts) into.texts.add(t);
        for (const t of e.tokens) into.tokens.add(t);
      }
    }
  }

  /** Sorts reachable from `from` through field types (including `from`). */
  reachableFrom(from: string): Set<string> {
    const seen = new Set<string>([from]);
    const stack = [from];
    while (stack.length > 0) {
      const s = this.sorts.get(stack.pop()!)!;
      for (const n of s.constructors) {
        for (const f of this.ctors.get(n)!.fields) {
          if (f.type.kind === 'sort' && !seen.has(f.type.name)) {
            seen.add(f.type.name);
            stack.push(f.type.name);
          }
        }
      }
    }
    return seen;
  }
}

/** Diagnostics from the whole-grammar analyses, in no particular order. */
export function analyseGrammar(g: Grammar, text: string): Diagnostic[] {
  const facts = new Facts(g);
  const out: Diagnostic[] = [];
  const at = (span: Span) => ({ file: g.file, span });
  checkProductive(g, facts, out, at, text);
  checkReachable(g, facts, out, at, text);
  checkBound(g, out, at);
  checkIdenticalLayouts(g, facts, out, at, text);
  checkLists(g, facts, out, at);
  checkLeftRecursion(g, facts, out, at);
  checkNumericDigits(g, out, at);
  return out;
}

type At = (span: Span) => { file: string; span: Span };

/** The span of a declaration's name: sort spans start at `sort`, constructor spans at the name. */
function nameSpan(text: string, s: { span: Span; name: string }, keywordLength: number): Span {
  const at = text.indexOf(s.name, s.span.start + keywordLength);
  const start = at < 0 || at >= s.span.end ? s.span.start : at;
  return { start, end: start + s.name.length };
}

function checkProductive(g: Grammar, facts: Facts, out: Diagnostic[], at: At, text: string): void {
  const productive = new Set<string>();
  let changed = true;
  while (changed) {
    changed = false;
    for (const s of g.sorts) {
      if (productive.has(s.name)) continue;
      const ok = s.constructors.some((n) =>
        facts.ctors.get(n)!.fields.every(
          (f) => f.type.kind !== 'sort' || f.card === 'optional' || f.card === 'list' || productive.has(f.type.name),
        ),
      );
      if (ok) {
        productive.add(s.name);
        changed = true;
      }
    }
  }
  for (const s of g.sorts) if (!productive.has(s.name)) out.push(E.unproductiveSort(at(nameSpan(text, s, 4)), s.name));
}

function checkReachable(g: Grammar, facts: Facts, out: Diagnostic[], at: At, text: string): void {
  const reach = facts.reachableFrom(g.start);
  for (const s of g.sorts) if (!reach.has(s.name)) out.push(E.unreachableSort(at(nameSpan(text, s, 4)), s.name, g.start));
}

function checkBound(g: Grammar, out: Diagnostic[], at: At): void {
  const binders = new Set<string>();
  for (const c of g.constructors) for (const f of c.fields) if (f.scoping === 'binds') binders.add(f.type.name);
  for (const c of g.constructors) {
    for (const f of c.fields) {
      if (f.scoping === 'bound' && !binders.has(f.type.name)) out.push(E.boundWithoutNew(at(f.span), f.name, f.type.name));
    }
  }
  // `known X` resolves through introductions of X (a set without owner) or of X's owner
  const entered = new Set<string>();
  for (const c of g.constructors) for (const f of c.fields) if (f.scoping === 'enters') entered.add(f.type.name);
  for (const c of g.constructors) {
    for (const f of c.fields) {
      if (f.scoping !== 'known') continue;
      const set = g.nameSets.find((n) => n.name === f.type.name);
      const via = set?.owner ?? f.type.name;
      if (!entered.has(via)) out.push(E.neverIntroduced(at(f.span), f.name, via));
    }
  }
}

/** A layout's printed shape with field names erased: texts, slot types/cardinalities/separators, groups. */
function shape(c: Constructor, items: readonly LayoutItem[]): string {
  return items
    .map((i) => {
      if (i.kind === 'text') return JSON.stringify(i.text);
      if (i.kind === 'when') return `[${shape(c, i.items)}]`;
      if (i.kind === 'blank') return `_${i.blank}${i.optional ? '?' : ''}`;
      const f = c.fields.find((x) => x.name === i.field)!;
      const b = i.sepBlanks === undefined ? '' : JSON.stringify(i.sepBlanks);
      return `<${f.type.kind}:${f.type.name}:${f.card}:${i.sep === null ? '' : JSON.stringify(i.sep)}${b}>`;
    })
    .join(' ');
}

function checkIdenticalLayouts(g: Grammar, facts: Facts, out: Diagnostic[], at: At, text: string): void {
  for (const s of g.sorts) {
    const seen = new Map<string, string>();
    for (const n of s.constructors) {
      const c = facts.ctors.get(n)!;
      const key = shape(c, c.layout);
      const other = seen.get(key);
      if (other !== undefined) out.push(E.identicalLayouts(at(nameSpan(text, c, 0)), c.name, other, s.name));
      else seen.set(key, c.name);
    }
  }
}

function checkLists(g: Grammar, facts: Facts, out: Diagnostic[], at: At): void {
  const visit = (c: Constructor, items: readonly LayoutItem[]) => {
    for (const item of items) {
      if (item.kind === 'when') visit(c, item.items);
      if (item.kind !== 'slot') continue;
      const f = facts.field(c, item.field);
      if (f.card !== 'list' && f.card !== 'nonempty') continue;
      if (f.type.kind === 'sort' && facts.nullable.has(f.type.name)) {
        out.push(E.nullableListElement(at(item.span), f.name, f.type.name));
        continue;
      }
      if (item.sep !== null) checkSeparator(item, f, item.sep);
      else checkAdjacent(item, f);
    }
  };

  const checkSeparator = (item: LayoutItem, f: Field, sep: string) => {
    for (const which of ['first', 'last'] as const) {
      const e: Edge = { texts: new Set(), tokens: new Set() };
      facts.edgeOfType(f, which, e);
      let hit = e.texts.has(sep);
      if (!hit) {
        for (const t of e.tokens) {
          const tok = facts.tokens.get(t)!;
          if (!tok.reserved && isLexeme(tok, sep)) hit = true;
        }
      }
      if (hit) {
        out.push(E.separatorAtElementEdge(at(item.span), sep, f.name, which === 'first' ? 'begin' : 'end', f.type.name));
        return;
      }
    }
  };

  const checkAdjacent = (item: LayoutItem, f: Field) => {
    if (f.type.kind !== 'sort') {
      out.push(E.adjacentListElements(at(item.span), f.name, `two ${f.type.name} lexemes in a row can read as one`));
      return;
    }
    const elem = f.type.name;
    const first = facts.first.get(elem)!;
    if (first.tokens.size > 0) {
      const t = [...first.tokens].sort()[0]!;
      out.push(E.adjacentListElements(at(item.span), f.name, `an element can begin with a ${t} token`));
      return;
    }
    // every occurrence of a beginning literal, other than as the first item of an element
    // constructor's layout, makes the element boundary unrecoverable
    const starters = first.texts;
    const inner = new Set<string>();
    const collect = (c: Constructor, items: readonly LayoutItem[], top: boolean) => {
      items.forEach((i, k) => {
        if (i.kind === 'text' && !(top && k === 0 && c.sort === elem)) inner.add(i.text);
        if (i.kind === 'slot' && i.sep !== null) inner.add(i.sep);
        if (i.kind === 'when') collect(c, i.items, false);
      });
    };
    const reach = facts.reachableFrom(elem);
    for (const sname of reach) {
      const s = facts.sorts.get(sname)!;
      if (s.parens && sname !== elem) {
        inner.add(s.parens.open);
        inner.add(s.parens.close);
      }
      if (s.parens && sname === elem) inner.add(s.parens.close);
      for (const n of s.constructors) {
        const c = facts.ctors.get(n)!;
        collect(c, c.layout, true);
      }
    }
    // an element sort reachable from its own fields nests elements inside elements
    const recursive = g.constructors.some(
      (c) => reach.has(c.sort) && c.fields.some((x) => x.type.kind === 'sort' && x.type.name === elem),
    );
    if (recursive) {
      out.push(E.adjacentListElements(at(item.span), f.name, `an element (${'`'}${elem}${'`'}) can contain another one`));
      return;
    }
    const clash = [...starters].sort().find((t) => inner.has(t));
    if (clash !== undefined) {
      out.push(
        E.adjacentListElements(at(item.span), f.name, `${JSON.stringify(clash)}, which begins an element, can also occur inside one`),
      );
    }
  };

  for (const c of g.constructors) visit(c, c.layout);
}

function checkLeftRecursion(g: Grammar, facts: Facts, out: Diagnostic[], at: At): void {
  // left-corner edges per constructor: (field, target sort)
  const edges = new Map<string, { field: Field; span: Span; target: string }[]>();
  for (const c of g.constructors) {
    const list: { field: Field; span: Span; target: string }[] = [];
    const walk = (items: readonly LayoutItem[], top: boolean): boolean => {
      for (let k = 0; k < items.length; k++) {
        const i = items[k]!;
        if (i.kind === 'text') return false;
        if (i.kind === 'when') {
          walk(i.items, false);
          continue;
        }
        if (i.kind === 'blank') {
          if (!i.optional) return false;
          continue;
        }
        const f = facts.field(c, i.field);
        const operand =
          top && k === 0 && c.operator !== null && c.operator.fixity !== 'prefix' && f.type.kind === 'sort' && f.type.name === c.sort;
        if (f.type.kind === 'sort' && !operand) list.push({ field: f, span: i.span, target: f.type.name });
        if (!facts.fieldNullable(f)) return false;
      }
      return true;
    };
    walk(c.layout, true);
    edges.set(c.name, list);
  }
  const sortEdges = new Map<string, Set<string>>();
  for (const s of g.sorts) {
    const set = new Set<string>();
    for (const n of s.constructors) for (const e of edges.get(n)!) set.add(e.target);
    sortEdges.set(s.name, set);
  }
  // an edge S -> T closes a cycle exactly when T leads back to S: T == S or both in one component
  const sortId = new Map(g.sorts.map((s, i) => [s.name, i]));
  const component = new Int32Array(g.sorts.length);
  stronglyConnected(
    g.sorts.length,
    g.sorts.map((s) => [...sortEdges.get(s.name)!].map((t) => sortId.get(t)!)),
  ).forEach((comp, k) => {
    for (const v of comp) component[v] = k;
  });
  const leadsTo = (from: string, goal: string): boolean =>
    from === goal || component[sortId.get(from)!] === component[sortId.get(goal)!];
  for (const c of g.constructors) {
    for (const e of edges.get(c.name)!) {
      if (leadsTo(e.target, c.sort)) {
        out.push(E.leftRecursion(at(e.span), c.name, e.field.name, e.target, e.target === c.sort, c.sort));
        break;
      }
    }
  }
}

// ---- numeric token classes ------------------------------------------------------------------------

/** Most digits in a lexeme (`digits`) and most digits after a possible `.` (`afterPoint`, -Infinity without one). */
interface DigitCount {
  readonly digits: number;
  readonly afterPoint: number;
}

const MAX_EXACT_DIGITS = 15; // every decimal of ≤ 15 significant digits survives a double (IEEE 754 binary64)
const MAX_PLAIN_FRACTION = 6; // Number::toString switches to exponent form below 1e-6 (ECMA-262)

/** Is `text` a lexeme of the class? (its DFA, the one every stage uses) */
function isLexeme(t: TokenClass, text: string): boolean {
  const d = t.regex.dfa;
  return d.accept[runDfa(d, d.start, new TextEncoder().encode(text))] === 1;
}

function checkNumericDigits(g: Grammar, out: Diagnostic[], at: At): void {
  for (const t of g.tokens) {
    if (t.value !== 'int' && t.value !== 'number') continue;
    const c = countDigits(t.regex.rx);
    if (t.value === 'int' ? c.digits > MAX_EXACT_DIGITS : c.digits > MAX_EXACT_DIGITS || c.afterPoint > MAX_PLAIN_FRACTION) {
      out.push(t.value === 'int' ? E.unboundedIntDigits(at(t.span), t.name) : E.unboundedNumberDigits(at(t.span), t.name));
    }
  }
}

const EMPTY: DigitCount = { digits: 0, afterPoint: -Infinity };
const NONE: DigitCount = { digits: -Infinity, afterPoint: -Infinity }; // matches nothing

function seq(a: DigitCount, b: DigitCount): DigitCount {
  if (a.digits === -Infinity || b.digits === -Infinity) return NONE;
  return { digits: a.digits + b.digits, afterPoint: Math.max(a.afterPoint + b.digits, b.afterPoint) };
}

function alt(a: DigitCount, b: DigitCount): DigitCount {
  return { digits: Math.max(a.digits, b.digits), afterPoint: Math.max(a.afterPoint, b.afterPoint) };
}

function countDigits(rx: Rx): DigitCount {
  switch (rx.t) {
    case 'seq':
      return rx.items.reduce((acc, n) => seq(acc, countDigits(n)), EMPTY);
    case 'alt':
      return rx.items.reduce((acc, n) => alt(acc, countDigits(n)), NONE);
    case 'rep': {
      const body = countDigits(rx.body);
      const { min, max } = rx;
      if (max === 0) return EMPTY;
      if (body.digits === -Infinity) return min === 0 ? EMPTY : NONE;
      // k copies: digits k·d; the last point may sit in the first copy, so (k - 1)·d + afterPoint
      const digits = body.digits === 0 ? 0 : max * body.digits;
      const afterPoint = body.afterPoint === -Infinity ? -Infinity : body.digits === 0 ? body.afterPoint : (max - 1) * body.digits + body.afterPoint;
      return { digits, afterPoint };
    }
    case 'set': {
      if (rx.set.length === 0) return NONE;
      let digit = false;
      let point = false;
      for (let i = 0; i < rx.set.length; i += 2) {
        if (rx.set[i]! <= 0x39 && rx.set[i + 1]! >= 0x30) digit = true;
        if (rx.set[i]! <= 0x2e && rx.set[i + 1]! >= 0x2e) point = true;
      }
      return { digits: digit ? 1 : 0, afterPoint: point ? 0 : -Infinity };
    }
  }
}
