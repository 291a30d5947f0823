/**
 * Token-class DFAs, as the automaton stage sees them. The DFAs themselves are built once, in the
 * description stage's regex front-end (src/description/regex/), and carried by each TokenClass
 * (`regex.dfa`); this module re-exports the table type and the helpers the automaton and the masks
 * use, plus `compileRegex` for stand-alone use (tests, tools) with errors as exceptions.
 *
 * Numbering invariant (see description/regex/automaton.ts): state 0 is dead, state 1 the start
 * (0 when the language is empty); every state ≠ 0 can reach acceptance.
 */
import { compileTokenRegex, type ByteDfa } from '../description/regex/index.ts';

export type { ByteDfa } from '../description/regex/index.ts';
export { literalDfa, runDfa, withDistances, MAX_STATES as MAX_DFA_STATES } from '../description/regex/index.ts';

/**
 * A name set's members as a byte DFA (pda.ts `namesDfa`): a trie, so also per state the first
 * member ending there (`memberAt`, -1 none) and the parent state; and the longest member.
 */
export interface NamesDfa extends ByteDfa {
  readonly memberAt: Int32Array;
  readonly parent: Int32Array;
  /** the longest member's length in bytes, and whether it starts with a word byte */
  readonly longest: number;
  readonly longestWord: boolean;
}

export class RegexError extends Error {}

/**
 * Compiles `pattern` (ECMAScript source, no slashes) with `flags` to a byte DFA; `exclude` lists
 * byte strings removed from the language. Throws RegexError with the front-end's message.
 */
export function compileRegex(pattern: string, flags: string, exclude: readonly Uint8Array[] = []): ByteDfa {
  const r = compileTokenRegex(pattern, flags, exclude);
  if ('code' in r) throw new RegexError(r.code === 'regex-too-large' ? `the automaton is too large: ${r.message}` : r.message);
  return r.dfa;
}
