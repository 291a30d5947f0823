/**
 * Properties (fast-check) over every shipped grammar:
 * - sampled trees are well-typed (validateTree) and parse(print(t)) deep-equals t;
 * - print(parse(c)) is canonical: the printed text with random extra whitespace between tokens
 *   (any run of the grammar's `space` characters; README, `space`) parses back to the same tree
 *   and prints back to the original text.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { createParser, printTokens, printTree, sampleTree, validateTree } from '../../src/tree/index.ts';

const RUNS = 300;
const GRAMMARS = ['arith', 'json', 'lf', 'sql'] as const;

/** Names for the grammars whose samples folder has them; sql and others use placeholder names. */
function namesFor(name: string): NameBindings | undefined {
  if (name === 'arith') return { Func: ['max', 'min', 'abs', 'sqrt'] };
  if (name === 'lf') return { Entity: ['mara', 'hilltop', 'copper_dawn'], Class: ['orchard', 'grower'], Rel: ['owns', 'grows'], Measure: ['hectares', 'altitude'] };
  return undefined;
}

describe.each(GRAMMARS)('%s', (name) => {
  const grammar: Grammar = loadGrammar(`grammars/${name}/${name}.twg`);
  const parser = createParser(grammar);
  const names = namesFor(name);
  const seed = fc.integer({ min: 0, max: 0x7fffffff });
  const depth = fc.integer({ min: 2, max: 7 });

  // generous limits: sampling a scoped grammar redraws shapes, and the machine is shared
  it(`parse(print(t)) = t for ${RUNS} sampled trees`, { timeout: 60_000 }, () => {
    fc.assert(
      fc.property(seed, depth, (s, maxDepth) => {
        const tree = sampleTree(grammar, { seed: s, maxDepth, names });
        expect(validateTree(grammar, tree, { names })).toBeNull();
        const text = printTree(grammar, tree);
        expect(parser.parse(text, { names })).toEqual(tree);
      }),
      { numRuns: RUNS, seed: 20261201 },
    );
  });

  it(`re-spaced programs print back canonically (${RUNS} runs)`, { timeout: 60_000 }, () => {
    const spaces = [...grammar.space];
    fc.assert(
      fc.property(seed, depth, fc.infiniteStream(fc.nat({ max: 5 })), (s, maxDepth, stream) => {
        const tree = sampleTree(grammar, { seed: s, maxDepth, names });
        const tokens = printTokens(grammar, tree);
        const canonical = tokens.map((t) => (t.space ? ' ' : '') + t.text).join('');
        expect(canonical).toBe(printTree(grammar, tree));
        const it = stream[Symbol.iterator]();
        const draw = () => it.next().value as number;
        const run = (min: number) => {
          let out = '';
          const n = Math.max(min, draw() - 2);
          for (let i = 0; i < n; i++) out += spaces[draw() % spaces.length];
          return out;
        };
        // leading/trailing whitespace is allowed too (the parser skips `space` before every token and at the end)
        const respaced = run(0) + tokens.map((t) => run(t.space ? 1 : 0) + t.text).join('') + run(0);
        const back = parser.parse(respaced, { names });
        expect(back).toEqual(tree);
        expect(printTree(grammar, back)).toBe(canonical);
      }),
      { numRuns: RUNS, seed: 20261202 },
    );
  });
});
