/**
 * Sampler: reproducible from the seed, within the depth bound, respects weights (0 disables a
 * constructor), draws names from bound sets and variables from scope, and generates token values
 * that match the class regex — both the JavaScript regex and the parser's PEG translation of it.
 */
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { createParser, createSampler, mulberry32, SampleError, sampleTree, validateTree, type Tree, type TreeValue } from '../../src/tree/index.ts';
import { grammarInfo } from '../../src/tree/info.ts';
import { tokenValue } from '../../src/tree/sample.ts';
import { valueToLexeme } from '../../src/tree/lexeme.ts';
import { parserGrammar } from '../../src/tree/parse.ts';

const grammars: Record<string, Grammar> = {};
const grammar = (name: string) => (grammars[name] ??= loadGrammar(`grammars/${name}/${name}.twg`));

function depth(v: TreeValue): number {
  if (Array.isArray(v)) return v.reduce<number>((m, x) => Math.max(m, depth(x)), 0);
  if (v !== null && typeof v === 'object') return 1 + Object.values(v).reduce<number>((m, x) => Math.max(m, depth(x as TreeValue)), 0);
  return 0;
}

function kinds(v: TreeValue, out = new Map<string, number>()): Map<string, number> {
  if (Array.isArray(v)) v.forEach((x) => kinds(x, out));
  else if (v !== null && typeof v === 'object') {
    const k = (v as Tree).kind;
    out.set(k, (out.get(k) ?? 0) + 1);
    Object.values(v).forEach((x) => kinds(x as TreeValue, out));
  }
  return out;
}

describe('mulberry32', () => {
  it('is deterministic and spreads over [0, 1)', () => {
    const a = mulberry32(42), b = mulberry32(42);
    const xs = Array.from({ length: 1000 }, () => a());
    expect(Array.from({ length: 1000 }, () => b())).toEqual(xs);
    expect(Math.min(...xs)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...xs)).toBeLessThan(1);
    // mean of 1000 uniforms: 0.5 ± 4.5 standard errors (sd 0.0091) — common practice, no source
    const mean = xs.reduce((s, x) => s + x, 0) / xs.length;
    expect(Math.abs(mean - 0.5)).toBeLessThan(0.041);
  });
});

describe('sampleTree', () => {
  it('same seed, same tree; different seeds differ', () => {
    expect(sampleTree(grammar('sql'), { seed: 5 })).toEqual(sampleTree(grammar('sql'), { seed: 5 }));
    const texts = new Set(Array.from({ length: 20 }, (_, i) => JSON.stringify(sampleTree(grammar('sql'), { seed: i }))));
    expect(texts.size).toBeGreaterThan(15);
  });
  it.each(['arith', 'json', 'lf', 'sql'])('%s: stays within the depth bound and is well-typed', (g) => {
    for (const maxDepth of [3, 5, 8]) {
      const s = createSampler(grammar(g), { seed: maxDepth, maxDepth });
      for (let i = 0; i < 100; i++) {
        const t = s.next();
        expect(depth(t)).toBeLessThanOrEqual(maxDepth);
        expect(validateTree(grammar(g), t)).toBeNull();
      }
    }
  });
  it('a depth below the smallest tree is an error', () => {
    expect(() => sampleTree(grammar('sql'), { seed: 1, maxDepth: 1 })).toThrow(new SampleError('max depth 1 is below the depth 2 of the smallest Query tree'));
  });
  it('weight 0 disables a constructor; weights shift the mix', () => {
    const s = createSampler(grammar('arith'), { seed: 1, maxDepth: 6, weights: { add: 0, pow: 0 } });
    const all = new Map<string, number>();
    for (let i = 0; i < 200; i++) for (const [k, n] of kinds(s.next())) all.set(k, (all.get(k) ?? 0) + n);
    expect(all.get('add')).toBeUndefined();
    expect(all.get('pow')).toBeUndefined();
    expect(all.get('mul')).toBeGreaterThan(0);
    const heavy = createSampler(grammar('arith'), { seed: 1, maxDepth: 6, weights: { call: 20 } });
    let calls = 0, nums = 0;
    for (let i = 0; i < 200; i++) {
      const k = kinds(heavy.next());
      calls += k.get('call') ?? 0;
      nums += k.get('num') ?? 0;
    }
    expect(calls).toBeGreaterThan(nums / 4);
  });
  it('disabling every way to finish is an error', () => {
    expect(() => sampleTree(grammar('arith'), { seed: 1, weights: { num: 0 } })).toThrow('no finite tree of sort Expr exists with these weights and names');
    expect(() => sampleTree(grammar('arith'), { seed: 1, weights: { nope: 1 } })).toThrow('weights: unknown constructor nope');
  });
  it('names come from bound sets; variables from scope', () => {
    const names = { Entity: ['mara'], Class: ['orchard'], Rel: ['owns'], Measure: ['hectares'] };
    const s = createSampler(grammar('lf'), { seed: 11, maxDepth: 7, names });
    let vars = 0;
    for (let i = 0; i < 200; i++) {
      const t = s.next();
      expect(validateTree(grammar('lf'), t, { names })).toBeNull();
      vars += kinds(t).get('var') ?? 0;
    }
    expect(vars).toBeGreaterThan(0);
  });
  it('an empty bound set removes the constructors that need it', () => {
    const s = createSampler(grammar('lf'), { seed: 2, maxDepth: 6, names: { Entity: [] } });
    for (let i = 0; i < 100; i++) expect(kinds(s.next()).get('const')).toBeUndefined();
  });
});

describe('token values', () => {
  it.each(['arith', 'json', 'lf', 'sql'])('%s: generated lexemes match the JavaScript regex and the parser rule', (g) => {
    const gr = grammar(g);
    const info = grammarInfo(gr);
    const og = parserGrammar(gr);
    const rand = mulberry32(3);
    gr.tokens.forEach((t, i) => {
      const ti = info.token.get(t.name)!;
      for (let k = 0; k < 200; k++) {
        const lexeme = valueToLexeme(t.value, tokenValue(ti, rand));
        expect(new RegExp(`^(?:${t.pattern})$`, t.flags).test(lexeme), lexeme).toBe(true); // V8 RegExp, the reference
        expect(og.match(lexeme, `tok${i}`).succeeded(), `${t.name} ${lexeme}`).toBe(true);
      }
    });
  });
});
