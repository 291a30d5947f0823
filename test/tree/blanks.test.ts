/**
 * Declared blanks in the parser and printer: a selector-like language where a blank is syntax
 * (`a b` is a descendant, `a.b` one unit, blanks optional around `>` and `,`) with `space ""`, and
 * a line-oriented one where a line break is syntax beside an ordinary `space " \t"`. Hand-written
 * programs with their expected trees or errors (invented; the rule that a blank run between two
 * compound selectors means "descendant" is the style-sheet convention, common practice, no
 * source), and the property that every sampled program prints to text that parses back to it.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { createParser, createSampler, printTree, type Tree } from '../../src/tree/index.ts';

function load(name: string): Grammar {
  const file = `test/cases/notation/${name}.twg`;
  const { grammar, diagnostics } = compileDescription(readFileSync(file, 'utf8'), file);
  if (grammar === null) throw new Error(diagnostics.map((d) => d.message).join('\n'));
  return grammar;
}

const picker = load('picker');
const notes = load('notes');
const rows = load('rows');
const unit = (tag: string, ...classes: string[]) => ({ kind: 'unit', tag, classes: classes.map((name) => ({ kind: 'cls', name })) });

describe('picker: blanks are syntax', () => {
  const p = createParser(picker);
  it('a blank between two units is a descendant; `a.b` is one unit', () => {
    expect(p.parse('a.b c')).toEqual({ kind: 'list', items: [{ kind: 'desc', l: unit('a', 'b'), r: unit('c') }] });
    expect(p.parse('a.b.c')).toEqual({ kind: 'list', items: [unit('a', 'b', 'c')] });
  });
  it('blanks around `>` and `,` are optional, any run of space and tab', () => {
    const child = { kind: 'list', items: [{ kind: 'child', l: unit('a'), r: unit('b') }] };
    for (const t of ['a>b', 'a > b', 'a\t>  b', 'a >b']) expect(p.parse(t), t).toEqual(child);
    const two = { kind: 'list', items: [unit('a'), unit('b')] };
    for (const t of ['a,b', 'a , b', 'a,\tb']) expect(p.parse(t), t).toEqual(two);
  });
  it('descendant and child associate left at one level', () => {
    expect(p.parse('a b > c')).toEqual({
      kind: 'list',
      items: [{ kind: 'child', l: { kind: 'desc', l: unit('a'), r: unit('b') }, r: unit('c') }],
    });
  });
  it('no blank where the layout places none, none at the ends (space "")', () => {
    expect(() => p.parse('a. b')).toThrow('<input>:1:3: expected Name');
    expect(() => p.parse(' a')).toThrow('<input>:1:1: expected "(", "*" or Name');
    expect(() => p.parse('a ')).toThrow('<input>:1:2: expected "(", "*", ",", ">" or Name');
  });
  it('`except` keeps a word out of the class', () => {
    expect(() => p.parse('nth')).toThrow('<input>:1:3:');
    expect(p.parse('nt')).toEqual({ kind: 'list', items: [unit('nt')] });
  });
  it('the printer writes one space for `Ws` and `Ws?`, none for `~Ws?`', () => {
    const tree = p.parse('a\t\tb>c ,d:nth( 2 )');
    expect(printTree(picker, tree)).toBe('a b > c, d:nth(2)');
  });
});

describe('rows: a line break is syntax beside space " \\t"', () => {
  const p = createParser(rows);
  it('reads rows and refuses a row split without its blank', () => {
    const t = p.parse('pears 3 to north;\n  apples 2 per\nbox');
    expect(t).toEqual({
      kind: 'sheet',
      rows: [
        { kind: 'move', what: 'pears', count: 3, dest: 'north' },
        { kind: 'rate', what: 'apples', count: 2, unit: 'box' },
      ],
    });
    expect(printTree(rows, t)).toBe('pears 3 to north;\napples 2 per\nbox');
    expect(() => p.parse('pears 3 to\nnorth')).toThrow('<input>:1:11: expected Word');
  });
});

describe('notes: filler (comments to the end of a line, an insignificant comma)', () => {
  const p = createParser(notes);
  it('filler stands anywhere a space may and means nothing; the printer writes none', () => {
    const plain = p.parse('picked 3 pears; moved pears to shed');
    for (const t of ['# start\npicked 3 pears;# one\n moved pears to shed # end\n', 'picked, 3 ,pears;,moved pears,to shed,', ',,#a,b\n,picked 3 pears ; moved pears to shed']) {
      expect(p.parse(t), t).toEqual(plain);
    }
    expect(printTree(notes, plain)).toBe('picked 3 pears ; moved pears to shed');
  });
  it('a filler ends by its own text: a comment without its line break is not a comment', () => {
    expect(() => p.parse('picked 3 pears # no line break')).toThrow('<input>:1:16: expected ";" or end of input');
  });
  it('filler does not split a token', () => {
    expect(() => p.parse('pick,ed 3 pears')).toThrow('<input>:1:1:');
  });
});

describe('every sampled program prints to text that parses back', () => {
  for (const [name, g] of [['picker', picker], ['rows', rows], ['notes', notes]] as const) {
    it(name, () => {
      const parser = createParser(g);
      const sampler = createSampler(g, { seed: 41, maxDepth: 5 });
      const seen = new Set<string>();
      for (let i = 0; i < 300; i++) {
        const tree: Tree = sampler.next();
        const text = printTree(g, tree);
        seen.add(text);
        expect(parser.parse(text), text).toEqual(tree);
      }
      expect(seen.size).toBeGreaterThan(150);
    }, 120_000);
  }
});
