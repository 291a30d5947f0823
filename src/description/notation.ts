/**
 * The `.twg` notation, written as an ohm-js grammar, and the pass that turns a successful match into
 * a syntax tree with offsets (syntax.ts). Only shape is checked here; names, types and every
 * semantic condition are checked by compile.ts and analysis.ts.
 *
 * Keep in sync with the reference section of README.md.
 */
import * as ohm from 'ohm-js';
import type { Span } from './ir.ts';
import { guardedMatch } from '../util/ohm-depth.ts';
import { NOTATION_RECIPE } from './notation-recipe.ts';
import type {
  CtorAst,
  DeclAst,
  DescriptionAst,
  FieldAst,
  Ident,
  ItemAst,
  OperatorAst,
  RegexLit,
  SepPartAst,
  StrLit,
} from './syntax.ts';

export const NOTATION_SOURCE = String.raw`
Twg {
  Description = GrammarDecl Decl* end
  GrammarDecl = grammarKw name
  Decl = StartDecl | SpaceDecl | BlankDecl | FillerDecl | TokenDecl | NamesDecl | KindsDecl | SortDecl
  StartDecl = startKw name
  SpaceDecl = spaceKw string
  BlankDecl = blankKw name "=" string
  FillerDecl = fillerKw regex
  TokenDecl = tokenKw name "=" regex asKw kindWord reservedKw? ExceptClause? KindClause?
  ExceptClause = exceptKw string+
  NamesDecl = namesKw name ofKw name InClause? WithClause?
  InClause = inKw name
  WithClause = withKw "(" ListOf<SlotDecl, ","> ")"
  SlotDecl = name ":" name
  KindsDecl = kindsKw name
  KindClause = kindKw name
  SortDecl = sortKw name KindClause? ParensDecl? "{" Ctor* "}"
  ParensDecl = parensKw string string
  Ctor = name "(" ListOf<FieldDecl, ","> ")" scopeKw? "=" Item* OperatorDecl? ";"
  FieldDecl = name ":" scoping? name card? ByClause? FieldKind?
  ByClause = byKw name
  FieldKind = kindKw name KindSlotRef?
  KindSlotRef = "." name
  Item = glue? Atom
  Atom = Group | string | Slot
  Group = "[" Item* "]"
  Slot = name optMark? SepClause?
  SepClause = sepKw "(" SepItem+ ")"  -- framed
            | sepKw glue? string      -- plain
  SepItem = glue? SepAtom
  SepAtom = string | BlankRef
  BlankRef = name optMark?
  OperatorDecl = "@" OperatorSpec
  OperatorSpec = infixKw assoc number   -- infix
               | prefixKw number        -- prefix
               | postfixKw number       -- postfix

  scoping = newKw | boundKw | enterKw | knownKw
  card = "?" | "*" | "+"
  optMark = "?"
  glue = "~"
  assoc (left, right or none) = (leftKw | rightKw | noneKw)

  name (a name) = identStart identPart*
  identStart = letter | "_"
  identPart = alnum | "_"
  kindWord (a value kind) = letter (alnum | "-" | "_")*
  number (a precedence number) = digit+

  string (a string literal) = "\"" strChar* "\""
  strChar = "\\" ~"\n" any  -- escape
          | ~("\"" | "\\" | "\n") any  -- plain

  regex (a regular expression literal) = "/" reChar+ "/" identPart*
  reChar = "\\" ~"\n" any  -- escape
         | "[" reClassChar* "]"  -- class
         | ~("/" | "\n" | "[" | "\\") any  -- plain
  reClassChar = "\\" ~"\n" any  -- escape
              | ~("]" | "\n" | "\\") any  -- plain

  grammarKw = "grammar" ~identPart
  startKw = "start" ~identPart
  spaceKw = "space" ~identPart
  tokenKw = "token" ~identPart
  namesKw = "names" ~identPart
  sortKw = "sort" ~identPart
  parensKw = "parens" ~identPart
  asKw = "as" ~identPart
  ofKw = "of" ~identPart
  reservedKw = "reserved" ~identPart
  exceptKw = "except" ~identPart
  blankKw = "blank" ~identPart
  fillerKw = "filler" ~identPart
  sepKw = "sep" ~identPart
  newKw = "new" ~identPart
  boundKw = "bound" ~identPart
  enterKw = "enter" ~identPart
  knownKw = "known" ~identPart
  kindsKw = "kinds" ~identPart
  kindKw = "kind" ~identPart
  inKw = "in" ~identPart
  withKw = "with" ~identPart
  byKw = "by" ~identPart
  scopeKw = "scope" ~identPart
  infixKw = "infix" ~identPart
  prefixKw = "prefix" ~identPart
  postfixKw = "postfix" ~identPart
  leftKw = "left" ~identPart
  rightKw = "right" ~identPart
  noneKw = "none" ~identPart

  space += comment
  comment = "#" (~"\n" any)*
}
`;

/**
 * The notation as an ohm grammar, built on first use (importing the description stage costs
 * nothing until a description is read). It is built from ohm's own serialised form of the grammar,
 * a recipe (notation-recipe.ts, written by `.build/gen-notation-recipe.mjs`): ohm rebuilds a
 * grammar from its recipe in milliseconds, while compiling NOTATION_SOURCE takes ohm a few hundred
 * on a cold process. The recipe carries the source it was made from (ohm keeps it trimmed); when that differs from
 * NOTATION_SOURCE (an edit not yet regenerated) the source is compiled instead, so the notation
 * read is always NOTATION_SOURCE. test/description/notation-recipe.test.ts fails until the recipe
 * is regenerated.
 */
export function notationGrammar(): ohm.Grammar {
  return built().grammar;
}

let cache: { grammar: ohm.Grammar; semantics: ohm.Semantics } | null = null;

// ohm exports makeRecipe (its CLI's generated modules call it) but its typings omit it
const { makeRecipe } = ohm as unknown as { makeRecipe(recipe: unknown): ohm.Grammar };

function built(): { grammar: ohm.Grammar; semantics: ohm.Semantics } {
  if (cache === null) {
    const recipe = JSON.parse(NOTATION_RECIPE) as unknown[];
    const grammar = (recipe[1] as { source?: unknown } | undefined)?.source === NOTATION_SOURCE.trim() ? makeRecipe(recipe) : ohm.grammar(NOTATION_SOURCE);
    const semantics = grammar.createSemantics();
    semantics.addOperation<unknown>('ast', ACTIONS);
    cache = { grammar, semantics };
  }
  return cache;
}

type Node = ohm.Node;

function spanOf(node: Node): Span {
  return { start: node.source.startIdx, end: node.source.endIdx };
}

function ident(node: Node): Ident {
  return { text: node.sourceString, span: spanOf(node) };
}

function str(node: Node): StrLit {
  return { raw: node.sourceString, span: spanOf(node) };
}

/** The optional node's single child, or null. */
function opt(node: Node): Node | null {
  return node.numChildren > 0 ? node.child(0) : null;
}

const ACTIONS: ohm.ActionDict<unknown> = {
  Description(head: Node, decls: Node, _end: Node): DescriptionAst {
    return { grammar: head.ast(), decls: decls.children.map((d) => d.ast()) };
  },
  GrammarDecl(_kw: Node, n: Node): Ident {
    return ident(n);
  },
  Decl(inner: Node): DeclAst {
    return inner.ast();
  },
  StartDecl(_kw: Node, n: Node): DeclAst {
    return { kind: 'start', name: ident(n), span: spanOf(this as unknown as Node) };
  },
  SpaceDecl(_kw: Node, s: Node): DeclAst {
    return { kind: 'space', value: str(s), span: spanOf(this as unknown as Node) };
  },
  BlankDecl(_kw: Node, n: Node, _eq: Node, s: Node): DeclAst {
    return { kind: 'blank', name: ident(n), value: str(s), span: spanOf(this as unknown as Node) };
  },
  FillerDecl(_kw: Node, re: Node): DeclAst {
    return { kind: 'filler', regex: re.ast(), span: spanOf(this as unknown as Node) };
  },
  TokenDecl(_kw: Node, n: Node, _eq: Node, re: Node, _as: Node, kind: Node, reserved: Node, except: Node, family: Node): DeclAst {
    const f = opt(family);
    const x = opt(except);
    return {
      except: x ? { words: x.child(1).children.map(str), span: spanOf(x) } : null,
      kind: 'token',
      name: ident(n),
      regex: re.ast(),
      valueKind: ident(kind),
      reserved: reserved.numChildren > 0,
      family: f ? ident(f.child(1)) : null,
      span: spanOf(this as unknown as Node),
    };
  },
  NamesDecl(_kw: Node, n: Node, _of: Node, tok: Node, inClause: Node, withClause: Node): DeclAst {
    const i = opt(inClause);
    const w = opt(withClause);
    return {
      kind: 'names',
      name: ident(n),
      token: ident(tok),
      owner: i ? ident(i.child(1)) : null,
      slots: w
        ? w.child(2).asIteration().children.map((s) => ({ name: ident(s.child(0)), family: ident(s.child(2)), span: spanOf(s) }))
        : null,
      slotsSpan: w ? spanOf(w) : null,
      span: spanOf(this as unknown as Node),
    };
  },
  KindsDecl(_kw: Node, n: Node): DeclAst {
    return { kind: 'kinds', name: ident(n), span: spanOf(this as unknown as Node) };
  },
  SortDecl(_kw: Node, n: Node, family: Node, parens: Node, _o: Node, ctors: Node, _c: Node): DeclAst {
    const p = opt(parens);
    const f = opt(family);
    return {
      kind: 'sort',
      name: ident(n),
      family: f ? ident(f.child(1)) : null,
      parens: p ? { open: str(p.child(1)), close: str(p.child(2)), span: spanOf(p) } : null,
      ctors: ctors.children.map((c) => c.ast()),
      span: spanOf(this as unknown as Node),
    };
  },
  Ctor(n: Node, _o: Node, fields: Node, _c: Node, scope: Node, _eq: Node, items: Node, op: Node, _semi: Node): CtorAst {
    const o = opt(op);
    const sc = opt(scope);
    const self = this as unknown as Node;
    return {
      name: ident(n),
      fields: fields.asIteration().children.map((f) => f.ast()),
      layout: items.children.map((i) => i.ast()),
      layoutSpan: items.numChildren > 0 ? { start: items.source.startIdx, end: items.source.endIdx } : { start: _eq.source.startIdx, end: _eq.source.endIdx },
      operator: o ? o.ast() : null,
      scope: sc ? ident(sc) : null,
      span: spanOf(self),
    };
  },
  FieldDecl(n: Node, _colon: Node, scoping: Node, type: Node, card: Node, by: Node, kind: Node): FieldAst {
    const s = opt(scoping);
    const c = opt(card);
    const b = opt(by);
    const k = opt(kind);
    const slot = k ? opt(k.child(2)) : null;
    return {
      name: ident(n),
      scoping: s ? ident(s) : null,
      type: ident(type),
      card: c ? ident(c) : null,
      by: b ? ident(b.child(1)) : null,
      kindOf: k ? { field: ident(k.child(1)), slot: slot ? ident(slot.child(1)) : null, span: spanOf(k) } : null,
      span: spanOf(this as unknown as Node),
    };
  },
  Item(glue: Node, atom: Node): ItemAst {
    const item = atom.ast() as ItemAst;
    return { ...item, glue: glue.numChildren > 0, span: spanOf(this as unknown as Node) };
  },
  Atom(inner: Node): ItemAst {
    if (inner.ctorName === 'string') {
      return { kind: 'text', lit: str(inner), glue: false, span: spanOf(inner) };
    }
    return inner.ast();
  },
  Group(_o: Node, items: Node, _c: Node): ItemAst {
    return { kind: 'group', items: items.children.map((i) => i.ast()), glue: false, span: spanOf(this as unknown as Node) };
  },
  Slot(n: Node, mark: Node, sep: Node): ItemAst {
    const s = opt(sep);
    const m = opt(mark);
    return {
      kind: 'slot',
      field: ident(n),
      optional: m ? spanOf(m) : null,
      sep: s ? { parts: s.ast() as SepPartAst[], span: spanOf(s) } : null,
      glue: false,
      span: spanOf(this as unknown as Node),
    };
  },
  SepClause_framed(_kw: Node, _o: Node, items: Node, _c: Node): SepPartAst[] {
    return items.children.map((i) => i.ast() as SepPartAst);
  },
  SepClause_plain(_kw: Node, glue: Node, s: Node): SepPartAst[] {
    return [{ kind: 'text', lit: str(s), glue: glue.numChildren > 0, span: spanOf(s) }];
  },
  SepItem(glue: Node, atom: Node): SepPartAst {
    const g = glue.numChildren > 0;
    const inner = atom.child(0);
    if (inner.ctorName === 'string') return { kind: 'text', lit: str(inner), glue: g, span: spanOf(this as unknown as Node) };
    return { kind: 'blank', name: ident(inner.child(0)), optional: inner.child(1).numChildren > 0, glue: g, span: spanOf(this as unknown as Node) };
  },
  OperatorDecl(_at: Node, spec: Node): OperatorAst {
    return { ...(spec.ast() as OperatorAst), span: spanOf(this as unknown as Node) };
  },
  OperatorSpec_infix(kw: Node, assoc: Node, num: Node): OperatorAst {
    return { fixity: ident(kw), assoc: ident(assoc), precedence: ident(num), span: spanOf(this as unknown as Node) };
  },
  OperatorSpec_prefix(kw: Node, num: Node): OperatorAst {
    return { fixity: ident(kw), assoc: null, precedence: ident(num), span: spanOf(this as unknown as Node) };
  },
  OperatorSpec_postfix(kw: Node, num: Node): OperatorAst {
    return { fixity: ident(kw), assoc: null, precedence: ident(num), span: spanOf(this as unknown as Node) };
  },
  regex(_open: Node, body: Node, _close: Node, flags: Node): RegexLit {
    const self = this as unknown as Node;
    return {
      body: body.sourceString,
      bodySpan: { start: body.source.startIdx, end: body.source.endIdx },
      flags: flags.sourceString,
      flagsSpan: { start: flags.source.startIdx, end: flags.source.endIdx },
      span: spanOf(self),
    };
  },
};

/** One of ohm's rightmost failures: literal text (type `string`) or a rule's description, and whether ohm counts it as fluffy (not worth listing). */
export interface NotationFailure {
  readonly type: string;
  readonly text: string;
  readonly fluffy: boolean;
}

export type ParseOutcome =
  | { readonly ok: true; readonly ast: DescriptionAst }
  | { readonly ok: false; readonly offset: number; readonly failures: readonly NotationFailure[] };

// ohm 17 has these on failure records; its typings omit them
type OhmFailure = { getType(): string; getText(): string; isFluffy(): boolean };

/**
 * Matches `text` against the notation; on failure returns the rightmost failure offset and ohm's
 * failure records there (worded for users by notation-errors.ts, never shown as they are).
 */
export function parseNotation(text: string): ParseOutcome {
  // throws NestingLimit past the nesting limit (src/util/ohm-depth.ts); compileDescription reports it
  const { grammar, semantics } = built();
  const match = guardedMatch(grammar, text, 'Description');
  if (match.failed()) {
    const records = (match as unknown as { getRightmostFailures(): OhmFailure[] }).getRightmostFailures();
    const failures = records.map((f) => ({
      type: f.getType(),
      text: f.getText(),
      fluffy: f.isFluffy(),
    }));
    return { ok: false, offset: match.getRightmostFailurePosition(), failures };
  }
  return { ok: true, ast: semantics(match).ast() as DescriptionAst };
}
