/**
 * Outside checks of the shipped arithmetic grammar (grammars/arith/arith.twg).
 *
 * Reference: mathjs 15 as the reference evaluator and parser of arithmetic notation. mathjs is
 * created with `predictable: true`, so a negative base with a fractional exponent and the square
 * root of a negative number give NaN (as Math.pow / Math.sqrt do) instead of a complex number.
 *
 * Function arity cannot be expressed in the grammar (`call(fn: Func, args: Expr+)` takes any
 * number of arguments), so the sampled check binds `Func` to the variadic `max` and `min` only;
 * one-argument `abs` and `sqrt` are checked on the hand-written samples.
 *
 * Values are compared except for trees whose evaluation meets a power with a negative base and a
 * non-integer exponent: there IEEE 754 (Math.pow) and mathjs's predictable mode follow different
 * conventions (see ArithNotes in support.ts). Such samples still get the structure check, and at
 * least 1,000 samples get the value check.
 */
import { all, create, type MathNode } from 'mathjs';
import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Grammar } from '../../src/description/ir.ts';
import { loadGrammar } from '../../src/description/index.ts';
import { createParser, printTree, sampleTree } from '../../src/tree/index.ts';
import { evalArith, readInvalidCases, readSamples, sameNumber, type Node } from './support.ts';

const SAMPLES = 1300;
const math = create(all, { predictable: true });
const FUNC_NAMES = JSON.parse(readFileSync('grammars/arith/samples/names.json', 'utf8')) as { Func: string[] };
let grammar: Grammar;

beforeAll(() => {
  grammar = loadGrammar('grammars/arith/arith.twg');
});

function parse(text: string, names: Record<string, readonly string[]>, file?: string): Node {
  return createParser(grammar).parse(text, file === undefined ? { names } : { names, file }) as Node;
}

/**
 * The structure mathjs reads from a text, in our tree shape: operators by mathjs function name,
 * parentheses dropped, constants as numbers. Comparing it with our tree checks precedence and
 * associativity against mathjs's parser, not only the value.
 */
function fromMathjs(n: MathNode): Node {
  const node = n as MathNode & Record<string, unknown>;
  switch (n.type) {
    case 'ParenthesisNode':
      return fromMathjs(node.content as MathNode);
    case 'ConstantNode':
      return { kind: 'num', value: node.value as number };
    case 'FunctionNode':
      return { kind: 'call', fn: (node.fn as { name: string }).name, args: (node.args as MathNode[]).map(fromMathjs) };
    case 'OperatorNode': {
      const args = (node.args as MathNode[]).map(fromMathjs);
      const binary: Record<string, [string, string, string]> = {
        add: ['add', 'left', 'right'],
        subtract: ['sub', 'left', 'right'],
        multiply: ['mul', 'left', 'right'],
        divide: ['div', 'left', 'right'],
        pow: ['pow', 'base', 'exponent'],
      };
      const fn = node.fn as string;
      if (fn === 'unaryMinus' && args.length === 1) return { kind: 'neg', operand: args[0]! };
      const b = binary[fn];
      if (b && args.length === 2) return { kind: b[0], [b[1]]: args[0]!, [b[2]]: args[1]! };
      throw new Error(`mathjs operator ${fn} has no counterpart in the arith grammar`);
    }
    default:
      throw new Error(`mathjs node ${n.type} has no counterpart in the arith grammar`);
  }
}

describe('arith: sampled trees against mathjs', () => {
  it(`${SAMPLES} sampled trees: mathjs reads the printed text as the same tree and value`, { timeout: 300_000 }, () => {
    const names = { Func: ['max', 'min'] };
    let compared = 0;
    let finite = 0;
    let calls = 0;
    for (let seed = 1; seed <= SAMPLES; seed++) {
      const tree = sampleTree(grammar, { seed, maxDepth: 5, names }) as Node;
      const text = printTree(grammar, tree);
      const where = `seed ${seed}: ${text}`;
      // reference: mathjs parse — same operators, grouping and constants
      expect(fromMathjs(math.parse(text)), where).toEqual(tree);
      // our parser reads it back to the same tree
      expect(parse(text, names), where).toEqual(tree);
      if (/[a-z]/.test(text)) calls++;
      // reference: mathjs evaluate — same value (relative tolerance 1e-9; NaN and ±Infinity alike),
      // except where a power of a negative base to a non-integer exponent makes the value a matter
      // of convention (see ArithNotes in support.ts)
      const notes = { negativeBasePowers: 0 };
      const expected = evalArith(tree, notes);
      const got = math.evaluate(text) as number;
      expect(typeof got, where).toBe('number');
      if (notes.negativeBasePowers > 0) continue;
      expect(sameNumber(got, expected), `${where}: mathjs ${got}, tree ${expected}`).toBe(true);
      compared++;
      if (Number.isFinite(expected)) finite++;
    }
    expect(compared).toBeGreaterThanOrEqual(1000);
    expect(finite).toBeGreaterThanOrEqual(500);
    expect(calls).toBeGreaterThan(0);
  });
});

describe('arith: hand-written samples', () => {
  const names = FUNC_NAMES;
  const valid = readSamples('grammars/arith/samples/valid.arith');
  it.each(valid)('valid.arith:$line', ({ text }) => {
    const tree = parse(text, names);
    expect(printTree(grammar, tree)).toBe(text);
    // reference: mathjs parse and evaluate
    expect(fromMathjs(math.parse(text))).toEqual(tree);
    const notes = { negativeBasePowers: 0 };
    const expected = evalArith(tree, notes);
    expect(notes.negativeBasePowers).toBe(0);
    expect(sameNumber(math.evaluate(text) as number, expected)).toBe(true);
  });

  const invalid = readInvalidCases('arith');
  it.each(invalid)('$path gives the expected located error', ({ path, text, expected }) => {
    let message: string | null = null;
    try {
      parse(text, names, path);
    } catch (e) {
      message = (e as Error).message;
    }
    expect(message).toBe(expected);
  });
});
