/**
 * INTERNAL to treewright — not part of the public API (src/automaton/index.ts is), may change
 * without notice. The automaton's runtime building blocks for the mask engine (src/masks), which
 * walks the token trie with the automaton's own threads, frames and tables instead of stepping
 * byte by byte:
 * - `Thread`, `Frame`, `Env`: the persistent runtime state (see pda.ts for their invariants);
 * - `Automaton.forEachLevel` with `LevelVisitor` and the `LEVELS_*` results: the one frame-pop
 *   loop, shared by the automaton's byte step and the mask walkers;
 * - `Dispatch`: options grouped by first byte; `WORD` (word bytes), `INF` (no completion);
 * - `ByteDfa`, `Rtn`, `Terminal`: the compiled lexical and network tables the mask tables index.
 * Nothing outside src/masks and src/automaton imports this module.
 */
export {
  Automaton, AutomatonInstance, Env, Frame, Thread, WORD, INF, LEVELS_BLOCKED, LEVELS_END, LEVELS_STOP,
  type Dispatch, type LevelVisitor, type LevelsEnd, type PdaState,
} from './pda.ts';
export type { Rtn, Terminal, TerminalKind } from './cfg.ts';
export { ALLOWED, LIVE, type Res } from './scopes.ts';
export type { Kin } from './kinds.ts';
export type { ByteDfa } from './regex.ts';
