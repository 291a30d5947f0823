/**
 * The error catalogue of from-schema: one named factory per condition, every message worded here.
 * Each diagnostic names the JSON path of the schema location (a JSON Pointer fragment, `#/…`) at
 * the start of its message and keeps the offset of that location in the schema file when there is
 * one; `formatSchemaDiagnostic` adds `file:line:col`, a numbered excerpt with `^~~~` and the hint.
 */
import type { Span } from '../description/ir.ts';
import { excerpt, lineColumn } from '../util/source.ts';

export interface SchemaDiagnostic {
  readonly severity: 'error' | 'note';
  /** stable identifier of the condition (kebab-case) */
  readonly code: string;
  /** JSON Pointer fragment of the schema location, `#/properties/speed` */
  readonly path: string;
  readonly message: string;
  readonly span: Span | null;
  readonly hint?: string;
}

/** `file:line:col: error: message`, the excerpt and `hint: …` (without a span: `file: error: message`). */
export function formatSchemaDiagnostic(d: SchemaDiagnostic, file: string, text: string | null): string {
  let out: string;
  if (d.span !== null && text !== null) {
    const { line, column } = lineColumn(text, d.span.start);
    out = `${file}:${line}:${column}: ${d.severity}: ${d.message}\n${excerpt(text, d.span)}`;
  } else out = `${file}: ${d.severity}: ${d.message}`;
  if (d.hint !== undefined) out += `\nhint: ${d.hint}`;
  return out;
}

/** All diagnostics formatted, errors first, each group in schema order, separated by blank lines. */
export function formatSchemaDiagnostics(ds: readonly SchemaDiagnostic[], file: string, text: string | null): string {
  const rank = (d: SchemaDiagnostic) => (d.severity === 'error' ? 0 : 1);
  return [...ds]
    .sort((a, b) => rank(a) - rank(b) || (a.span?.start ?? 0) - (b.span?.start ?? 0))
    .map((d) => formatSchemaDiagnostic(d, file, text))
    .join('\n\n');
}

/** Thrown by `fromSchema` when the schema has errors; `message` is the formatted diagnostics. */
export class SchemaError extends Error {
  readonly diagnostics: readonly SchemaDiagnostic[];
  constructor(message: string, diagnostics: readonly SchemaDiagnostic[]) {
    super(message);
    this.name = 'SchemaError';
    this.diagnostics = diagnostics;
  }
}

function error(code: string, path: string, span: Span | null, message: string, hint?: string): SchemaDiagnostic {
  return hint === undefined ? { severity: 'error', code, path, message, span } : { severity: 'error', code, path, message, span, hint };
}

function note(code: string, path: string, span: Span | null, message: string, hint?: string): SchemaDiagnostic {
  return hint === undefined ? { severity: 'note', code, path, message, span } : { severity: 'note', code, path, message, span, hint };
}

export const malformedJson = (span: Span, detail: string) => error('malformed-json', '#', span, detail);

export const notJsonValue = () => error('not-json', '#', null, 'the schema is not JSON data (a value JSON.stringify cannot write exactly)');

export const notASchema = (path: string, span: Span | null) =>
  error('not-a-schema', path, span, `${path} is not a schema; expected an object or a boolean`);

export const unsupportedKeyword = (path: string, span: Span | null, suggestion: string | null) =>
  error(
    'unsupported-keyword',
    path,
    span,
    `${path} is not supported`,
    suggestion !== null
      ? `did you mean "${suggestion}"?`
      : 'supported: type, enum, const, properties, required, additionalProperties (false), items, prefixItems, minItems, maxItems, anyOf, oneOf, $ref, $defs, minLength, maxLength, pattern, format (date, date-time, email), minimum, maximum, exclusiveMinimum, exclusiveMaximum, and the annotations title, description, $comment, examples, default, deprecated, readOnly, writeOnly',
  );

export const badPattern = (path: string, span: Span | null, syntax: boolean, detail: string, offset: number) =>
  error(
    syntax ? 'bad-pattern' : 'unsupported-pattern',
    path,
    span,
    `${path}: ${syntax ? 'not an ECMAScript regular expression' : 'not supported'}: ${detail} (at character ${offset + 1} of the pattern)`,
    syntax
      ? 'JSON Schema patterns are ECMAScript regular expressions, read with the u flag'
      : 'patterns may use alternation, groups, quantifiers, classes, escapes, ., \\d \\w \\s, and ^ / $ at the ends of the pattern or of its top-level alternatives',
  );

export const patternTooLarge = (path: string, span: Span | null, detail: string) =>
  error(
    'pattern-too-large',
    path,
    span,
    `${path} is too large to write as one token class: ${detail}`,
    'anchor the pattern (^…$), or narrow minLength/maxLength: an unanchored pattern under a length bound is written out once per position it may start at',
  );

export const patternWithFormat = (path: string, span: Span | null) =>
  error(
    'pattern-with-format',
    path,
    span,
    `${path}: pattern together with format cannot be expressed`,
    'a token class is one regular expression and the notation cannot intersect two; drop the format or fold it into the pattern',
  );

export const badKeywordValue = (path: string, span: Span | null, expected: string) =>
  error('bad-keyword-value', path, span, `${path} must be ${expected}`);

export const wrongDialect = (path: string, span: Span | null, uri: string) =>
  error('wrong-dialect', path, span, `${path} is ${JSON.stringify(uri)}; only draft 2020-12 is supported`, 'use "$schema": "https://json-schema.org/draft/2020-12/schema" (or leave it out)');

export const embeddedResource = (path: string, span: Span | null) =>
  error('embedded-resource', path, span, `${path} is not supported: $id is allowed only at the root (embedded schema resources change how $ref resolves)`);

export const externalRef = (path: string, span: Span | null, ref: string) =>
  error('external-ref', path, span, `${path} ${JSON.stringify(ref)} is not supported: only references inside this document ("#" or "#/…") are`);

export const unresolvedRef = (path: string, span: Span | null, ref: string) =>
  error('unresolved-ref', path, span, `${path} ${JSON.stringify(ref)} points to nothing in this document`);

export const refCycle = (path: string, span: Span | null, cycle: string) =>
  error('ref-cycle', path, span, `${path} refers to itself without any structure in between (${cycle}); no value can match it`);

export const refWithSiblings = (path: string, span: Span | null, keywords: readonly string[]) =>
  error(
    'ref-with-siblings',
    path,
    span,
    `${path} together with ${keywords.join(', ')} is not supported`,
    'move those keywords into the referenced schema',
  );

export const combinatorWithSiblings = (path: string, span: Span | null, combinator: string, keywords: readonly string[]) =>
  error(
    'combinator-with-siblings',
    path,
    span,
    `${path} together with ${keywords.join(', ')} is not supported (only "type" may stand beside ${combinator})`,
    `move those keywords into each branch of ${combinator}`,
  );

export const bothCombinators = (path: string, span: Span | null) =>
  error('both-combinators', path, span, `${path}: anyOf together with oneOf is not supported`);

export const additionalPropertiesNotFalse = (path: string, span: Span | null) =>
  error(
    'additional-properties',
    path,
    span,
    `${path} is supported only as false`,
    'list every property under "properties" and set "additionalProperties": false (the description can only write declared keys)',
  );

export const unknownFormat = (path: string, span: Span | null, format: string) =>
  error('unsupported-format', path, span, `${path} ${JSON.stringify(format)} is not supported; supported formats: date, date-time, email`);

export const formatWithLength = (path: string, span: Span | null, format: string) =>
  error(
    'format-with-length',
    path,
    span,
    `${path}: minLength/maxLength together with format ${JSON.stringify(format)} cannot be expressed exactly`,
    'a token class is one regular expression and the notation cannot intersect two; drop the length bounds or the format',
  );

export const requiredNotDeclared = (path: string, span: Span | null, key: string) =>
  error(
    'required-not-declared',
    path,
    span,
    `${path}: ${JSON.stringify(key)} is required but not among the properties, so no object can be written`,
    `declare ${JSON.stringify(key)} under "properties"`,
  );

export const oneOfOverlap = (path: string, span: Span | null, i: number, j: number) =>
  error(
    'oneof-overlap',
    path,
    span,
    `${path}: branches ${i} and ${j} cannot be proven disjoint, so a document might match both (and oneOf would refuse it)`,
    'give each branch a required property with a different "const" (or different types), or use anyOf if a document may match several branches',
  );

export const acceptsNothing = (path: string, span: Span | null) =>
  error('accepts-nothing', path, span, `${path} accepts no JSON text`, 'check minimum/maximum, minItems/maxItems, minLength/maxLength, enum and required');

export const tooLarge = (path: string, span: Span | null, what: string, limit: number) =>
  error('too-large', path, span, `${path} is too large: ${what} (at most ${limit})`);

export const unproductive = (path: string, detail: string) =>
  error('no-finite-document', path, null, `${path}: ${detail}`);

export const internalError = (detail: string) =>
  error('internal', '#', null, `internal error: the generated description does not compile (${detail}); please report this schema`);

// ---- notes: documented policies that narrow what the schema accepts

export const closedByPolicy = (path: string, span: Span | null) =>
  note(
    'closed-object',
    path,
    span,
    `${path} has no "additionalProperties"; the description writes only the declared properties`,
    'add "additionalProperties": false to say so (and silence this note)',
  );

export const typeInferred = (path: string, span: Span | null, types: readonly string[], from: readonly string[]) =>
  note(
    'type-inferred',
    path,
    span,
    `${path} has no "type"; the description writes only ${types.join(' or ')} values (from ${from.join(', ')})`,
    `add "type": ${types.length === 1 ? JSON.stringify(types[0]) : JSON.stringify(types)} to say so`,
  );

export const enumValueUnchecked = (path: string, span: Span | null, value: string) =>
  note('enum-value-dropped', path, span, `${path}: ${value} is left out: whether the other keywords accept it could not be decided`);

export const keyEscaped = (path: string, span: Span | null, key: string, spelled: string) =>
  note('key-escaped', path, span, `${path}: the key ${JSON.stringify(key)} contains white space; the description spells it ${spelled}`);
