/**
 * The regex front-end: each token regex is parsed once (syntax.ts) into the regex IR, case-closed
 * (casefold.ts) and compiled into one byte-level UTF-8 DFA (automaton.ts, utf8.ts). The grammar IR
 * carries both on every TokenClass (`regex`), and every later consumer reads them: the description
 * analysis, the program parser's lexer (longest match on the DFA, never a JavaScript RegExp), the
 * sampler and JSON Schema export (the IR), the pushdown automaton and the mask tables (the DFA).
 *
 * Example: `token Word = /[a-zà-ÿ]+/i as text` → IR `rep(set{A-Z a-z À-Ö Ø-Þ à-ö ø-ÿ Ÿ …}, 1, ∞)`
 * → a 2-state byte DFA plus the intermediate states of two-byte characters.
 *
 * Contract: a lexeme L is in the class exactly when `new RegExp('^(?:' + pattern + ')$', flags)`
 * accepts L in ECMAScript (V8 is the reference the test suite compares against); whatever the
 * front-end cannot honour exactly is refused with a located problem instead.
 * Limits: MAX_STATES character states, MAX_NFA_STATES expanded positions, MAX_BYTE_STATES byte
 * states, MAX_WORK determinisation steps — all counted before the tables are allocated.
 */
import { buildByteDfa, RegexTooLargeError, type ByteDfa } from './automaton.ts';
import { parseTokenRegex, type ParsedRegex, type RegexProblem } from './syntax.ts';

export type { ByteDfa } from './automaton.ts';
export { buildByteDfa, withoutWords, literalDfa, longestMatch, runDfa, withDistances, MAX_STATES, MAX_NFA_STATES, MAX_BYTE_STATES, RegexTooLargeError } from './automaton.ts';
export { parseTokenRegex, nullable, inhabited, firstChars, lastChars, type Rx, type ParsedRegex, type RegexProblem } from './syntax.ts';
export * from './charset.ts';

/** A token class's compiled regex: the IR and the byte DFA of its lexemes. Plain data. */
export interface TokenRegex extends ParsedRegex {
  /** the lexemes' DFA (for a `reserved` class, after removing the grammar's keywords) */
  readonly dfa: ByteDfa;
  /** the grammar's keywords that the pattern matches (removed from `dfa` when the class is `reserved`) */
  readonly keywords: readonly string[];
}

/** A problem of the whole regex (size) rather than of one place in it. */
export interface RegexSizeProblem {
  readonly code: 'regex-too-large';
  readonly message: string;
}

/** Parses and compiles `pattern`; `exclude` are byte strings removed from the language. */
export function compileTokenRegex(pattern: string, flags: string, exclude: readonly Uint8Array[] = []): TokenRegex | RegexProblem | RegexSizeProblem {
  const parsed = parseTokenRegex(pattern, flags);
  if ('code' in parsed) return parsed;
  try {
    return { ...parsed, dfa: buildByteDfa(parsed, exclude), keywords: [] };
  } catch (err) {
    if (err instanceof RegexTooLargeError) return { code: 'regex-too-large', message: err.message };
    throw err;
  }
}
