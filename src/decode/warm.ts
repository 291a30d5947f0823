/**
 * Warm-up of a freshly bound constraint, so that the first question of a process does not pay for
 * what is computed on first use: kept masks of lexeme states and of walks below trie nodes (the
 * per-node local masks come from `prepare()`), and the compiled code of the walkers.
 *
 * It samples programs from the grammar (fixed seed, the bound names), spells each through the
 * vocabulary by longest match in the token trie — any spelling of a program is a path the masks
 * allow — and computes the mask at every step, as a decoder would. Bounded by a program count and
 * a time budget; it only fills caches, so stopping early changes no result.
 */
import type { Grammar, NameBindings } from '../description/ir.ts';
import type { MaskConstraint } from '../masks/index.ts';
import { createSampler, printTree } from '../tree/index.ts';
import type { TokenTrie } from '../vocab/index.ts';

/** The longest token spelling bytes[pos …] (−1 when none): children of a trie node are n + 1, then end[c]. */
function longestToken(trie: TokenTrie, bytes: Uint8Array, pos: number): { id: number; length: number } {
  let n = 0;
  let id = -1;
  let length = 0;
  for (let i = pos; i < bytes.length; i++) {
    let c = n + 1;
    while (c < trie.end[n] && trie.byte[c] !== bytes[i]) c = trie.end[c];
    if (c >= trie.end[n]) break;
    n = c;
    if (trie.tokStart[n + 1] > trie.tokStart[n]) {
      id = trie.tokens[trie.tokStart[n]];
      length = i + 1 - pos;
    }
  }
  return { id, length };
}

export interface WarmUpOptions {
  /** programs sampled (default 24) */
  programs?: number;
  /** stop after this many milliseconds (default 300) */
  budgetMs?: number;
}

/** Computes masks along sampled programs; returns how many mask steps it ran. */
export function warmUp(constraint: MaskConstraint, grammar: Grammar, names: NameBindings, o: WarmUpOptions = {}): number {
  const t0 = performance.now();
  const trie = constraint.vocab.trie;
  const mask = new Uint32Array((constraint.vocabSize + 31) >>> 5);
  const encoder = new TextEncoder();
  let sampler;
  try {
    sampler = createSampler(grammar, { seed: 1, names, maxDepth: 5 });
  } catch {
    return 0; // a grammar the sampler cannot draw from: nothing to warm (decoding still works)
  }
  let steps = 0;
  const budget = o.budgetMs ?? 300;
  for (let k = 0; k < (o.programs ?? 24) && performance.now() - t0 < budget; k++) {
    const bytes = encoder.encode(printTree(grammar, sampler.next()));
    let state = constraint.start();
    for (let pos = 0; pos < bytes.length; ) {
      constraint.writeAllowed(state, 512, mask);
      steps++;
      const { id, length } = longestToken(trie, bytes, pos);
      if (id < 0 || (mask[id >>> 5] & (1 << (id & 31))) === 0) break; // not spellable here: next program
      state = constraint.advance(state, id);
      pos += length;
    }
    constraint.writeAllowed(state, 512, mask);
    steps++;
  }
  return steps;
}
