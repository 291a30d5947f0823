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
  /** `blank Name = " \t"`: a named blank that layouts place (`Name`, `Name?`) */
  | { readonly kind: 'blank'; readonly name: Ident; readonly value: StrLit; readonly span: Span }
  /** `filler /#[^\n]*\n/`: material that may stand between any two tokens and means nothing */
  | { readonly kind: 'filler'; readonly regex: RegexLit; readonly span: Span }
  | {
      readonly kind: 'token';
      readonly name: Ident;
      readonly regex: RegexLit;
      readonly valueKind: Ident;
      readonly reserved: boolean;
      /** `except "w" ...`: words removed from this class; null when absent */
      readonly except: { readonly words: readonly StrLit[]; readonly span: Span } | null;
      /** `kind Family` after the value kind */
      readonly family: Ident | null;
      readonly span: Span;
    }
  | {
      readonly kind: 'names';
      readonly name: Ident;
      readonly token: Ident;
      /** `in Owner` */
      readonly owner: Ident | null;
      /** `with (slot: Family, ...)`; null when absent */
      readonly slots: readonly { readonly name: Ident; readonly family: Ident; readonly span: Span }[] | null;
      readonly slotsSpan: Span | null;
      readonly span: Span;
    }
  | { readonly kind: 'kinds'; readonly name: Ident; readonly span: Span }
  | {
      readonly kind: 'sort';
      readonly name: Ident;
      /** `kind Family` after the sort name */
      readonly family: Ident | null;
      readonly parens: { readonly open: StrLit; readonly close: StrLit; readonly span: Span } | null;
      readonly ctors: readonly CtorAst[];
      readonly span: Span;
    };

export interface FieldAst {
  readonly name: Ident;
  /** `new`, `bound`, `enter` or `known`, as written */
  readonly scoping: Ident | null;
  readonly type: Ident;
  /** `?`, `*` or `+`, as written */
  readonly card: Ident | null;
  /** `by field` */
  readonly by: Ident | null;
  /** `kind self`, `kind field` or `kind field.slot`: the words after `kind` */
  readonly kindOf: { readonly field: Ident; readonly slot: Ident | null; readonly span: Span } | null;
  readonly span: Span;
}

/** One part of a separator: its text, or a blank written before or after it (`sep (Ws? "," Ws?)`). */
export type SepPartAst =
  | { readonly kind: 'text'; readonly lit: StrLit; readonly glue: boolean; readonly span: Span }
  | { readonly kind: 'blank'; readonly name: Ident; readonly optional: boolean; readonly glue: boolean; readonly span: Span };

export type ItemAst =
  | { readonly kind: 'text'; readonly lit: StrLit; readonly glue: boolean; readonly span: Span }
  | {
      readonly kind: 'slot';
      readonly field: Ident;
      /** a `?` written after the name (meaningful only when the name is a blank: `Ws?`) */
      readonly optional: Span | null;
      readonly sep: { readonly parts: readonly SepPartAst[]; readonly span: Span } | null;
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
  /** the `scope` word, when written */
  readonly scope: Ident | null;
  readonly span: Span;
}

export interface DescriptionAst {
  readonly grammar: Ident;
  readonly decls: readonly DeclAst[];
}
