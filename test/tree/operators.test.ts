/**
 * Every operator shape the notation allows (infix left/right/none, prefix, postfix, a postfix with
 * an inner field, operators sharing a precedence level), in two invented descriptions: the
 * printer's minimal parentheses and the parser's precedence levels must agree —
 * parse(print(t)) = t for sampled t (fast-check), plus exact texts for the tricky cases.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import { createParser, printTree, sampleTree, type Tree } from '../../src/tree/index.ts';

const description = (levels: Record<string, number>) => `grammar ops
start E
space " "
token N = /[0-9]{1,9}/ as int
sort E parens "(" ")" {
  eq(l: E, r: E) = l "==" r @ infix none 5;
  add(l: E, r: E) = l "+" r @ infix left 10;
  sub(l: E, r: E) = l "-" r @ infix left 10;
  cons(h: E, t: E) = h "::" t @ infix right 15;
  neg(x: E) = "-" ~x @ prefix ${levels.neg};
  not(x: E) = "not" x @ prefix ${levels.not};
  fact(x: E) = x ~"!" @ postfix ${levels.fact};
  idx(x: E, i: E) = x ~"[" ~i ~"]" @ postfix ${levels.idx};
  pow(b: E, e: E) = b "^" e @ infix right 40;
  deref(x: E) = "*" ~x @ prefix 50;
  n(v: N) = v;
}
`;

const VARIANTS = {
  'own levels': { neg: 20, not: 20, fact: 30, idx: 30 },
  'shared levels': { neg: 10, not: 15, fact: 10, idx: 15 },
};

const n = (v: number): Tree => ({ kind: 'n', v });
const op = (kind: string, fields: Record<string, Tree>): Tree => ({ kind, ...fields });

describe.each(Object.entries(VARIANTS))('%s', (_, levels) => {
  const { grammar, diagnostics } = compileDescription(description(levels), 'ops.twg');
  it('compiles', () => expect(diagnostics).toEqual([]));
  const parser = createParser(grammar!);

  it('parse(print(t)) = t for 300 sampled trees', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 0x7fffffff }), fc.integer({ min: 2, max: 6 }), (seed, maxDepth) => {
        const tree = sampleTree(grammar!, { seed, maxDepth });
        expect(parser.parse(printTree(grammar!, tree))).toEqual(tree);
      }),
      { numRuns: 300, seed: 77 },
    );
  });

  it.each<[string, Tree, Record<string, string>]>([
    ['non-associative', op('eq', { l: op('eq', { l: n(1), r: n(2) }), r: n(3) }), { all: '(1 == 2) == 3' }],
    ['right-associative', op('cons', { h: n(1), t: op('cons', { h: n(2), t: n(3) }) }), { all: '1 :: 2 :: 3' }],
    ['postfix chain', op('idx', { x: op('fact', { x: n(1) }), i: op('add', { l: n(2), r: n(3) }) }), { 'own levels': '1![2 + 3]', 'shared levels': '(1!)[2 + 3]' }],
    ['prefix under postfix', op('fact', { x: op('neg', { x: n(1) }) }), { 'own levels': '(-1)!', 'shared levels': '(-1)!' }],
    ['postfix under prefix', op('neg', { x: op('fact', { x: n(1) }) }), { 'own levels': '-1!', 'shared levels': '-1!' }],
    ['left operand prefix at the same level', op('add', { l: op('neg', { x: n(1) }), r: n(2) }), { 'own levels': '-1 + 2', 'shared levels': '(-1) + 2' }],
  ])('%s', (_name, tree, texts) => {
    const variant = Object.entries(VARIANTS).find(([, l]) => l === levels)![0];
    const text = texts[variant] ?? texts.all!;
    expect(printTree(grammar!, tree)).toBe(text);
    expect(parser.parse(text)).toEqual(tree);
  });
});
