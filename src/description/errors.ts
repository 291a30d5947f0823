/**
 * The error catalogue of the description compiler: one named factory per condition, so every
 * message is worded in one place and tests can compare whole messages word for word.
 *
 * A Diagnostic stores only offsets; `formatDiagnostic` turns them into `file:line:col`, a numbered
 * excerpt with `^~~~` under the span, and the hint, when the message is printed.
 */
import type { Span } from './ir.ts';
import { excerpt, lineColumn } from '../util/source.ts';

export interface Diagnostic {
  readonly severity: 'error' | 'warning';
  /** stable identifier of the condition (kebab-case), for tests and tooling */
  readonly code: string;
  readonly message: string;
  readonly file: string;
  readonly span: Span;
  readonly hint?: string;
}

/** `file:line:col: error: message`, the excerpt, and `hint: ...` when there is one. */
export function formatDiagnostic(d: Diagnostic, text: string): string {
  const { line, column } = lineColumn(text, d.span.start);
  let out = `${d.file}:${line}:${column}: ${d.severity}: ${d.message}\n${excerpt(text, d.span)}`;
  if (d.hint !== undefined) out += `\nhint: ${d.hint}`;
  return out;
}

/** All diagnostics, formatted, separated by blank lines (errors first, then warnings, each in source order). */
export function formatDiagnostics(ds: readonly Diagnostic[], text: string): string {
  return sortDiagnostics(ds).map((d) => formatDiagnostic(d, text)).join('\n\n');
}

/** Errors before warnings; within each, by position. Stable. */
export function sortDiagnostics(ds: readonly Diagnostic[]): Diagnostic[] {
  const rank = (d: Diagnostic) => (d.severity === 'error' ? 0 : 1);
  return [...ds].sort((a, b) => rank(a) - rank(b) || a.span.start - b.span.start || a.span.end - b.span.end);
}

/** Thrown by loadGrammar; `message` is the formatted diagnostics. */
export class DescriptionError extends Error {
  readonly diagnostics: readonly Diagnostic[];
  constructor(message: string, diagnostics: readonly Diagnostic[]) {
    super(message);
    this.name = 'DescriptionError';
    this.diagnostics = diagnostics;
  }
}

type At = { readonly file: string; readonly span: Span };

function error(code: string, at: At, message: string, hint?: string): Diagnostic {
  return hint === undefined
    ? { severity: 'error', code, message, file: at.file, span: at.span }
    : { severity: 'error', code, message, file: at.file, span: at.span, hint };
}

function warning(code: string, at: At, message: string, hint?: string): Diagnostic {
  return hint === undefined
    ? { severity: 'warning', code, message, file: at.file, span: at.span }
    : { severity: 'warning', code, message, file: at.file, span: at.span, hint };
}

const q = (s: string) => '`' + s + '`';

// ---- reading the file -------------------------------------------------------------------------

export const unreadableFile = (at: At, reason: string) =>
  error('unreadable-file', at, `cannot read the description: ${reason}`);

// ---- syntax -----------------------------------------------------------------------------------

export const syntaxError = (at: At, expected: string, found: string) =>
  error(
    'syntax',
    at,
    `expected ${expected}, found ${found}`,
    'see the reference section of README.md for the notation',
  );

export const notADeclaration = (at: At, found: string, keywords: readonly string[], suggestion: string | null) =>
  error(
    'not-a-declaration',
    at,
    `${found} is not a declaration; expected ${keywords.length <= 1 ? keywords.join('') : keywords.slice(0, -1).join(', ') + ' or ' + keywords[keywords.length - 1]}`,
    suggestion === null
      ? 'every declaration after the `grammar` line begins with one of these words; see the reference section of README.md'
      : `did you mean ${q(suggestion)}?`,
  );

export const unclosedString = (at: At) =>
  error(
    'unclosed-string',
    at,
    'string literal is not closed on its line',
    'end it with `"`; a string literal stays on one line (write `\\n` for a line break, `\\"` for a quote)',
  );

export const unclosedRegex = (at: At) =>
  error(
    'unclosed-regex',
    at,
    'regular expression is not closed on its line',
    'end it with `/`; write `\\/` for a slash inside it',
  );

export const unclosedRegexClass = (at: At) =>
  error(
    'unclosed-regex-class',
    at,
    'character class `[` is not closed on its line',
    'end it with `]`; inside `[...]` a `/` does not end the regular expression, and `\\]` stands for a bracket',
  );

export const emptyRegex = (at: At) =>
  error(
    'empty-regex',
    at,
    'empty regular expression `//`',
    'a token pattern needs at least one character between the slashes; comments start with `#`',
  );

export const tooDeep = (at: At, detail: string) =>
  error('too-deep', at, detail, 'nest groups and parentheses less deeply (README, "Errors and limits")');

export const badStringEscape = (at: At, detail: string) =>
  error('bad-string', at, `invalid string literal: ${detail}`, 'string literals use JSON escapes: \\" \\\\ \\/ \\b \\f \\n \\r \\t \\uXXXX');

export const badRegex = (at: At, detail: string) =>
  error('bad-regex', at, `invalid regular expression: ${detail}`, 'token patterns are ECMAScript regular expressions');

export const badRegexFlag = (at: At, flag: string) =>
  error('bad-regex-flag', at, `regular expression flag ${q(flag)} is not allowed`, 'only the flags `i` and `u` are accepted');

export const duplicateRegexFlag = (at: At, flag: string) =>
  error('duplicate-regex-flag', at, `regular expression flag ${q(flag)} is given twice`);

export const regexUnsupported = (at: At, token: string, detail: string) =>
  error(
    'regex-unsupported',
    at,
    `token class ${q(token)}: ${detail}`,
    'token patterns are matched by one finite automaton; see "Token regexes" in README.md for what it supports',
  );

export const regexTooLarge = (at: At, token: string, detail: string) =>
  error(
    'regex-too-large',
    at,
    `token class ${q(token)} is too large for the automaton: ${detail}`,
    'use smaller repetition counts, or `+`/`*` instead of a large `{n}`, and avoid a counted repetition after an open-ended one',
  );

export const tokenNoLexeme = (at: At, token: string, afterKeywords: boolean) =>
  error(
    'token-no-lexeme',
    at,
    afterKeywords ? `token class ${q(token)} has no lexeme once the grammar's keywords are removed (it is \`reserved\`)` : `token class ${q(token)} matches no lexeme`,
    afterKeywords ? 'drop `reserved`, or widen the pattern' : 'an empty class `[]` matches nothing',
  );

export const tokenStartsWithSpace = (at: At, token: string, ch: string) =>
  error(
    'token-starts-with-space',
    at,
    `token class ${q(token)} may begin with the space character ${JSON.stringify(ch)}`,
    'lexemes must start with a non-space character; exclude the `space` characters from the first position',
  );

export const regexMatchesEmpty = (at: At, token: string) =>
  error(
    'token-matches-empty',
    at,
    `token class ${q(token)} matches the empty string`,
    'every lexeme must have at least one character: use `+` instead of `*`, or drop the `?`',
  );

export const unknownValueKind = (at: At, kind: string) =>
  error(
    'unknown-value-kind',
    at,
    `unknown value kind ${q(kind)}`,
    'expected one of `text`, `int`, `number`, `json-string`, `sql-string`',
  );

export const badPrecedence = (at: At, text: string) =>
  error('bad-precedence', at, `precedence ${q(text)} is not a safe integer`);

// ---- declarations -----------------------------------------------------------------------------

export const missingStart = (at: At) =>
  error('missing-start', at, 'the description has no `start` declaration', 'add `start SORT` naming the sort of a whole program');

export const missingSpace = (at: At) =>
  error('missing-space', at, 'the description has no `space` declaration', 'add e.g. `space " \\t\\r\\n"` to say which characters may stand between tokens');

export const duplicateDeclaration = (at: At, what: 'start' | 'space', first: string) =>
  error(`duplicate-${what}`, at, `a second ${q(what)} declaration`, `the first one is at ${first}`);

export const duplicateType = (at: At, kind: string, name: string, firstKind: string, first: string) =>
  kind === firstKind
    ? error(`duplicate-${kindCode(kind)}`, at, `duplicate ${kind} ${q(name)}`, `the first ${kind} ${q(name)} is declared at ${first}`)
    : error(
        'duplicate-type-name',
        at,
        `${kind} ${q(name)} has the same name as the ${firstKind} declared at ${first}`,
        'sorts, token classes, name sets, kind families and blanks share one namespace; rename one of them',
      );

function kindCode(kind: string): string {
  return kind === 'token class' ? 'token' : kind === 'name set' ? 'name-set' : kind === 'kind family' ? 'kind-family' : kind;
}

export const duplicateConstructor = (at: At, name: string, sort: string, first: string) =>
  error(
    'duplicate-constructor',
    at,
    `duplicate constructor ${q(name)}`,
    `a constructor ${q(name)} is already declared at ${first} (in sort ${q(sort)}); constructor names are unique in the whole grammar`,
  );

export const duplicateField = (at: At, name: string, ctor: string) =>
  error('duplicate-field', at, `constructor ${q(ctor)} has two fields named ${q(name)}`);

export const undefinedStart = (at: At, name: string, suggestion: string | null) =>
  error('undefined-start', at, `start sort ${q(name)} is not declared`, didYouMean(suggestion, 'declare it with `sort ' + name + ' { ... }`'));

export const startNotSort = (at: At, name: string, kind: string) =>
  error('start-not-sort', at, `start ${q(name)} is a ${kind}, not a sort`, 'the start must name a sort');

export const undefinedType = (at: At, name: string, suggestion: string | null) =>
  error(
    'undefined-type',
    at,
    `unknown type ${q(name)}: not a sort, token class or name set`,
    didYouMean(suggestion, 'declare it, or use one of the declared types'),
  );

export const undefinedToken = (at: At, name: string, suggestion: string | null) =>
  error('undefined-token', at, `unknown token class ${q(name)}`, didYouMean(suggestion, 'declare it with `token ' + name + ' = /.../ as text`'));

export const namesOfNonToken = (at: At, name: string, kind: string) =>
  error('names-of-non-token', at, `${q(name)} is a ${kind}, not a token class`, 'a name set is spelled by a token class: `names SET of TOKEN`');

function didYouMean(suggestion: string | null, otherwise: string): string {
  return suggestion === null ? otherwise : `did you mean ${q(suggestion)}?`;
}

// ---- literals ---------------------------------------------------------------------------------

export const emptyLiteral = (at: At) =>
  error('empty-literal', at, 'literal text is empty', 'remove it, or write the text it stands for');

export const literalWithSpace = (at: At, text: string) =>
  error(
    'literal-with-space',
    at,
    `literal text ${JSON.stringify(text)} contains whitespace`,
    'write each word as its own literal: "GROUP" "BY"',
  );

export const literalNotWellFormed = (at: At) =>
  error('literal-not-well-formed', at, 'literal text contains a lone surrogate', 'write the whole character (both halves of the surrogate pair)');

export const spaceNotWhitespace = (at: At, ch: string) =>
  error('space-not-whitespace', at, `${q('space')} lists ${JSON.stringify(ch)}, which is not a whitespace character`, 'list only whitespace characters, e.g. `space " \\t\\r\\n"`');

// ---- layouts ----------------------------------------------------------------------------------

export const unknownLayoutField = (at: At, name: string, ctor: string, fields: readonly string[], suggestion: string | null) =>
  error(
    'unknown-layout-field',
    at,
    `layout of ${q(ctor)} names ${q(name)}, which is not one of its fields`,
    fields.length === 0
      ? `${q(ctor)} has no fields; write literal text in quotes`
      : didYouMean(suggestion, `its fields are ${fields.map(q).join(', ')}; write literal text in quotes`),
  );

export const fieldUsedTwice = (at: At, name: string, ctor: string) =>
  error('field-used-twice', at, `layout of ${q(ctor)} writes field ${q(name)} a second time`, 'each field appears in exactly one slot');

export const fieldMissingFromLayout = (at: At, name: string, ctor: string) =>
  error('field-missing-from-layout', at, `layout of ${q(ctor)} omits field ${q(name)}`, `add a slot ${q(name)} to the layout`);

export const groupSlotCount = (at: At, count: number) =>
  error(
    'group-slot-count',
    at,
    `an optional group must contain exactly one field slot, this one contains ${count}`,
    'write `[ "KEYWORD" field ]` with one optional or list field',
  );

export const groupFieldRequired = (at: At, name: string) =>
  error(
    'group-field-required',
    at,
    `field ${q(name)} in an optional group is neither optional nor a list`,
    `mark it optional (${q(name + ': T?')}) or a list (\`*\`), or move it out of the group`,
  );

export const nestedGroup = (at: At) =>
  error('nested-group', at, 'an optional group cannot contain another group', 'flatten the groups: each group holds one field');

export const sepOnNonList = (at: At, name: string) =>
  error('sep-on-non-list', at, `${q('sep')} on field ${q(name)}, which is not a list`, `declare it a list (${q(name + ': T*')} or \`+\`) or drop the separator`);

export const scopingOnNonToken = (at: At, marker: string, name: string, kind: string) =>
  error(
    'scoping-on-non-token',
    at,
    `${q(marker)} on field ${q(name)}, whose type is a ${kind}`,
    '`new` and `bound` mark token-typed fields only',
  );

export const boundWithoutNew = (at: At, name: string, token: string) =>
  error(
    'bound-without-new',
    at,
    `field ${q(name)} is ${q('bound ' + token)}, but no field anywhere is ${q('new ' + token)}`,
    `mark the field that introduces the variable as ${q('new ' + token)}`,
  );

// ---- scopes and kinds -------------------------------------------------------------------------

export const scopeMarkerOnNonNames = (at: At, marker: string, name: string, kind: string) =>
  error(
    'scope-marker-on-non-names',
    at,
    `${q(marker)} on field ${q(name)}, whose type is a ${kind}`,
    '`enter` and `known` mark fields whose type is a name set (`names X of T`)',
  );

export const undefinedFamily = (at: At, name: string, suggestion: string | null) =>
  error(
    'undefined-kind-family',
    at,
    `undefined kind family ${q(name)}`,
    suggestion ? `did you mean ${q(suggestion)}?` : `declare it: ${q('kinds ' + name)}`,
  );

export const notAFamily = (at: At, name: string, kind: string) =>
  error('not-a-kind-family', at, `${q(name)} is a ${kind}, not a kind family`, `declare a family (${q('kinds K')}) and name it here`);

export const familyAsFieldType = (at: At, name: string, field: string) =>
  error(
    'kind-family-as-field-type',
    at,
    `field ${q(field)} has type ${q(name)}, which is a kind family`,
    'kinds are not written in programs; give the field a sort, token class or name set',
  );

export const undefinedOwner = (at: At, name: string, suggestion: string | null) =>
  error('undefined-owner', at, `undefined name set ${q(name)} after ${q('in')}`, suggestion ? `did you mean ${q(suggestion)}?` : 'name a name set declared with `names`');

export const ownerNotNameSet = (at: At, name: string, kind: string) =>
  error('owner-not-name-set', at, `${q(name)} is a ${kind}; ${q('in')} needs a name set`, 'the members of a name set belong to members of another name set');

export const ownerIsSelf = (at: At, name: string) =>
  error('owner-is-self', at, `name set ${q(name)} cannot belong to itself`, 'name another name set after `in`');

export const ownerCycle = (at: At, name: string, chain: string) =>
  error('owner-cycle', at, `name set ${q(name)} belongs to itself through ${chain}`, 'the `in` chain of name sets must end');

export const emptySlots = (at: At, name: string) =>
  error('empty-kind-slots', at, `name set ${q(name)} declares no kind slots`, 'write at least one slot, e.g. `with (arg: Kind)`, or drop `with ()`');

export const duplicateSlot = (at: At, slot: string, set: string) =>
  error('duplicate-kind-slot', at, `duplicate kind slot ${q(slot)} of name set ${q(set)}`);

export const byWithoutKnown = (at: At, field: string) =>
  error('by-without-known', at, `${q('by')} on field ${q(field)}, which is not ${q('known')}`, 'write `field: known Set by owner`');

export const byWithoutOwner = (at: At, field: string, set: string) =>
  error(
    'by-without-owner',
    at,
    `${q('by')} on field ${q(field)}, but name set ${q(set)} belongs to no other set`,
    `declare the relation: ${q(`names ${set} of T in Owner`)}`,
  );

export const unknownByField = (at: At, name: string, ctor: string, suggestion: string | null) =>
  error('unknown-by-field', at, `${q(ctor)} has no field ${q(name)}`, suggestion ? `did you mean ${q(suggestion)}?` : undefined);

export const byFieldType = (at: At, name: string, owner: string) =>
  error('by-field-type', at, `field ${q(name)} after ${q('by')} must be one (or an optional) ${q(owner)}`, `declare it ${q(name + ': known ' + owner + '?')}`);

export const fieldWithoutKind = (at: At, field: string, why: string) =>
  error('field-without-kind', at, `field ${q(field)} has no kind: ${why}`);

export const selfWithoutKind = (at: At, sort: string) =>
  error('self-without-kind', at, `${q('self')} has no kind: sort ${q(sort)} is not declared with ${q('kind')}`, `write ${q(`sort ${sort} kind Family { ... }`)}`);

export const familyMismatch = (at: At, field: string, family: string, other: string, otherFamily: string) =>
  error('kind-family-mismatch', at, `field ${q(field)} has a kind of family ${q(family)}, but ${other} has one of family ${q(otherFamily)}`, 'only kinds of one family can be equal');

export const unknownKindField = (at: At, name: string, ctor: string, suggestion: string | null) =>
  error('unknown-kind-field', at, `${q(ctor)} has no field ${q(name)} (and ${q(name)} is not ${q('self')})`, suggestion ? `did you mean ${q(suggestion)}?` : undefined);

export const kindOfItself = (at: At, field: string) =>
  error('kind-of-itself', at, `field ${q(field)} is given its own kind`, 'name another field or `self`');

export const unknownSlot = (at: At, slot: string, field: string, set: string, slots: readonly string[]) =>
  error(
    'unknown-kind-slot',
    at,
    `field ${q(field)} (${set}) has no kind slot ${q(slot)}`,
    slots.length > 0 ? `its slots: ${slots.join(', ')}` : `name set ${q(set)} declares no slots (\`with (slot: Family)\`)`,
  );

export const neverIntroduced = (at: At, field: string, set: string) =>
  error(
    'never-introduced',
    at,
    `field ${q(field)} must be ${q('known')}, but no field of the grammar is ${q('enter ' + set)}`,
    `mark the field that brings ${set} names into a scope as ${q('enter ' + set)}`,
  );

// ---- operators --------------------------------------------------------------------------------

export const operatorShape = (at: At, ctor: string, fixity: string, sort: string) =>
  error(
    'operator-shape',
    at,
    `layout of ${q(ctor)} does not fit ${q(fixity)}: ${OPERATOR_SHAPES[fixity] ?? ''}`.replace('SORT', q(sort)),
    fixity === 'infix'
      ? 'e.g. `left "+" right @ infix left 10` with both fields of this sort'
      : fixity === 'prefix'
        ? 'e.g. `"-" operand @ prefix 30` with the field of this sort'
        : 'e.g. `operand "!" @ postfix 40` with the field of this sort',
  );

const OPERATOR_SHAPES: Record<string, string> = {
  infix: 'an infix layout begins and ends with a required field of sort SORT and has literal text between them',
  prefix: 'a prefix layout begins with literal text and ends with a required field of sort SORT',
  postfix: 'a postfix layout begins with a required field of sort SORT and ends with literal text',
};

export const operatorWithoutParens = (at: At, sort: string) =>
  error(
    'operator-without-parens',
    at,
    `sort ${q(sort)} has operators but no ${q('parens')}`,
    `declare the brackets: ${q('sort ' + sort + ' parens "(" ")" { ... }')}`,
  );

export const associativityConflict = (at: At, ctor: string, other: string, precedence: number) =>
  error(
    'associativity-conflict',
    at,
    `infix operators ${q(other)} and ${q(ctor)} share precedence ${precedence} but not associativity`,
    'give operators of one precedence the same associativity, or different precedences',
  );

// ---- whole-grammar analyses ---------------------------------------------------------------------

export const unproductiveSort = (at: At, sort: string) =>
  error(
    'unproductive-sort',
    at,
    `sort ${q(sort)} has no finite tree: every constructor needs a term of a sort that has none`,
    'add a constructor whose required fields do not lead back to this sort, or make one of those fields optional or a `*` list',
  );

export const unreachableSort = (at: At, sort: string, start: string) =>
  warning('unreachable-sort', at, `sort ${q(sort)} cannot occur in a tree of the start sort ${q(start)}`, 'use it in a field, or remove it');

export const unboundedIntDigits = (at: At, token: string) =>
  warning('unbounded-digits', at, `values of ${token} beyond 2^53 cannot be represented; bound the digits (e.g. [0-9]{1,15})`);

export const unboundedNumberDigits = (at: At, token: string) =>
  warning(
    'unbounded-digits',
    at,
    `values of ${token} with more than 15 digits, or more than 6 after the point, do not print back as written; bound the digits (e.g. [0-9]{1,9}(?:\\.[0-9]{1,6})?)`,
  );

export const identicalLayouts = (at: At, ctor: string, other: string, sort: string) =>
  error(
    'identical-layouts',
    at,
    `constructors ${q(other)} and ${q(ctor)} of sort ${q(sort)} have the same layout, so different trees print the same text`,
    'add literal text that tells them apart',
  );

export const separatorAtElementEdge = (at: At, sep: string, field: string, edge: 'begin' | 'end', element: string) =>
  error(
    'separator-at-element-edge',
    at,
    `separator ${JSON.stringify(sep)} of list ${q(field)} can also ${edge} an element (${q(element)})`,
    'choose a separator that no element can begin or end with',
  );

export const nullableListElement = (at: At, field: string, element: string) =>
  error(
    'nullable-list-element',
    at,
    `list ${q(field)} has elements of ${q(element)}, which can print as nothing`,
    'give every constructor of the element sort some text, or make the list a single optional field',
  );

export const adjacentListElements = (at: At, field: string, reason: string) =>
  error(
    'adjacent-list-elements',
    at,
    `list ${q(field)} has no separator and its elements can run together: ${reason}`,
    `add a separator: ${q(field + ' sep ","')}`,
  );

export const leftRecursion = (at: At, ctor: string, field: string, sort: string, direct: boolean, own: string) =>
  error(
    'left-recursion',
    at,
    direct
      ? `constructor ${q(ctor)} is left-recursive: its layout begins with field ${q(field)} of its own sort ${q(own)}`
      : `constructor ${q(ctor)} is left-recursive: its layout begins with field ${q(field)} of sort ${q(sort)}, which can begin with a ${q(own)} again`,
    'declare it `@ infix left P` (or `@ postfix P`), or begin its layout with literal text',
  );

// ---- blanks and class exclusions ----------------------------------------------------------------

export const blankEmpty = (at: At, name: string) =>
  error('blank-empty', at, `blank ${q(name)} lists no character`, 'list the characters a blank is made of, e.g. `blank Ws = " \\t"`');

export const blankNotWhitespace = (at: At, name: string, ch: string) =>
  error('blank-not-whitespace', at, `blank ${q(name)} lists ${JSON.stringify(ch)}, which is not a whitespace character`, 'list only whitespace characters, e.g. `blank Ws = " \\t"`');

export const blankInSpace = (at: At, name: string, ch: string) =>
  error(
    'blank-in-space',
    at,
    `blank ${q(name)} lists ${JSON.stringify(ch)}, which ${q('space')} already skips between any two tokens`,
    'a blank is read only where a layout places it: take its characters out of `space` (e.g. `space ""`), or drop the blank',
  );

export const blankAsFieldType = (at: At, name: string, field: string) =>
  error('blank-as-field-type', at, `field ${q(field)} has type ${q(name)}, which is a blank`, 'a blank is not a value: place it in the layout (`l Ws r`) instead of declaring a field');

export const optionalMarkOnField = (at: At, name: string) =>
  error(
    'optional-mark-on-field',
    at,
    `${q(name + '?')} in a layout: ${q(name)} is a field, and only a blank takes ${q('?')} here`,
    `make the field optional in its declaration (${q(name + ': T?')})`,
  );

export const blankAndField = (at: At, name: string, ctor: string) =>
  error('blank-and-field', at, `layout of ${q(ctor)} names ${q(name)}, which is both one of its fields and a blank`, 'rename the field or the blank');

export const glueOnRequiredBlank = (at: At, name: string) =>
  error('glue-on-required-blank', at, `${q('~')} before the required blank ${q(name)}`, `a required blank is always printed; write ${q('~' + name + '?')} for an optional blank the printer leaves out`);

export const blankAtLayoutEdge = (at: At, name: string, ctor: string, edge: 'start' | 'end') =>
  error(
    'blank-at-layout-edge',
    at,
    `blank ${q(name)} can stand at the ${edge} of the layout of ${q(ctor)}`,
    'place blanks between two items of one layout (the enclosing layout decides what stands around a node)',
  );

export const blanksMeet = (at: At, name: string, other: string) =>
  error(
    'blanks-meet',
    at,
    `blank ${q(name)} can directly follow blank ${q(other)} (only empty items between them), and one of them is required`,
    'two blanks that meet read as one run: write a single blank there',
  );

export const badSeparator = (at: At, detail: string) =>
  error('bad-separator', at, `separator ${detail}`, 'write `sep ","`, `sep ~","`, or with blanks `sep (Ws? "," Ws?)`: one text, at most one blank on each side');

export const unknownBlank = (at: At, name: string, suggestion: string | null) =>
  error('unknown-blank', at, `${q(name)} in a separator is not a blank`, suggestion ? `did you mean ${q(suggestion)}?` : 'declare it: `blank Ws = " "`');

export const exceptWord = (at: At, token: string, word: string, why: string) =>
  error('except-word', at, `${q('except')} of token class ${q(token)} lists ${JSON.stringify(word)}, ${why}`, 'list words the class would otherwise accept');

export const exceptTooLarge = (at: At, token: string) =>
  error('regex-too-large', at, `token class ${q(token)} is too large for the automaton: removing its excepted words exceeds the automaton limit`, 'list fewer words');

export const fillerNotClosed = (at: At, example: string, longer: string) =>
  error(
    'filler-not-closed',
    at,
    `filler matches ${JSON.stringify(example)} and also the longer ${JSON.stringify(longer)}: where it ends is not decided by its own text`,
    'end every match with a delimiter, e.g. `filler /#[^\\n]*\\n/` (a comment up to and including the line break)',
  );

export const fillerClash = (at: At, ch: string, what: string) =>
  error(
    'filler-clash',
    at,
    `filler can begin with ${JSON.stringify(ch)}, and so can ${what}`,
    'a filler must begin with a character nothing else of the grammar begins with (the parser skips filler before every token)',
  );

export const exceptEverything = (at: At, token: string) =>
  error('except-everything', at, `token class ${q(token)} has no lexeme once its ${q('except')} words are removed`, 'drop some of the words, or widen the pattern');
