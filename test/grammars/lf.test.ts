/**
 * Checks of the shipped logical-form grammar (grammars/lf/lf.twg). The notation is our own, so there
 * is no outside parser to compare with; these tests check the round trip (sampled trees print to
 * text that parses back to the same tree), the hand-written samples, and the exact error messages.
 * Names are those of grammars/lf/samples/names.json (the cooperative's fact base).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { loadGrammar } from '../../src/description/index.ts';
import { createParser, loadNames, printTree, sampleTree, validateTree } from '../../src/tree/index.ts';
import { nodes, readInvalidCases, readSamples, type Node } from './support.ts';

const SAMPLES = 1000;
let grammar: Grammar;
let names: NameBindings;

beforeAll(() => {
  grammar = loadGrammar('grammars/lf/lf.twg');
  names = loadNames('grammars/lf/samples/names.json', grammar);
});

function parse(text: string, file?: string): Node {
  return createParser(grammar).parse(text, file === undefined ? { names } : { names, file }) as Node;
}

describe('lf: sampled trees', () => {
  it(`${SAMPLES} sampled trees print and parse back to the same tree`, { timeout: 300_000 }, () => {
    const kinds = new Set<string>();
    for (let seed = 1; seed <= SAMPLES; seed++) {
      const tree = sampleTree(grammar, { seed, maxDepth: 6, names }) as Node;
      expect(validateTree(grammar, tree, { names }), `seed ${seed}`).toBeNull();
      const text = printTree(grammar, tree);
      const back = parse(text);
      expect(back, `seed ${seed}: ${text}`).toEqual(tree);
      expect(printTree(grammar, back)).toBe(text);
      for (const n of nodes(tree)) kinds.add(n.kind);
    }
    // the samples reach every constructor of the grammar
    expect([...kinds].sort()).toEqual(grammar.constructors.map((c) => c.name).sort());
  });
});

describe('lf: hand-written samples', () => {
  const valid = readSamples('grammars/lf/samples/valid.lf');
  it.each(valid)('valid.lf:$line parses and prints back identically', ({ text }) => {
    const tree = parse(text);
    expect(validateTree(grammar, tree, { names })).toBeNull();
    expect(printTree(grammar, tree)).toBe(text);
  });

  const invalid = readInvalidCases('lf');
  it.each(invalid)('$path gives the expected located error', ({ path, text, expected }) => {
    let message: string | null = null;
    try {
      parse(text, path);
    } catch (e) {
      message = (e as Error).message;
    }
    expect(message).toBe(expected);
  });
});
