/**
 * Whole-grammar analyses on a compiled IR (run only when compile.ts found no error).
 */
import type { Grammar } from './ir.ts';
import type { Diagnostic } from './errors.ts';

/** Diagnostics from the whole-grammar analyses. */
export function analyseGrammar(_g: Grammar): Diagnostic[] {
  return [];
}
