/**
 * The description compiler: a `.twg` file → the grammar IR (ir.ts) plus diagnostics.
 *
 * Produces: `compileDescription(text, file)` → `{ grammar, diagnostics }` (grammar is null when
 * there is any error; warnings may accompany a grammar), and `loadGrammar(path)`, which reads a file
 * and throws DescriptionError (message = formatted diagnostics) on errors.
 *
 * Example:
 *   const g = loadGrammar('grammars/arith/arith.twg');
 *   g.sorts.map((s) => s.name)          // ['Expr']
 *   g.constructors[0].layout            // [slot left, text "+", slot right]
 *
 * Pipeline: notation.ts (ohm-js grammar of the notation → syntax tree with offsets) → compile.ts
 * (names, types, literals, regexes, layouts, operator shapes → IR) → analysis.ts (whole-grammar
 * checks on the IR: productivity, reachability, ambiguous layouts and separators, left recursion).
 *
 * Cost: linear in the file for parsing (ohm memoises, so worst case O(n · rules) memory); the
 * analyses are fixpoints over sorts and constructors, O(S · L) per round and at most S rounds
 * (S sorts, L total layout items); the shipped grammars compile in a few milliseconds.
 *
 * Limits: one file per grammar (no imports); the ambiguity checks are sound approximations that
 * can reject some unambiguous layouts (see analysis.ts); a description that fails to parse
 * reports only the first syntax error (ohm stops at the rightmost failure).
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import type { Grammar } from './ir.ts';
import { analyseGrammar } from './analysis.ts';
import { buildGrammar } from './compile.ts';
import * as E from './errors.ts';
import { DescriptionError, formatDiagnostics, sortDiagnostics, type Diagnostic } from './errors.ts';
import { parseNotation } from './notation.ts';

export { DescriptionError, formatDiagnostic, formatDiagnostics, type Diagnostic } from './errors.ts';

/** What ohm stopped at, in words: the word or character at `offset`, or the end of the file. */
function foundAt(text: string, offset: number): { found: string; end: number } {
  if (offset >= text.length) return { found: 'the end of the file', end: offset };
  const ch = text[offset]!;
  if (ch === '\n' || ch === '\r') return { found: 'the end of the line', end: offset + 1 };
  const word = /^[A-Za-z0-9_]+/.exec(text.slice(offset, offset + 64));
  if (word) return { found: '`' + word[0] + '`', end: offset + word[0].length };
  return { found: '`' + ch + '`', end: offset + 1 };
}

/** Compiles description text. Never throws on any input text; every problem becomes a located diagnostic. */
export function compileDescription(text: string, file: string): { grammar: Grammar | null; diagnostics: Diagnostic[] } {
  const parsed = parseNotation(text);
  if (!parsed.ok) {
    const { found, end } = foundAt(text, parsed.offset);
    return {
      grammar: null,
      diagnostics: [E.syntaxError({ file, span: { start: parsed.offset, end } }, parsed.expected, found)],
    };
  }
  const hash = createHash('sha256').update(text, 'utf8').digest('hex');
  const built = buildGrammar(parsed.ast, text, file, hash);
  if (!built.grammar) return { grammar: null, diagnostics: sortDiagnostics(built.diagnostics) };
  const more = analyseGrammar(built.grammar, text);
  const diagnostics = sortDiagnostics([...built.diagnostics, ...more]);
  const failed = diagnostics.some((d) => d.severity === 'error');
  return { grammar: failed ? null : built.grammar, diagnostics };
}

/** Reads and compiles a description file; throws DescriptionError (formatted diagnostics) on any error. */
export function loadGrammar(path: string): Grammar {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const d = E.unreadableFile({ file: path, span: { start: 0, end: 0 } }, (e as Error).message);
    throw new DescriptionError(`${path}: error: ${d.message}`, [d]);
  }
  const { grammar, diagnostics } = compileDescription(text, path);
  if (!grammar) throw new DescriptionError(formatDiagnostics(diagnostics, text), diagnostics);
  return grammar;
}
