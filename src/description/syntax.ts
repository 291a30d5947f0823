/**
 * The syntax tree of a `.twg` file as notation.ts builds it: declarations in source order, every
 * name and literal with its span, nothing resolved or decoded yet (compile.ts does that).
 */
import type { Span } from './ir.ts';

export interface Ident {
  readonly text: string;
  readonly span: Span;
}

/** A string literal as written, quotes and escapes included. */
export interface StrLit {
  readonly raw: string;
  readonly span: Span;
}

export interface RegexLit {
  readonly body: string;
  readonly bodySpan: Span;
  readonly flags: string;
  readonly flagsSpan: Span;
  readonly span: Span;
}

export type DeclAst =
  | { readonly kind: 'start'; readonly name: Ident; readonly span: Span }
  | { readonly kind: 'space'; readonly value: StrLit; readonly span: Span }
  | {
      readonly kind: 'token';
      readonly name: Ident;
      readonly regex: RegexLit;
      readonly valueKind: Ident;
      readonly reserved: boolean;
      readonly span: Span;
    }
  | { readonly kind: 'names'; readonly name: Ident; readonly token: Ident; readonly span: Span }
  | {
      readonly kind: 'sort';
      readonly name: Ident;
      readonly parens: { readonly open: StrLit; readonly close: StrLit; readonly span: Span } | null;
      readonly ctors: readonly CtorAst[];
      readonly span: Span;
    };

export interface FieldAst {
  readonly name: Ident;
  /** `new` or `bound`, as written */
  readonly scoping: Ident | null;
  readonly type: Ident;
  /** `?`, `*` or `+`, as written */
  readonly card: Ident | null;
  readonly span: Span;
}

export type ItemAst =
  | { readonly kind: 'text'; readonly lit: StrLit; readonly glue: boolean; readonly span: Span }
  | {
      readonly kind: 'slot';
      readonly field: Ident;
      readonly sep: { readonly lit: StrLit; readonly glue: boolean; readonly span: Span } | null;
      readonly glue: boolean;
      readonly span: Span;
    }
  | { readonly kind: 'group'; readonly items: readonly ItemAst[]; readonly glue: boolean; readonly span: Span };

export interface OperatorAst {
  readonly fixity: Ident;
  readonly assoc: Ident | null;
  readonly precedence: Ident;
  readonly span: Span;
}

export interface CtorAst {
  readonly name: Ident;
  readonly fields: readonly FieldAst[];
  readonly layout: readonly ItemAst[];
  /** the layout items as a whole (the `=` sign when the layout is empty) */
  readonly layoutSpan: Span;
  readonly operator: OperatorAst | null;
  readonly span: Span;
}

export interface DescriptionAst {
  readonly grammar: Ident;
  readonly decls: readonly DeclAst[];
}
