/**
 * Property: every printed program parses back to its tree, whatever the description's `space`
 * policy — a space-and-tab policy (the shipped grammars), a tab-only policy, and an empty policy
 * (a glued grammar). Trees come from the seeded sampler; the printed blanks are checked to be the
 * policy's own (a tab where only a tab is allowed, nothing where nothing is). The property
 * (print ∘ parse is the identity on printed text) is common practice for printers, no source.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { createParser, createSampler, printedBlank, PrintError, printTree, type Tree } from '../../src/tree/index.ts';

/** A small assignment language; `SPACE` is replaced by each policy under test. */
const ASSIGN = `grammar assign
start Prog
space SPACE
token Name = /[a-z]{1,4}/ as text reserved
token Num = /[0-9]{1,3}/ as int
sort Prog { prog(stmts: Stmt+) = stmts sep ";"; }
sort Stmt {
  set(target: Name, value: Expr) = target "=" value;
  show(value: Expr) = "print" value;
}
sort Expr parens "(" ")" {
  lt(left: Expr, right: Expr) = left "<" right @ infix none 5;
  le(left: Expr, right: Expr) = left "<=" right @ infix none 5;
  add(left: Expr, right: Expr) = left "+" right @ infix left 10;
  neg(operand: Expr) = "-" operand @ prefix 30;
  eq(operand: Expr) = "=" operand @ prefix 30;
  call(fn: Name, args: Expr*) = fn ~"(" ~args sep ~"," ~")";
  num(value: Num) = value;
  var(name: Name) = name;
}
`;

function compile(space: string): Grammar {
  const text = ASSIGN.replace('SPACE', JSON.stringify(space));
  const { grammar, diagnostics } = compileDescription(text, `assign-${JSON.stringify(space)}.twg`);
  if (grammar === null) throw new Error(diagnostics.map((d) => d.message).join('\n'));
  return grammar;
}

const POLICIES: [string, Grammar, string][] = [
  ['space " \\t" (as the shipped grammars)', compile(' \t'), ' '],
  ['a tab only', compile('\t'), '\t'],
  ['a newline only', compile('\n'), '\n'],
  ['space "" (glued)', compile(''), ''],
];
const RUNS = 300;

describe('printed programs parse, for every space policy', () => {
  for (const [label, grammar, blank] of POLICIES) {
    it(`${label}: print ∘ parse round trip on ${RUNS} sampled programs`, () => {
      expect(printedBlank(grammar)).toBe(blank);
      const parser = createParser(grammar);
      const sampler = createSampler(grammar, { seed: 17, maxDepth: 5 });
      const seen = new Set<string>();
      for (let i = 0; i < RUNS; i++) {
        const tree = sampler.next();
        const text = printTree(grammar, tree);
        seen.add(text);
        // only the policy's blank, and never one the policy does not allow
        for (const ch of ' \t\n') if (ch !== blank) expect(text, text).not.toContain(ch);
        expect(parser.parse(text), text).toEqual(tree);
      }
      expect(seen.size).toBeGreaterThan(RUNS / 2);
    }, 120_000);
  }

  it('the issue example: with a tab-only policy `hsz = gmkh` is printed with tabs', () => {
    const g = compile('\t');
    const tree = { kind: 'prog', stmts: [{ kind: 'set', target: 'hsz', value: { kind: 'var', name: 'gmkh' } }] } as unknown as Tree;
    expect(printTree(g, tree)).toBe('hsz\t=\tgmkh');
    expect(createParser(g).parse('hsz\t=\tgmkh')).toEqual(tree);
  });

  it('glued: tokens that would run together are refused, not printed', () => {
    const g = compile('');
    const show = (value: unknown) => ({ kind: 'prog', stmts: [{ kind: 'show', value }] }) as unknown as Tree;
    // `print` then a name: one word
    expect(() => printTree(g, show({ kind: 'var', name: 'x' }))).toThrow(PrintError);
    expect(() => printTree(g, show({ kind: 'var', name: 'x' }))).toThrow(
      'cannot print this tree: "print" and "x" would run together into one token, and the description\'s space is empty, so nothing can separate them',
    );
    // `<` then the prefix `=`: would read as `<=`
    const lt = { kind: 'lt', left: { kind: 'num', value: 1 }, right: { kind: 'eq', operand: { kind: 'num', value: 2 } } };
    expect(() => printTree(g, show({ kind: 'neg', operand: lt }))).toThrow('"<" and "=" would run together');
    // what can be printed is printed without blanks
    const ok = { kind: 'prog', stmts: [{ kind: 'set', target: 'a', value: { kind: 'add', left: { kind: 'num', value: 1 }, right: { kind: 'neg', operand: { kind: 'var', name: 'b' } } } }] };
    expect(printTree(g, ok)).toBe('a=1+-b');
  });

  it.each(['arith', 'json', 'lf', 'sql', 'shed_commands'])('shipped %s: print ∘ parse round trip on sampled programs', (name) => {
    const g = loadGrammar(`grammars/${name}/${name}.twg`);
    expect(printedBlank(g)).toBe(' ');
    const names = name === 'arith' ? JSON.parse(readFileSync('grammars/arith/samples/names.json', 'utf8')) : undefined;
    const parser = createParser(g);
    const sampler = createSampler(g, { seed: 3, maxDepth: 6, names });
    for (let i = 0; i < 100; i++) {
      const tree = sampler.next();
      const text = printTree(g, tree);
      expect(parser.parse(text), text).toEqual(tree);
    }
  }, 120_000);
});
