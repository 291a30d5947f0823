// Constrained decoding with the real mask engine (src/masks) on the tiny fixture model: every
// output must parse with the grammar's parser (src/tree) and be well-typed with the bound names.
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { readFileSync } from 'node:fs';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { generate } from '../../src/decode/index.ts';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { loadNames, printTree, validateTree } from '../../src/tree/index.ts';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const QUESTIONS = [
  'lf: which orchards does chen li own?',
  'lf: what is the largest orchard by hectares?',
  'lf: does fenna dekker manage a cold room?',
  'lf: how many lots of conference pears were harvested in 2021?',
];

let model: Seq2SeqModel;
let lf: Grammar;
let names: NameBindings;
beforeAll(async () => {
  model = await loadModel('test/fixtures/tiny-seq2seq', { threads: 1 });
  lf = loadGrammar('grammars/lf/lf.twg');
  names = loadNames('grammars/lf/samples/names.json', lf);
});

describe('generate() with a grammar', () => {
  it('constrained greedy, beam and sampling outputs parse and are well-typed', async () => {
    for (const q of QUESTIONS) {
      for (const opts of [{}, { strategy: 'beam' as const, beamWidth: 3 }, { strategy: 'sample' as const, seed: 5, temperature: 1.2 }]) {
        const r = await generate(model, q, { grammar: lf, names, maxTokens: 48, ...opts });
        expect(r).toMatchObject({ valid: true, finished: 'eos' });
        // The masks keep constrained LF outputs well-formed with bound names and bound variables
        // and well-kinded (every kind clause holds, tree/resolve.ts): no failure is allowed.
        expect(validateTree(lf, r.tree!, { names, resolve: true })).toBeNull();
        expect(r).toMatchObject({ well_typed: true, parse_error: null });
        // the canonical print of the tree re-parses to the same tree (the printer is src/tree's)
        expect(r.tree).not.toBeNull();
        expect(printTree(lf, r.tree!).length).toBeGreaterThan(0);
        expect(r.mask_ms).toBeGreaterThan(0);
      }
    }
  });

  it('without the warm-up (warm: false, as `treewright generate` runs) the outputs are the same', async () => {
    // a fresh bindings object (read again): its constraint is bound anew, never warmed up, masks computed as the steps need them
    const fresh = loadNames('grammars/lf/samples/names.json', lf);
    for (const q of QUESTIONS) {
      for (const opts of [{}, { strategy: 'beam' as const, beamWidth: 3 }, { strategy: 'sample' as const, seed: 5, temperature: 1.2 }]) {
        const cold = await generate(model, q, { grammar: lf, names: fresh, maxTokens: 48, warm: false, ...opts });
        const warm = await generate(model, q, { grammar: lf, names, maxTokens: 48, ...opts });
        expect(cold.tokens, q).toEqual(warm.tokens);
        expect(cold.well_typed).toBe(warm.well_typed);
      }
    }
  });

  it('unconstrained output of the random model is reported as not parsing, with the parser message', async () => {
    const r = await generate(model, QUESTIONS[0], { grammar: lf, names, unconstrained: true, maxTokens: 12 });
    expect(r.mask_ms).toBe(0);
    expect(r.valid).toBe(false);
    expect(r.tree).toBeNull();
    expect(r.parse_error).toMatch(/^<output>:1:\d+: /);
  });

  it('a grammar the tokenizer cannot spell is an error before decoding, naming the tokenizer file', async () => {
    // a copy of the lf grammar whose keyword "holds" becomes "hölds": no token spells the byte 0xC3
    const text = readFileSync('grammars/lf/lf.twg', 'utf8').replace('"holds"', '"h\u00f6lds"');
    const { grammar } = compileDescription(text, 'lf-umlaut.twg');
    expect(grammar).not.toBeNull();
    await expect(generate(model, QUESTIONS[0], { grammar: grammar!, names, maxTokens: 12 })).rejects.toThrow(
      `${model.dir}/tokenizer.json: tokenizer vocabulary has no single-byte token for byte 0xc3`,
    );
  });

  it('an unbound name set is an error before decoding', async () => {
    await expect(generate(model, QUESTIONS[0], { grammar: lf, names: {}, maxTokens: 12 })).rejects.toThrow(
      'names: the name set Measure is not bound; expected a list of Name lexemes for it (--names FILE with {"Measure": [...]} or --db FILE)',
    );
  });
});
