/**
 * The mask engine: automaton × vocabulary → per-binding `MaskConstraint`s (constraint.ts).
 *
 * Building an engine does the vocabulary work once per grammar × vocabulary: the vocabulary tables
 * (vocab-tables.ts) and, per token class a `class` terminal uses, the class tables
 * (class-tables.ts); `loadOrCompile` (cache.ts) keeps both in a cache file. `bind(names)` is
 * cheap: the automaton's per-binding tables, no vocabulary work; the kept masks of a binding are
 * computed on first use.
 */
import type { NameBindings, Grammar } from '../description/ir.ts';
import { Automaton, WORD } from '../automaton/internal.ts';
import type { TokenTrie, Vocabulary } from '../vocab/index.ts';
import { BitsetPool, buildClassTables, type ClassTables } from './class-tables.ts';
import { MaskConstraint } from './constraint.ts';
import { VocabTables } from './vocab-tables.ts';

/** Options of `MaskEngine.bind`. */
export interface BindOptions {
  /**
   * keep the mask of popping each stack frame with the frame (default true), so the cost of a
   * mask does not grow with the stack's depth (kept.ts); false computes pops by walking every
   * frame — the uncached computation, for differential tests and the bench's comparison
   */
  readonly frameMasks?: boolean;
}

export interface CompileOptions {
  /** skip the check that every needed byte has a single-byte token (tests with tiny vocabularies) */
  readonly allowMissingBytes?: boolean;
}

/** Compiled tables for one grammar × vocabulary; `bind` gives constraints for name bindings. */
export class MaskEngine {
  readonly automaton: Automaton;
  readonly trie: TokenTrie;
  readonly tables: VocabTables;
  /** per token class index: tables, or null when no `class` terminal uses it */
  readonly classes: (ClassTables | null)[];
  readonly preprocessMs: number;

  /** `tables` and `automaton`: precompiled parts (the cache); built here when absent. */
  constructor(readonly grammar: Grammar, readonly vocab: Vocabulary, opts: CompileOptions = {}, tables?: (ClassTables | null)[], automaton?: Automaton) {
    const t0 = performance.now();
    this.automaton = automaton ?? new Automaton(grammar);
    this.trie = vocab.trie;
    const rtn = this.automaton.rtn;
    this.tables = new VocabTables(vocab, rtn.space);
    if (!opts.allowMissingBytes) this.tables.checkBytes(rtn, grammar);
    // bytes that may follow a lexeme: spaces and the first bytes of terminals
    const follow = new Uint8Array(256);
    for (let b = 0; b < 256; b++) if (rtn.space[b]) follow[b] = 1;
    for (const t of rtn.terminals) for (let b = 0; b < 256; b++) if (t.dfa.trans[t.dfa.start * 256 + b] !== 0) follow[b] = 1;
    if (tables) this.classes = tables;
    else {
      // one pool for all classes: equal bitsets (within a class and across classes) are kept once
      const pool = new BitsetPool();
      this.classes = grammar.tokens.map((tc) => {
        const term = rtn.terminals.find((t) => t.kind === 'class' && t.tokenClass === tc.index);
        return term ? buildClassTables(term.dfa, this.trie, rtn.space, follow, WORD, this.tables.nWords, pool) : null;
      });
    }
    this.preprocessMs = performance.now() - t0;
  }

  /** A constraint for one binding of the open name sets. Cheap: no vocabulary work. */
  bind(names: NameBindings = {}, opts: BindOptions = {}): MaskConstraint {
    return new MaskConstraint(this.vocab, this.tables, this.classes, this.automaton.bind(names), opts.frameMasks ?? true);
  }
}
