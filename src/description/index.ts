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
 * Cost: parsing dominates. ohm-js matching is linear in the file with memo tables (memory
 * O(n · rules)); measured on the shared 2-core machine under load (load average 12–16), a compile
 * of arith.twg (0.8 KB) takes about 10–15 ms and of sql.twg (2.7 KB) about 40–45 ms, and a synthetic
 * 137 KB description with 2000 sorts about 8.6 s. The analyses are fixpoints over sorts
 * (productivity, nullability: O(S · L) worst case for S sorts and L layout items) and one pass over
 * strongly connected components (first/last literal sets, left recursion: O(S + L) set unions).
 *
 * Limits: one file per grammar (no imports); ohm reports only the first (rightmost) syntax error, so
 * a file with a syntax error gets no semantic checks; semantic checks that need the whole grammar
 * run only when every name resolves. The ambiguity checks are sound approximations for the cases
 * they cover (identical layouts, separators at element edges, adjacent list elements) and can
 * reject some unambiguous layouts; other ambiguities (e.g. two constructors whose different
 * layouts can print the same text through nested sorts) are not detected here. Optional groups
 * may not nest. A `space` declaration is required.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { rememberSource } from './sources.ts';
import type { Grammar } from './ir.ts';
import { analyseGrammar } from './analysis.ts';
import { buildGrammar } from './compile.ts';
import * as E from './errors.ts';
import { DescriptionError, formatDiagnostics, sortDiagnostics, type Diagnostic } from './errors.ts';
import { parseNotation } from './notation.ts';
import { notationSyntaxError } from './notation-errors.ts';
import { nestingProblem } from '../util/ohm-depth.ts';

export { DescriptionError, formatDiagnostic, formatDiagnostics, type Diagnostic } from './errors.ts';
export { rememberSource, sourceText } from './sources.ts';

type Compiled = { grammar: Grammar | null; diagnostics: Diagnostic[] };

/**
 * Recent results by (file, text). The IR is immutable by contract, so one process compiling the same
 * description twice (every test file loading a shipped grammar, say) shares one Grammar object.
 */
const recent = new Map<string, { readonly grammar: Grammar | null; readonly diagnostics: readonly Diagnostic[] }>();
const RECENT_LIMIT = 16;

/**
 * Compiles description text. Never throws on any input text; every problem becomes a located
 * diagnostic. Results are cached for the last few (file, text) pairs: the returned Grammar may be
 * the same object as an earlier call's (it is immutable); the diagnostics array is a fresh copy.
 */
export function compileDescription(text: string, file: string): Compiled {
  const key = `${file}\u0000${text}`;
  const hit = recent.get(key);
  if (hit) return { grammar: hit.grammar, diagnostics: [...hit.diagnostics] };
  const result = compileUncached(text, file);
  if (result.grammar !== null) rememberSource(result.grammar, text);
  if (recent.size >= RECENT_LIMIT) recent.delete(recent.keys().next().value!);
  recent.set(key, { grammar: result.grammar, diagnostics: [...result.diagnostics] });
  return result;
}

function compileUncached(text: string, file: string): Compiled {
  try {
    return compileChecked(text, file);
  } catch (e) {
    // a description nested past the notation parser's limit (src/util/ohm-depth.ts)
    const deep = nestingProblem(e, text);
    if (deep === null) throw e;
    return { grammar: null, diagnostics: [E.tooDeep({ file, span: { start: deep.offset, end: deep.offset + 1 } }, deep.message.replace(/^expected the program/, 'expected the description').replace(/^expected a program/, 'expected a description'))] };
  }
}

function compileChecked(text: string, file: string): Compiled {
  const parsed = parseNotation(text);
  if (!parsed.ok) {
    return { grammar: null, diagnostics: [notationSyntaxError(text, file, parsed.offset, parsed.failures)] };
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
