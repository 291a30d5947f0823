/**
 * masks/ — grammar × vocabulary → token masks: `compileMasks(grammar, vocabulary)` gives an
 * engine; `engine.bind(names)` gives a `TokenConstraint` (src/util/constraint.ts) for one binding of
 * the open name sets (rebinding does no vocabulary work).
 *
 * Example:
 *   const engine = compileMasks(loadGrammar('grammars/sql/sql.twg'), loadVocabulary(tok));
 *   const c = engine.bind({ Table: ['orchard'], Column: ['variety', 'yield_kg'] });
 *   let s = c.start(); const mask = new Uint32Array(Math.ceil(c.vocabSize / 32));
 *   c.writeAllowed(s, 64, mask);              // bit id set ⇔ token id keeps the output a program prefix
 *   s = c.advance(s, id);                 // persistent: the old s is still valid (beams, undo: c.previous(s))
 *
 * Design (docs/design/masks.md): per token-class DFA state, precomputed bitsets of the
 * tokens that stay inside the lexeme and the trie nodes where a lexeme can end inside a token; per
 * RTN node (and binding), a stack-independent "local mask" and the trie nodes where the rest of the
 * stack matters (kept likewise per class-lexeme state and per trie node below the root); everything
 * else is a trie walk pruned at the first byte no parse can read.
 * `loadOrCompile` keeps grammar × vocabulary tables in a cache file keyed by both content hashes.
 *
 * Files, in the order data flows:
 *   vocab-tables.ts  byte → single-byte token, wide-node child tables, space tables, word-start set
 *   class-tables.ts  per token class: inside / budget-level bitsets and exit nodes per DFA state
 *   engine.ts        MaskEngine: builds both, `bind(names)` → MaskConstraint
 *   constraint.ts    MaskConstraint, the TokenConstraint: allowed bits, advance, EOS, budget
 *   context.ts       WalkContext: where a walk writes, its limit and word rule (reused, two per constraint)
 *   walk.ts          the trie walkers (one thread's mask), visitors of the automaton's level loop
 *   kept.ts          kept masks: computed once per binding with the walkers, used by them
 *   cache.ts         the cache file
 * Worst-case cost per mask: O(threads × (bitset words × pop depth + trie nodes walked below pop
 * points and exit nodes)). Measured per-step times, the naive baseline, preprocessing and cache
 * load: docs/figures.md (`npm run bench -- --write-figures`); lf (scoping, no kept masks) is the
 * slowest shipped grammar.
 * Limits: see automaton/index.ts (regex subset, ambiguity cap); grammars with `new`/`bound` fields
 * walk instead of using local masks; masks follow token-class regexes, not value ranges.
 */
export { MaskEngine, type BindOptions, type CompileOptions } from './engine.ts';
export { MaskConstraint, type MaskState } from './constraint.ts';
export { MaskError } from './errors.ts';
import type { Grammar } from '../description/ir.ts';
import type { Vocabulary } from '../vocab/index.ts';
import { MaskEngine, type CompileOptions } from './engine.ts';

/** Compiles the mask tables of `grammar` for `vocabulary` (see MaskEngine). */
export function compileMasks(grammar: Grammar, vocabulary: Vocabulary, opts: CompileOptions = {}): MaskEngine {
  return new MaskEngine(grammar, vocabulary, opts);
}
export { loadOrCompile, storeEngine, serializeEngine, deserializeEngine, cacheKey, defaultCacheDir, CacheError, CACHE_FORMAT, type LoadResult } from './cache.ts';
export { CacheFileError, MAX_CACHE_FILE_BYTES } from './cache-files.ts';
export { measureAllocation, type AllocationFigures } from './measure.ts';
