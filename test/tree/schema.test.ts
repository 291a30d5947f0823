/**
 * JSON Schema export, checked with ajv's draft 2020-12 implementation (the outside reference for
 * the standard: ajv 8, `ajv/dist/2020`): the exported schema compiles in strict mode, every sampled
 * tree validates, and mutated trees (a dropped field, a wrong kind, a wrong JSON type, an extra
 * field) do not — and validateTree agrees with ajv on each mutant.
 */
import { Ajv2020 } from 'ajv/dist/2020.js';
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import type { Grammar, NameBindings } from '../../src/description/ir.ts';
import { createSampler, mulberry32, namesFromJson, toJsonSchema, validateTree, type Tree, type TreeValue } from '../../src/tree/index.ts';


const SAMPLES = 250;
const GRAMMARS = ['arith', 'json', 'lf', 'sql'] as const;

type Mutable = { kind: string; [k: string]: unknown };

/** Every node of a tree with its parent link, depth-first. */
function nodes(t: Tree): Mutable[] {
  const out: Mutable[] = [];
  const walk = (v: TreeValue) => {
    if (Array.isArray(v)) v.forEach(walk);
    else if (v !== null && typeof v === 'object') {
      out.push(v as Mutable);
      for (const [k, x] of Object.entries(v)) if (k !== 'kind') walk(x as TreeValue);
    }
  };
  walk(t);
  return out;
}

const clone = (t: Tree): Tree => structuredClone(t) as Tree;

/** Four mutants of `t`, each invalid by construction; null where the tree has no place for one. */
function mutants(t: Tree, rand: () => number, otherKind: (kind: string) => string): { what: string; tree: Tree }[] {
  const out: { what: string; tree: Tree }[] = [];
  const pick = <T,>(xs: T[]) => xs[Math.floor(rand() * xs.length)]!;
  {
    const m = clone(t);
    const withFields = nodes(m).filter((n) => Object.keys(n).length > 1);
    if (withFields.length > 0) {
      const n = pick(withFields);
      delete n[pick(Object.keys(n).filter((k) => k !== 'kind'))];
      out.push({ what: 'dropped field', tree: m });
    }
  }
  {
    const m = clone(t);
    const n = pick(nodes(m));
    n.kind = otherKind(n.kind);
    out.push({ what: 'wrong kind', tree: m });
  }
  {
    const m = clone(t);
    const withFields = nodes(m).filter((n) => Object.keys(n).length > 1);
    if (withFields.length > 0) {
      const n = pick(withFields);
      const k = pick(Object.keys(n).filter((x) => x !== 'kind'));
      const v = n[k];
      // a JSON value of another type than the field's: null (an absent optional, which may be a
      // token) becomes an object that is no node, objects/arrays a number, scalars an object
      n[k] = v === null ? { not: 'a node' } : typeof v === 'object' ? 12345 : typeof v === 'number' ? { not: 'a number' } : true;
      out.push({ what: 'wrong type', tree: m });
    }
  }
  {
    const m = clone(t);
    pick(nodes(m)).extra_field = 1;
    out.push({ what: 'extra field', tree: m });
  }
  return out;
}

function namesFor(name: string): NameBindings | undefined {
  if (name === 'arith') return { Func: ['max', 'min'] };
  if (name === 'sql') return { Table: ['growers', 'orchards'], Column: ['id', 'name', 'village'] };
  return undefined;
}

describe.each(GRAMMARS)('%s', (name) => {
  const grammar: Grammar = loadGrammar(`grammars/${name}/${name}.twg`);
  const names = namesFor(name);
  const ajv = new Ajv2020({ strict: true, allErrors: false });
  const validate = ajv.compile(toJsonSchema(grammar, names));
  // a kind from another sort (or an unknown one when the grammar has a single sort)
  const otherKind = (kind: string) => {
    const sort = grammar.constructors.find((c) => c.name === kind)!.sort;
    return grammar.constructors.find((c) => c.sort !== sort)?.name ?? 'no_such_constructor';
  };

  it('declares draft 2020-12 and one $defs entry per sort', () => {
    const schema = toJsonSchema(grammar, names);
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    for (const s of grammar.sorts) expect(Object.keys(schema.$defs as object)).toContain(s.name);
  });

  it(`accepts ${SAMPLES} sampled trees and rejects their mutants`, () => {
    const sampler = createSampler(grammar, { seed: 99, maxDepth: 6, names });
    const rand = mulberry32(7);
    let rejected = 0;
    for (let i = 0; i < SAMPLES; i++) {
      const tree = sampler.next();
      expect(validate(tree), JSON.stringify(validate.errors)).toBe(true);
      for (const m of mutants(tree, rand, otherKind)) {
        expect(validate(m.tree), `${m.what}: ${JSON.stringify(m.tree)}`).toBe(false);
        expect(validateTree(grammar, m.tree, { names }), m.what).not.toBeNull();
        rejected++;
      }
    }
    expect(rejected).toBeGreaterThanOrEqual(SAMPLES * 2);
  });

  if (names !== undefined) {
    it('rejects a name outside a bound set (enum)', () => {
      const tree = createSampler(grammar, { seed: 3, maxDepth: 6, names }).next();
      const set = Object.keys(names)[0]!;
      const field = grammar.constructors.flatMap((c) => c.fields.map((f) => ({ c, f }))).find(({ f }) => f.type.kind === 'names' && f.type.name === set)!;
      // find a node of that constructor in a few samples and rename the member
      const sampler = createSampler(grammar, { seed: 4, maxDepth: 6, names });
      for (let i = 0; i < 200; i++) {
        const t = i === 0 ? tree : sampler.next();
        const node = nodes(t).find((n) => n.kind === field.c.name && typeof n[field.f.name] === 'string');
        if (node === undefined) continue;
        node[field.f.name] = 'zznotbound';
        expect(validate(t)).toBe(false);
        expect(validateTree(grammar, t, { names })?.message).toBe(`unknown name 'zznotbound' for ${set}`);
        return;
      }
      throw new Error(`no ${field.c.name} node in 200 samples`);
    });
  }
});

describe('sql with owners bound: what the schema says about scopes', () => {
  const grammar = loadGrammar('grammars/sql/sql.twg');
  const names = namesFromJson({ Table: ['growers', 'orchards'], Column: { id: ['growers', 'orchards'], village: ['growers'], hectares: ['orchards'] } }, 'names', grammar);
  const ajv = new Ajv2020({ strict: true, allErrors: false });
  const validate = ajv.compile(toJsonSchema(grammar, names));
  const query = (col: unknown) => ({ kind: 'select', distinct: null, items: [{ kind: 'column', col }], from: 'growers', joins: [], where: null, order: [], limit: null });

  it('a qualified column must belong to its table (if/then per table)', () => {
    expect(validate(query({ kind: 'col', table: 'growers', column: 'village' }))).toBe(true);
    expect(validate(query({ kind: 'col', table: 'growers', column: 'hectares' }))).toBe(false);
    expect(validateTree(grammar, query({ kind: 'col', table: 'growers', column: 'hectares' }), { names })?.message).toBe(
      '`hectares` is not a Column of `growers` (its Column names: id, village)',
    );
  });

  it('what needs the rest of the tree is described, and left to validateTree', () => {
    // `hectares` is a column, but of no table in this query: only validateTree sees it
    const tree = query({ kind: 'col', table: null, column: 'hectares' });
    expect(validate(tree)).toBe(true);
    expect(validateTree(grammar, tree, { names })?.message).toBe('`hectares` is not a Column of any Table in scope (growers)');
    const col = ((toJsonSchema(grammar, names).$defs as Record<string, { oneOf: { properties: Record<string, { description?: string }> }[] }>).ColumnRef!).oneOf[0]!;
    expect(col.properties.column!.description).toBe(
      'must be a Column of exactly one Table in the innermost scope that has one (the one named by table when present) (checked by validateTree, not by this schema)',
    );
  });
});
