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
import type { TokenRegex } from './regex/index.ts';

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
  /**
   * The pattern parsed once by the regex front-end (regex/): its IR (case-closed character sets)
   * and the byte DFA of the class's lexemes (for `reserved` classes, without the keywords). Every
   * later stage reads these, never the pattern text.
   */
  readonly regex: TokenRegex;
  readonly value: ValueKind;
  /** `kind Family`: variables of this class (`new`/`bound` fields) carry a kind of this family */
  readonly family: string | null;
  /** When true, no keyword of the grammar (see Grammar.keywords) is a lexeme of this class. */
  readonly reserved: boolean;
  /**
   * `except "on" "off"`: these words are not lexemes of this class (its DFA excludes them, with the
   * keywords when `reserved` too); empty when the class has no `except` clause.
   */
  readonly except: readonly string[];
  readonly span: Span;
}

/**
 * An open name set: `names Table of Ident`. Its members are bound at parse/decode time.
 * `names Column of Ident in Table` relates it to another set (each member belongs to one or more
 * members of `owner`); `names Rel of Name with (subject: Kind, object: Kind)` gives every member
 * named kind slots. Owners and kinds are bound with the members (see NameFacts).
 */
export interface NameSet {
  readonly index: number;
  readonly name: string;
  /** The token class that spells members; each bound member must be a lexeme of it. */
  readonly token: string;
  /** `in Owner`: the name set whose members own this set's members; null when the set stands alone */
  readonly owner: string | null;
  /** `with (slot: Family, ...)`: the kind slots every member carries, in declaration order */
  readonly slots: readonly KindSlot[];
  readonly span: Span;
}

/** One kind slot of a name set: `subject: Kind`. */
export interface KindSlot {
  readonly index: number;
  readonly name: string;
  /** the kind family (KindFamily.name) of the slot's values */
  readonly family: string;
  readonly span: Span;
}

/**
 * A family of kinds: `kinds Kind`. Its members (grower, orchard, ...) and their parents
 * (a kind may be a sub-kind of one other kind) are bound with the names, never written in the
 * grammar. Two kinds agree when one is the other or an ancestor of it.
 */
export interface KindFamily {
  readonly index: number;
  readonly name: string;
  readonly span: Span;
}

/**
 * A named blank, `blank Ws = " \t"`: a run of one or more of its characters that a layout places
 * where a blank is syntax (`l Ws r`) or may stand (`Ws?`). Its characters are never in `space`,
 * so a blank is read only where a layout or separator puts one.
 */
export interface BlankClass {
  readonly index: number;
  readonly name: string;
  /** the characters (whitespace, at least one; the printer writes the first) */
  readonly chars: string;
  /** the run `[chars]+` through the regex front-end (its byte DFA is the terminal the masks walk) */
  readonly regex: TokenRegex;
  readonly span: Span;
}

/**
 * Filler, `filler /#[^\n]*\n/`: material that may stand wherever `space` may (between any two
 * tokens, at the start and the end) and means nothing — comments, an insignificant comma. The
 * parser skips it with the spaces, the masks allow it before every token, the printer and the
 * sampler never write it. Its matches are prefix-free (no match is the start of a longer one), and
 * no token, keyword or blank begins with a character a filler can begin with (compile.ts).
 */
export interface Filler {
  readonly index: number;
  readonly pattern: string;
  readonly flags: string;
  readonly regex: TokenRegex;
  readonly span: Span;
}

/** A blank placed by a layout or a separator: `Ws` (required) or `Ws?` (optional). */
export interface BlankUse {
  /** BlankClass.name */
  readonly blank: string;
  readonly optional: boolean;
  /** `~Ws?`: the canonical printer writes no blank here (only for optional blanks) */
  readonly glue: boolean;
}

export type FieldType =
  | { readonly kind: 'sort'; readonly name: string }
  | { readonly kind: 'token'; readonly name: string }
  | { readonly kind: 'names'; readonly name: string };

export type Cardinality = 'one' | 'optional' | 'list' | 'nonempty';

/**
 * Field markers.
 * Variable scoping (only on token-typed fields):
 * - 'binds' (`new`): this field introduces a variable; it is in scope in the fields that follow it
 *   in the same constructor (and everything below them).
 * - 'bound' (`bound`): this field must name a variable introduced by an enclosing 'binds' field.
 * Name scopes (only on name-set fields; see docs/design/scopes-and-kinds.md):
 * - 'enters' (`enter`): the value is introduced into the nearest enclosing scope (the nearest
 *   ancestor-or-self node whose constructor has `scope: true`; the root when there is none),
 *   wherever the field stands in the text. A value is introduced at most once per scope.
 * - 'known' (`known`): the value must resolve in the scope chain — for a set without an owner, it
 *   was introduced into an enclosing scope; for a set `in Owner`, an introduced owner owns it
 *   (exactly one in the innermost scope that has any, or the one named by the `by` field).
 */
export type Scoping = 'none' | 'binds' | 'bound' | 'enters' | 'known';

/**
 * A kind constraint on a field, `field: T kind REF`: the field's kind equals REF's kind.
 * - `self`: the kind of the node itself (its sort is declared `sort S kind Family`);
 * - `field`: another field of the same constructor; with `slot`, a slot of that name-set field's
 *   member (`rel.subject`), without it the field's own kind (a kinded sort, a variable of a kinded
 *   token class, or a name set with exactly one slot).
 */
export type KindRef =
  | { readonly kind: 'self'; readonly span: Span }
  | { readonly kind: 'field'; readonly field: string; readonly slot: string | null; readonly span: Span };

export interface Field {
  readonly index: number;
  readonly name: string;
  readonly type: FieldType;
  readonly card: Cardinality;
  readonly scoping: Scoping;
  /** `known Column by table`: the field of the same constructor naming the owner; null otherwise */
  readonly by: string | null;
  /** `kind REF`: this field's kind equals REF's; null when unconstrained */
  readonly kindOf: KindRef | null;
  /** the family of this field's own kind (see KindRef), or null when the field has none */
  readonly family: string | null;
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
      /**
       * `sep (Ws? "," Ws?)`: blanks around the separator text; absent when the separator has none.
       * (Only declared blanks: `space` characters may stand around any separator anyway.)
       */
      readonly sepBlanks?: { readonly before: BlankUse | null; readonly after: BlankUse | null };
      readonly glue: boolean;
      readonly span: Span;
    }
  | ({
      /**
       * A declared blank placed in the layout (`Ws` required, `Ws?` optional). The printer writes
       * the blank's first character (none for a glued optional blank `~Ws?`) and no other blank
       * next to it.
       */
      readonly kind: 'blank';
      readonly span: Span;
    } & BlankUse)
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
  /** `ctor(...) scope = ...`: the node opens a scope for `enter`/`known` fields below it */
  readonly scope: boolean;
  readonly span: Span;
}

export interface Sort {
  readonly index: number;
  readonly name: string;
  /** constructor names, in declaration order */
  readonly constructors: readonly string[];
  /** grouping brackets that may wrap any term of this sort (needed by sorts with operators) */
  readonly parens: { readonly open: string; readonly close: string } | null;
  /** `sort S kind Family`: every node of this sort has a kind of this family; null otherwise */
  readonly family: string | null;
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
  /** `blank` declarations, in source order (their characters are disjoint from `space`) */
  readonly blanks: readonly BlankClass[];
  /** `filler` declarations, in source order */
  readonly fillers: readonly Filler[];
  readonly tokens: readonly TokenClass[];
  readonly nameSets: readonly NameSet[];
  /** `kinds F` declarations */
  readonly kindFamilies: readonly KindFamily[];
  /** true when any field is `enter`/`known` or any kind is declared (names need binding beyond members) */
  readonly scoped: boolean;
  readonly sorts: readonly Sort[];
  readonly constructors: readonly Constructor[];
  /** every distinct literal text of every layout (and parens), sorted; 'reserved' classes exclude these */
  readonly keywords: readonly string[];
}

/** The key under which NameBindings carry owners and kinds (a symbol: set names are strings). */
export const NAME_FACTS: unique symbol = Symbol.for('treewright.nameFacts');

/**
 * What is bound with the members, by name, as read from a names file or a database (checked and
 * turned into integer ids against a grammar by description/bound.ts).
 */
export interface NameFacts {
  /** set → member → the owner-set members it belongs to (sets declared `in Owner`) */
  readonly owners: Readonly<Record<string, Readonly<Record<string, readonly string[]>>>>;
  /** set → member → its kind per slot, in slot order (null: unconstrained) */
  readonly kinds: Readonly<Record<string, Readonly<Record<string, readonly (string | null)[]>>>>;
  /** kind family → kind → its parent kind (null: none), in the order given */
  readonly families: Readonly<Record<string, Readonly<Record<string, string | null>>>>;
  /** where the facts come from, for messages (a file name) */
  readonly source: string;
}

/**
 * Values bound to open name sets: set name → allowed members. Owners and kinds ride along under
 * the NAME_FACTS symbol key, non-enumerable (invisible to Object.entries, JSON.stringify and
 * spreading; tree/names.ts withFacts and mergeNames set and keep it).
 */
export type NameBindings = Readonly<Record<string, readonly string[]>> & { readonly [NAME_FACTS]?: NameFacts };
