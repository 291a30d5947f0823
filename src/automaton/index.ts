/**
 * automaton/ — grammar IR → a pushdown automaton over UTF-8 bytes.
 *
 * Produces `new Automaton(grammar)` (immutable: the recursive transition network of cfg.ts, the
 * token-class DFAs of regex.ts, static next-terminal closures), `automaton.bind(names)` → `AutomatonInstance`
 * (name-set tries, liveness and shortest-completion tables; no vocabulary work), and persistent
 * runtime states: `instance.advanceBytes(state, bytes)`, `isComplete`, `viable`, `shortestCompletion`;
 * rollback is `state.prev`; forking is sharing the state.
 *
 * Example:
 *   const b = new Automaton(loadGrammar('grammars/arith/arith.twg')).bind({ Func: ['max'] });
 *   const s = b.advanceBytes(b.start, new TextEncoder().encode('max(1, 2'));
 *   b.viable(s) // true;  b.isComplete(s) // false;  b.shortestCompletion(s) // 1 (")")
 *
 * Worst-case cost: one byte step is O(threads × options per node × pop depth); threads are the
 * parses of an ambiguous prefix (1–3 for the shipped grammars; capped at 4096, an error beyond).
 * Building is linear in the description plus DFA construction (exponential worst case for
 * pathological regexes, capped at 20,000 states).
 *
 * Limits: regexes without lookaround, back-references or \b; left recursion through non-operator
 * layouts is refused; a `new` field inside an operator constructor stays in scope for the rest of
 * that precedence level (no shipped grammar has one); leading and trailing spaces are accepted.
 */
export { Automaton, AutomatonInstance, BindError, type PdaState } from './pda.ts';
export { AutomatonError } from './cfg.ts';
export { RegexError } from './regex.ts';
// The runtime building blocks the mask engine walks with (threads, frames, the level loop, DFA
// tables) are internal: src/automaton/internal.ts, for src/masks only.
