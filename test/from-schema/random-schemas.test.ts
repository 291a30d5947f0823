/**
 * Random schemas (seeded) over the supported subset, with an unsupported keyword now and then:
 * fromSchema either refuses with a located SchemaError or writes a description that compiles —
 * never another exception or a hang — and for every description written, sampled programs are
 * JSON texts (reference: JSON.parse) that the original schema accepts (reference: ajv 8, draft
 * 2020-12, ajv-formats) and print back identically after parsing. Inputs that once broke it are kept in
 * test/cases/from-schema/fuzz-kept.json.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { fromSchema, SchemaError } from '../../src/from-schema/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { rng } from '../masks/helpers.ts';
import { generate, referenceValidator } from './support.ts';

type S = Record<string, unknown> | boolean;

function randomSchema(rand: () => number, depth: number, defs: string[]): S {
  const pick = <T,>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]!;
  const int = (a: number, b: number) => a + Math.floor(rand() * (b - a + 1));
  const r = rand();
  if (r < 0.03) return rand() < 0.5;
  if (defs.length > 0 && r < 0.1) return { $ref: `#/$defs/${pick(defs)}` };
  const leaf = depth <= 0 || r < 0.45;
  const kind = leaf ? pick(['string', 'integer', 'number', 'boolean', 'null', 'enum', 'const', 'types']) : pick(['object', 'object', 'array', 'anyOf', 'oneOf']);
  const s: Record<string, unknown> = {};
  switch (kind) {
    case 'string':
      s.type = 'string';
      if (rand() < 0.25) s.format = pick(['date', 'date-time', 'email']);
      else {
        if (rand() < 0.5) s.minLength = int(0, 4);
        if (rand() < 0.5) s.maxLength = int(0, 12);
        if (rand() < 0.35) s.pattern = pick(['^[a-z]+$', 'b', '^x', 'y$', '^(?:ab|c)*$', '\\d{2}', '^[^"\\\\]?$', 'é|😀', '\\s', '^a|b$']);
      }
      break;
    case 'integer':
    case 'number': {
      s.type = kind;
      const a = Math.round((rand() - 0.5) * 10 ** int(0, 5) * 100) / (kind === 'integer' ? 100 : 10 ** int(0, 4));
      if (rand() < 0.6) s[rand() < 0.2 ? 'exclusiveMinimum' : 'minimum'] = a;
      if (rand() < 0.6) s[rand() < 0.2 ? 'exclusiveMaximum' : 'maximum'] = a + Math.round(rand() * 10 ** int(0, 4) * 100) / 100;
      break;
    }
    case 'boolean':
    case 'null':
      s.type = kind;
      break;
    case 'enum':
      s.enum = Array.from({ length: int(1, 4) }, () => pick([1, -2.5, 0, 'a', 'b c', 'north', null, true, false, [1, 'x'], { k: 1 }, 1e21, '']));
      break;
    case 'const':
      s.const = pick(['on', 3, null, { a: [true] }, 'x y']);
      break;
    case 'types':
      s.type = [...new Set([pick(['string', 'integer', 'null']), pick(['number', 'boolean', 'null'])])];
      if (rand() < 0.5) s.maxLength = int(1, 5);
      if (rand() < 0.5) s.minimum = int(-5, 5);
      break;
    case 'object': {
      s.type = 'object';
      const props: Record<string, S> = {};
      const n = int(0, 4);
      for (let i = 0; i < n; i++) props[pick(['a', 'b', 'c', 'shed', 'kind', 'start', '10', 'x y', 'd'])] = randomSchema(rand, depth - 1, defs);
      s.properties = props;
      const keys = Object.keys(props);
      if (keys.length > 0 && rand() < 0.7) s.required = keys.filter(() => rand() < 0.5);
      if (rand() < 0.7) s.additionalProperties = false;
      break;
    }
    case 'array':
      s.type = 'array';
      if (rand() < 0.4) s.prefixItems = Array.from({ length: int(1, 3) }, () => randomSchema(rand, depth - 1, defs));
      if (rand() < 0.8) s.items = rand() < 0.15 ? false : randomSchema(rand, depth - 1, defs);
      if (rand() < 0.5) s.minItems = int(0, 3);
      if (rand() < 0.5) s.maxItems = int(0, 5);
      break;
    case 'anyOf':
    case 'oneOf': {
      const n = int(1, 3);
      if (kind === 'oneOf' && rand() < 0.6) {
        s.oneOf = Array.from({ length: n }, (_, i) => ({ type: 'object', properties: { tag: { const: `t${i}` }, v: randomSchema(rand, depth - 1, defs) }, required: ['tag'], additionalProperties: false }));
      } else s[kind] = Array.from({ length: n }, () => randomSchema(rand, depth - 1, defs));
      break;
    }
  }
  if (rand() < 0.04) s[pick(['multipleOf', 'pattern', 'allOf', 'uniqueItems', 'requried'])] = pick([2, '(?=a)', [], true]);
  if (rand() < 0.1) s.description = 'invented';
  return s;
}

/** Samples of a written description are JSON texts the schema accepts and print back identically. */
function checkSamples(text: string, schema: unknown, seed: number): void {
  const g = generate(text, 'r');
  const validate = referenceValidator().compile(schema as object);
  const sampler = createSampler(g.grammar, { seed, maxDepth: 6 });
  for (let i = 0; i < 30; i++) {
    const out = printTree(g.grammar, sampler.next());
    const value = JSON.parse(out) as unknown;
    expect(validate(value), `${text}\n${out}\n${JSON.stringify(validate.errors)}`).toBe(true);
    // text round trip (trees may differ where anyOf branches overlap: the parser takes the first)
    expect(printTree(g.grammar, g.parser.parse(out)), out).toBe(out);
  }
}

describe('kept inputs that once broke from-schema', () => {
  const kept = JSON.parse(readFileSync(new URL('../cases/from-schema/fuzz-kept.json', import.meta.url), 'utf8')) as unknown[];
  it.each(kept.map((s, i) => [i, s] as const))('#%s', (i, schema) => {
    checkSamples(JSON.stringify(schema), schema, i);
  });
});

describe('random schemas', () => {
  it('are refused with a located message, or give descriptions whose samples ajv accepts', () => {
    const rand = rng(16);
    let written = 0;
    let refused = 0;
    for (let k = 0; k < 150; k++) {
      const defs: Record<string, S> = {};
      const names = rand() < 0.4 ? ['p', 'q'] : [];
      for (const n of names) defs[n] = randomSchema(rand, 2, names);
      const root = randomSchema(rand, 3, names);
      const schema = typeof root === 'object' && names.length > 0 ? { ...root, $defs: defs } : root;
      const text = JSON.stringify(schema);
      let ok = true;
      try {
        fromSchema(text, { file: 'r.json', name: 'r' });
      } catch (e) {
        if (!(e instanceof SchemaError)) throw new Error(`${text}: ${(e as Error).stack}`);
        expect(e.message, text).toMatch(/^r\.json(:\d+:\d+)?: error: #/);
        ok = false;
        refused++;
      }
      if (!ok) continue;
      written++;
      checkSamples(text, schema, k);
    }
    expect(written).toBeGreaterThan(60);
    expect(refused).toBeGreaterThan(5);
  }, 600_000);
});
