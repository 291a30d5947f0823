/**
 * The parser's errors: ParseError (a located problem in a program) and GrammarFeatureError.
 */
import type { Span } from '../description/ir.ts';
import { excerpt, lineColumn } from '../util/source.ts';

/** A located parse problem; `message` is `file:line:col: ...` and an excerpt with `^~~~`. */
export class ParseError extends Error {
  readonly file: string;
  readonly line: number;
  readonly column: number;
  readonly offset: number;
  /** for syntax errors: the expected items in grammar terms */
  readonly expected: readonly string[];
  constructor(file: string, text: string, span: Span, message: string, expected: readonly string[] = []) {
    const { line, column } = lineColumn(text, span.start);
    super(`${file}:${line}:${column}: ${message}\n${excerpt(text, span)}`);
    this.name = 'ParseError';
    this.file = file;
    this.line = line;
    this.column = column;
    this.offset = span.start;
    this.expected = expected;
  }
}

/**
 * A grammar the parser cannot be built for; `message` is located in the description. Token regexes
 * no longer cause it (the description stage refuses what its automaton cannot honour), so it is
 * kept for callers that catch it.
 */
export class GrammarFeatureError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'GrammarFeatureError';
  }
}
