/**
 * The grammar IR: what the description compiler produces from a `.twg` file and what every later
 * stage (trees, parser, printer, sampler, automaton, masks) consumes.
 *
 * Invariants (established by the compiler, relied on everywhere else):
 * - Names are unique within their kind; constructor names are unique across the whole grammar
 *   (a JSON tree names its node by constructor only).
 * - Every field type resolves; every layout slot names a field of its constructor; every field
 *   appears in exactly one slot.
 * - `index` fields equal the position in the owning array, so stages may use them as integer IDs.
 * - Offsets in `Span` are UTF-16 offsets into the description text; line/column are computed only
 *   when a message is printed (see util/source.ts).
 * The IR is immutable after compilation: stages must not mutate it.
 */

/** A half-open range of UTF-16 offsets into the description source (defined in util/source.ts). */
export type { Span } from '../util/source.ts';
import type { Span } from '../util/source.ts';

/** How a lexeme of a token class becomes a value in a JSON tree (and back, when printing). */
export type ValueKind =
  /** the lexeme itself, as a string */
  | 'text'
  /** a safe integer; printed in decimal */
  | 'int'
  /** a finite number; printed the way JSON.stringify prints it */
  | 'number'
  /** a double-quoted string with RFC 8259 escapes; the tree holds the decoded string */
  | 'json-string'
  /** a single-quoted string where '' stands for one quote (SQL); the tree holds the decoded string */
  | 'sql-string';

/** A lexical class: `token Name = /regex/ as kind [reserved]`. */
export interface TokenClass {
  readonly index: number;
  readonly name: string;
  /** ECMAScript regular expression source, without slashes; matched against the whole lexeme. */
  readonly pattern: string;
  /** ECMAScript flags written after the closing slash (only `i` and `u` are accepted). */
  readonly flags: string;
  readonly value: ValueKind;
  /** When true, no keyword of the grammar (see Grammar.keywords) is a lexeme of this class. */
  readonly reserved: boolean;
  readonly span: Span;
}

/** An open name set: `names Table of Ident`. Its members are bound at parse/decode time. */
export interface NameSet {
  readonly index: number;
  readonly name: string;
  /** The token class that spells members; each bound member must be a lexeme of it. */
  readonly token: string;
  readonly span: Span;
}

export type FieldType =
  | { readonly kind: 'sort'; readonly name: string }
  | { readonly kind: 'token'; readonly name: string }
  | { readonly kind: 'names'; readonly name: string };

export type Cardinality = 'one' | 'optional' | 'list' | 'nonempty';

/**
 * Variable scoping (only on token-typed fields):
 * - 'binds': this field introduces a variable; it is in scope in the fields that follow it in the
 *   same constructor (and everything below them).
 * - 'bound': this field must name a variable introduced by an enclosing 'binds' field.
 */
export type Scoping = 'none' | 'binds' | 'bound';

export interface Field {
  readonly index: number;
  readonly name: string;
  readonly type: FieldType;
  readonly card: Cardinality;
  readonly scoping: Scoping;
  readonly span: Span;
}

/**
 * One item of a constructor's layout template.
 * `glue: true` means the canonical printer puts no space before this item (written `~` before it);
 * otherwise one space separates it from the previous printed item.
 */
export type LayoutItem =
  | { readonly kind: 'text'; readonly text: string; readonly glue: boolean; readonly span: Span }
  | {
      readonly kind: 'slot';
      readonly field: string;
      /** list fields only: text printed between elements (`args sep ", "`); separator glue: see sepGlue */
      readonly sep: string | null;
      /** canonical printing glues the separator to the previous element (true for "," ";" etc.) */
      readonly sepGlue: boolean;
      readonly glue: boolean;
      readonly span: Span;
    }
  | {
      /** `[ ... ]`: printed (and parsed) only when `field` is present (optional) or non-empty (list). */
      readonly kind: 'when';
      readonly field: string;
      readonly items: readonly LayoutItem[];
      readonly glue: boolean;
      readonly span: Span;
    };

export type Fixity = 'infix' | 'prefix' | 'postfix';
export type Assoc = 'left' | 'right' | 'none';

/** `@ infix left 10`: higher precedence binds tighter. Operands are the first/last slots. */
export interface Operator {
  readonly fixity: Fixity;
  readonly assoc: Assoc;
  readonly precedence: number;
}

export interface Constructor {
  readonly index: number;
  readonly name: string;
  readonly sort: string;
  readonly fields: readonly Field[];
  readonly layout: readonly LayoutItem[];
  readonly operator: Operator | null;
  readonly span: Span;
}

export interface Sort {
  readonly index: number;
  readonly name: string;
  /** constructor names, in declaration order */
  readonly constructors: readonly string[];
  /** grouping brackets that may wrap any term of this sort (needed by sorts with operators) */
  readonly parens: { readonly open: string; readonly close: string } | null;
  readonly span: Span;
}

export interface Grammar {
  readonly name: string;
  /** path of the description file (for messages) */
  readonly file: string;
  /** content hash (sha256 hex of the description text) — cache keys use it */
  readonly hash: string;
  readonly start: string;
  /**
   * Characters skipped between tokens. Any run (possibly empty) is accepted between two tokens,
   * except that at least one is required between two tokens when the first ends and the second
   * begins with a word character [A-Za-z0-9_] (the word-boundary rule).
   */
  readonly space: string;
  readonly tokens: readonly TokenClass[];
  readonly nameSets: readonly NameSet[];
  readonly sorts: readonly Sort[];
  readonly constructors: readonly Constructor[];
  /** every distinct literal text of every layout (and parens), sorted; 'reserved' classes exclude these */
  readonly keywords: readonly string[];
}

/** Values bound to open name sets: set name → allowed members. */
export type NameBindings = Readonly<Record<string, readonly string[]>>;
