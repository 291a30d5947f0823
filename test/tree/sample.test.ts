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

describe('plausible sampling (treewright sample\'s default)', () => {
  // what "plausible" promises (SampleOptions.plausible): same contract as the uniform draw, and
  // programs shaped like people's: few one-literal programs, x/y/z variables, small or round numbers
  const isLeaf = (t: Tree) => !Object.values(t).some((v) => (Array.isArray(v) ? v.length > 0 : v !== null && typeof v === 'object'));
  it.each(['arith', 'json', 'lf', 'sql'])('%s: well-typed, within the depth bound, reproducible', (g) => {
    const a = createSampler(grammar(g), { seed: 9, maxDepth: 4, plausible: true });
    const b = createSampler(grammar(g), { seed: 9, maxDepth: 4, plausible: true });
    for (let i = 0; i < 100; i++) {
      const t = a.next();
      expect(b.next()).toEqual(t);
      expect(depth(t)).toBeLessThanOrEqual(4);
      expect(validateTree(grammar(g), t)).toBeNull();
    }
  });
  it('json: a one-literal document is rare (uniform: most of them)', () => {
    const count = (plausible: boolean) => {
      const s = createSampler(grammar('json'), { seed: 4, maxDepth: 4, plausible });
      let leaves = 0;
      for (let i = 0; i < 300; i++) if (isLeaf(s.next())) leaves++;
      return leaves;
    };
    expect(count(true)).toBeLessThan(45);
    expect(count(false)).toBeGreaterThan(150);
  });
  it('lf: inside a binder, terms are mostly its variables (uniform: half of them at most)', () => {
    // count Term nodes (var or const) below a binder: plausible draws use the variable in scope
    const share = (plausible: boolean) => {
      const s = createSampler(grammar('lf'), { seed: 5, maxDepth: 5, plausible });
      let vars = 0;
      let terms = 0;
      const walk = (v: TreeValue, inside: boolean) => {
        if (Array.isArray(v)) v.forEach((x) => walk(x, inside));
        else if (v !== null && typeof v === 'object') {
          const t = v as Tree;
          if (inside && (t.kind === 'var' || t.kind === 'const')) {
            terms++;
            if (t.kind === 'var') vars++;
          }
          const binds = typeof t.var === 'string';
          for (const [k, x] of Object.entries(t)) if (k !== 'kind') walk(x as TreeValue, inside || binds);
        }
      };
      for (let i = 0; i < 300; i++) walk(s.next(), false);
      expect(terms).toBeGreaterThan(50);
      return vars / terms;
    };
    expect(share(true)).toBeGreaterThan(0.7);
    expect(share(false)).toBeLessThan(0.6);
  });
  it('lf: variables are $x, $y, $z … in binding order; numbers are small or round', () => {
    const s = createSampler(grammar('lf'), { seed: 2, maxDepth: 5, plausible: true });
    const vars = new Set<string>();
    const numbers: number[] = [];
    const walk = (v: TreeValue, key: string) => {
      if (Array.isArray(v)) v.forEach((x) => walk(x, key));
      else if (v !== null && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x as TreeValue, k);
      else if (typeof v === 'string' && v.startsWith('$')) vars.add(v);
      else if (typeof v === 'number') numbers.push(v);
    };
    for (let i = 0; i < 200; i++) walk(s.next(), '');
    expect(vars.size).toBeGreaterThan(0);
    for (const v of vars) expect(['$x', '$y', '$z', '$w', '$v', '$u', '$t', '$s']).toContain(v);
    expect(numbers.length).toBeGreaterThan(0);
    for (const n of numbers) expect(n <= 10 || n % 5 === 0 || (n >= 1990 && n <= 2025) || n * 4 === Math.round(n * 4), String(n)).toBe(true);
  });
});
