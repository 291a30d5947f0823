/**
 * The nesting guard of every ohm-js match on untrusted text (the program parser, tree/parse.ts, and
 * the description notation, description/notation.ts): ohm-js evaluates one grammar rule by a chain of JavaScript calls, so
 * a deeply nested program (`((((…))))`, `NOT NOT NOT …`) would overflow the stack in the middle of
 * matching. `guardedMatch` counts the rules being followed at once and stops the match at
 * MAX_PARSE_DEPTH, reporting the input offset reached — a located, documented limit instead of a
 * RangeError.
 *
 * How: ohm-js exports its expression classes (`pexprs`); a rule application is
 * `pexprs.Apply.prototype.reallyEval`, called once per rule entered (memoised results do not
 * re-enter). It is wrapped once, process-wide; the counter is active only inside `guardedMatch`
 * (matching is synchronous, so no other match can interleave), so an unguarded match elsewhere in
 * the process is unaffected. If a future ohm-js renames the method, the wrapper is
 * not installed and the parser falls back to catching the RangeError (parse.ts).
 */
import * as ohm from 'ohm-js';
import { MAX_PARSE_DEPTH } from './depth.ts';

/** Thrown out of a match that went deeper than the limit; `offset` is where the deepest rule began. */
export class NestingLimit extends Error {
  constructor(readonly offset: number, readonly limit: number) {
    super(`nesting limit ${limit} reached at offset ${offset}`);
    this.name = 'NestingLimit';
  }
}

let depth = 0;
let limit = 0; // 0: not inside guardedMatch

type Evaluator = (this: unknown, state: { inputStream?: { pos?: unknown } }) => unknown;
const apply = (ohm as unknown as { pexprs?: { Apply?: { prototype: { reallyEval?: Evaluator } } } }).pexprs?.Apply?.prototype;
const original = apply?.reallyEval;
/** whether the guard could be installed (false: only the RangeError fallback protects the parser) */
export const GUARD_INSTALLED = apply !== undefined && typeof original === 'function';
if (GUARD_INSTALLED) {
  apply!.reallyEval = function guardedReallyEval(this: unknown, state) {
    if (limit === 0) return original!.call(this, state);
    if (depth >= limit) {
      const pos = state?.inputStream?.pos;
      throw new NestingLimit(typeof pos === 'number' ? pos : 0, limit);
    }
    depth++;
    try {
      return original!.call(this, state);
    } finally {
      depth--;
    }
  };
}

/** `grammar.match(text, start)` with at most `max` rules followed at once; throws NestingLimit past it. */
export function guardedMatch(grammar: ohm.Grammar, text: string, start: string, max: number = MAX_PARSE_DEPTH): ohm.MatchResult {
  const saved = { depth, limit };
  depth = 0;
  limit = max;
  try {
    return grammar.match(text, start);
  } finally {
    depth = saved.depth;
    limit = saved.limit;
  }
}

/**
 * What a parse reports for the error `e` when it is about nesting: NestingLimit at the offset
 * reached; a stack overflow that still happened (guard not installed, a call from deep in a stack)
 * at the start of the text. null for any other error.
 */
export function nestingProblem(e: unknown, text: string): { offset: number; message: string } | null {
  if (e instanceof NestingLimit) {
    return { offset: Math.min(e.offset, text.length), message: `expected the program to nest less deeply here: the parser follows at most ${e.limit} grammar rules at once (its nesting limit)` };
  }
  if (e instanceof RangeError && /call stack/i.test(e.message)) {
    return { offset: 0, message: `expected a program that nests less deeply: this one overflowed the parser's stack (its nesting limit is ${MAX_PARSE_DEPTH} grammar rules at once)` };
  }
  return null;
}
