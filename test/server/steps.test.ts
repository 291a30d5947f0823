// Step replay (src/server/steps.ts) on the fixture tokenizer: allowed counts under the length
// budget, the step where a text stops fitting the budget, the step where it leaves the grammar.
import { beforeAll, describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { maskEngine, textOf } from '../../src/decode/index.ts';
import { loadModel, type Seq2SeqModel } from '../../src/model/index.ts';
import { replaySteps, treeView } from '../../src/server/index.ts';
import { readFileSync } from 'node:fs';
import { createParser } from '../../src/tree/index.ts';
import type { TreeViewNode } from '../../src/server/index.ts';

let model: Seq2SeqModel;
let arith: Grammar;
beforeAll(async () => {
  model = await loadModel('test/fixtures/tiny-seq2seq', { threads: 1 });
  arith = loadGrammar('grammars/arith/arith.twg');
});

/** The text spelled one byte per token (the fixture has a token for every printable ASCII byte). */
function bytes(text: string): number[] {
  const v = model.vocabulary;
  return [...text].map((ch) => {
    for (let id = 0; id < v.vocabSize; id++) if (v.isNormal(id) && v.text(id) === ch) return id;
    throw new Error(`no single-byte token for ${JSON.stringify(ch)}`);
  });
}

const replay = (text: string, maxTokens: number) => {
  const ids = bytes(text);
  const c = maskEngine(model, arith).bind({ Func: ['max'] });
  return replaySteps(c, ids, ids.map((id) => model.vocabulary.text(id)), maxTokens, (xs) => textOf(model, xs));
};

describe('replaySteps', () => {
  it('a program with room to spare: every token allowed, the end of sequence allowed after it', () => {
    const text = 'max(1,2)';
    const r = replay(text, 20);
    expect(r.left_grammar_at).toBeNull();
    expect(r.over_budget_at).toBeNull();
    expect(r.steps.map((s) => s.allowed)).toEqual(new Array(text.length).fill(true));
    expect(r.steps.map((s) => s.text)).toEqual([...text].map((_, i) => text.slice(0, i + 1)));
    expect(r.final_allowed_count).toBeGreaterThanOrEqual(1); // the end of sequence
    expect(r.steps.every((s) => s.allowed_count! >= 1)).toBe(true);
  });

  it('the same program with no room for the end of sequence: a step where it stops fitting is marked, the text stays viable', () => {
    const text = 'max(1,2)';
    const r = replay(text, text.length);
    // the last token leaves no room for the end of sequence, so it is over budget at the latest
    expect(r.over_budget_at).toBeLessThanOrEqual(text.length - 1);
    expect(r.left_grammar_at).toBeNull();
    expect(r.over_budget_at).not.toBeNull();
    expect(r.steps[r.over_budget_at!]).toMatchObject({ allowed: false, viable: true });
    expect(r.steps.every((s) => s.viable === true)).toBe(true);
  });

  it('a text that leaves the grammar: the step of the first bad character, nothing counted after it', () => {
    const r = replay('max(1,,2)', 20);
    expect(r.left_grammar_at).toBe(6); // the second comma (0-based step 6)
    expect(r.steps[6]).toMatchObject({ allowed: false, viable: false, allowed_count: expect.any(Number) });
    expect(r.steps.slice(7).every((s) => s.allowed_count === null && s.viable === null)).toBe(true);
    expect(r.final_allowed_count).toBeNull();
  });
});

describe('treeView', () => {
  it('extents count non-space characters and grow in text order', () => {
    const text = '(1 + 2) * max(3, -4)';
    const tree = createParser(arith).parse(text);
    const v = treeView(arith, tree);
    expect(v.label).toBe('mul');
    expect(v.start).toBe(0);
    expect(v.end).toBe(text.replace(/\s/g, '').length);
    const [left, right] = v.children;
    expect([left.field, left.label, right.field, right.label]).toEqual(['left', 'add', 'right', 'call']);
    expect(right.children.map((c) => c.label)).toEqual(['max', 'num', 'neg']);
    // "(1+2)" is the first five characters: the parens the printer added belong to the node
    expect([left.start, left.end]).toEqual([0, 5]);
    // "max(3,-4)" is the last nine, its closing ")" included
    expect([right.start, right.end]).toEqual([6, 15]);
    const neg = right.children[2];
    expect([neg.start, neg.end]).toEqual([12, 14]); // "-4"
    const four = neg.children[0].children[0];
    expect(four).toMatchObject({ label: '4', field: 'value', start: 13, end: 14 });
  });
});

describe('treeView on the shipped samples', () => {
  // every valid sample program of every shipped grammar (one per line; # lines are comments)
  for (const [g, file] of [['sql', 'valid.sql'], ['lf', 'valid.lf'], ['arith', 'valid.arith'], ['json', 'valid.json']]) {
    it(`${g}: nodes nest, siblings come in text order, the root spans the program`, () => {
      const grammar = loadGrammar(`grammars/${g}/${g}.twg`);
      const parser = createParser(grammar);
      const lines = readFileSync(`grammars/${g}/samples/${file}`, 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));
      expect(lines.length).toBeGreaterThan(3);
      const check = (n: TreeViewNode) => {
        let prev = n.start;
        for (const c of n.children) {
          expect(c.start).toBeGreaterThanOrEqual(prev);
          expect(c.end).toBeGreaterThan(c.start);
          expect(c.end).toBeLessThanOrEqual(n.end);
          prev = c.end;
          check(c);
        }
      };
      for (const line of lines) {
        const tree = parser.parse(line);
        const v = treeView(grammar, tree);
        expect([v.start, v.end], line).toEqual([0, line.replace(/\s/g, '').length]);
        const filled = Object.entries(tree as Record<string, unknown>).some(([k, x]) => k !== 'kind' && x !== null && !(Array.isArray(x) && x.length === 0));
        if (filled) expect(v.children.length, line).toBeGreaterThan(0);
        check(v);
      }
    });
  }
});
