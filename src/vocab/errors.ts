/**
 * The vocabulary stage's error catalogue: every failure to read a tokenizer file is a
 * `VocabularyError` naming the file, where in it (a JSON path such as `$.model.vocab["<0x0A>"]`,
 * or line:column for JSON syntax errors) and what was expected.
 */
import { show } from '../util/json.ts';

export class VocabularyError extends Error {
  override readonly name = 'VocabularyError';
  constructor(
    /** The file the problem is in (or `<inline>` when JSON was passed directly). */
    readonly file: string,
    /** JSON path (`$.model.type`) or `line:col` for syntax errors. */
    readonly where: string,
    /** What is wrong and what was expected. */
    readonly detail: string,
  ) {
    super(`${file}: ${where}: ${detail}`);
  }
}


/** What a JSON value is, for "found X" messages: `an array`, `the string "3"`, `number 7`. */
export function typeName(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  if (typeof value === 'object') return 'an object';
  if (typeof value === 'string') return `the string ${show(value)}`;
  if (value === undefined) return 'nothing';
  return `${typeof value} ${show(value)}`;
}
