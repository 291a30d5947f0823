/**
 * JSON in messages, the same way in every stage: how a path into a JSON value is written
 * (`$.model.vocab["a b"][3]`), how a value found there is shown, and where a malformed JSON text
 * first goes wrong (line, column and what was expected — found by jsonc-parser in strict mode).
 */
import { createScanner, parseTree, printParseErrorCode, ScanError, SyntaxKind, type ParseError } from 'jsonc-parser';
import { lineColumn } from './source.ts';

/**
 * Appends a member to a JSON path: an index as `[3]`, a key that is an ASCII identifier as `.key`
 * (the member-name shorthand of RFC 9535 §2.5.1.1, ASCII subset), any other key quoted: `["a b"]`.
 */
export function pathKey(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  return /^[A-Za-z_][A-Za-z0-9_]*$/.test(key) ? `${path}.${key}` : `${path}[${JSON.stringify(key)}]`;
}

/** A JSON Pointer (RFC 6901: `/tree/left`, `/names/Table/0`) as a path: `$.tree.left`, `$.names.Table[0]`. */
export function pointerToPath(pointer: string): string {
  let out = '$';
  for (const raw of pointer.split('/').slice(1)) {
    const key = raw.replace(/~1/g, '/').replace(/~0/g, '~');
    out = pathKey(out, /^(0|[1-9][0-9]*)$/.test(key) ? Number(key) : key);
  }
  return out;
}

/**
 * A short rendering of a value found in JSON, for "found X; expected Y" messages: `nothing` for a
 * missing value, `an array`, `node "add"` for a JSON tree node (an object with a string `kind`),
 * `-0`; a string of more than 40 characters as its start and its length; anything else as JSON,
 * clipped to 60 characters.
 */
export function show(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (Array.isArray(value)) return 'an array';
  if (value !== null && typeof value === 'object' && typeof (value as { kind?: unknown }).kind === 'string') {
    return `node ${JSON.stringify((value as { kind: string }).kind)}`;
  }
  if (typeof value === 'number' && Object.is(value, -0)) return '-0';
  if (typeof value === 'string' && value.length > 40) return `${JSON.stringify(value.slice(0, 40))}… (${value.length} characters)`;
  let s: string;
  try {
    s = JSON.stringify(value) ?? String(value);
  } catch {
    s = String(value);
  }
  return s.length > 60 ? `${s.slice(0, 59)}…` : s;
}

/** Where a malformed JSON text first goes wrong. */
export interface JsonErrorLocation {
  /** UTF-16 offset of the problem */
  readonly offset: number;
  readonly line: number;
  readonly column: number;
  /** what was found and expected there: `expected ',' or '}'`, ``found `lambda`; expected a JSON value`` */
  readonly message: string;
}

/** Nesting the locator follows (jsonc-parser's parser is recursive); deeper malformed text is reported at this depth. */
export const MAX_LOCATED_DEPTH = 1000;

const EXPECTED: Record<string, string> = {
  PropertyNameExpected: 'expected a string key',
  ValueExpected: 'expected a JSON value',
  ColonExpected: "expected ':'",
  CommaExpected: "expected ','",
  CloseBraceExpected: "expected ',' or '}'",
  CloseBracketExpected: "expected ',' or ']'",
  EndOfFileExpected: 'expected the end of the text',
  InvalidCommentToken: 'found a comment; expected JSON, which has no comments',
  UnexpectedEndOfComment: 'found a comment; expected JSON, which has no comments',
  UnexpectedEndOfString: 'expected a closing \'"\' on the same line (a string holds no raw line break)',
  UnexpectedEndOfNumber: 'expected the digits of a number',
  InvalidUnicode: 'expected four hex digits after \\u',
  InvalidEscapeCharacter: 'expected a valid escape (\\" \\\\ \\/ \\b \\f \\n \\r \\t \\uXXXX)',
  InvalidCharacter: 'expected a control character to be escaped',
};

/** The first token deeper than MAX_LOCATED_DEPTH, found with jsonc-parser's (iterative) scanner; -1 when none. */
function tooDeep(text: string): number {
  const scanner = createScanner(text, true);
  let depth = 0;
  for (let kind = scanner.scan(); kind !== SyntaxKind.EOF; kind = scanner.scan()) {
    if (kind === SyntaxKind.OpenBraceToken || kind === SyntaxKind.OpenBracketToken) {
      if (++depth > MAX_LOCATED_DEPTH) return scanner.getTokenOffset();
    } else if (kind === SyntaxKind.CloseBraceToken || kind === SyntaxKind.CloseBracketToken) depth--;
    if (scanner.getTokenError() !== ScanError.None) return -1;
  }
  return -1;
}

/**
 * Locates the first problem of a JSON text that JSON.parse refused (RFC 8259: no comments, no
 * trailing commas). Returns null when jsonc-parser finds none (it then agrees with JSON.parse).
 */
export function locateJsonError(text: string): JsonErrorLocation | null {
  const deep = tooDeep(text);
  if (deep >= 0) {
    return { offset: deep, ...lineColumn(text, deep), message: `expected JSON nested at most ${MAX_LOCATED_DEPTH} deep (this text is malformed somewhere inside)` };
  }
  const errors: ParseError[] = [];
  const root = parseTree(text, errors, { disallowComments: true, allowTrailingComma: false, allowEmptyContent: false });
  const first = errors[0];
  if (first === undefined) return null;
  const code = printParseErrorCode(first.error);
  let message = EXPECTED[code];
  if (message === undefined) {
    // InvalidSymbol, InvalidNumberFormat: name what is there
    const found = text.slice(first.offset, first.offset + Math.max(1, Math.min(first.length, 24)));
    const after = root !== undefined && first.offset >= root.offset + root.length;
    message = `found \`${found}\`; expected ${code === 'InvalidNumberFormat' ? 'a JSON number' : after ? 'the end of the text' : 'a JSON value'}`;
  }
  // An unterminated string is located where its closing quote was due (the line break or the end
  // of the text), as V8's JSON.parse reports it, not at its opening quote.
  const offset = code === 'UnexpectedEndOfString' ? first.offset + first.length : first.offset;
  return { offset, ...lineColumn(text, offset), message };
}
