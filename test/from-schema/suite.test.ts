/**
 * The JSON Schema Test Suite on the supported keywords.
 *
 * Source: the npm package json-schema-test-suite 0.0.10 (the JSON-Schema-Test-Suite's tests/draft4
 * files; no npm package carries the draft 2020-12 folder). Its groups for keywords whose meaning did
 * not change between draft 4 and draft 2020-12 are read from the package and converted mechanically
 * (definitions → $defs, array-form items → prefixItems, additionalItems → items, boolean
 * exclusiveMaximum → a number, siblings of $ref dropped as draft 4 ignores them). ajv's draft 2020-12
 * validator (the reference) must agree with every converted test's "valid" flag — that checks the
 * conversion. Cases of keywords new in 2020-12 are transcribed in suite-2020.test.ts.
 *
 * For each group: a schema outside the subset must be refused by fromSchema with a located
 * message; otherwise every document marked valid parses with the generated description (spelled
 * in its canonical key order) unless a documented policy explains why not, and every document
 * marked invalid is refused.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { SchemaError } from '../../src/from-schema/index.ts';
import { canonicalTexts, generate, parses, policyReason, referenceValidator } from './support.ts';

const DIR = join(new URL('../../', import.meta.url).pathname, 'node_modules/json-schema-test-suite/tests/draft4');
type Group = { description: string; schema: unknown; tests: { description: string; data: unknown; valid: boolean }[] };

/** draft 4 → draft 2020-12, for the keywords whose meaning carried over. */
export function convert(s: unknown): unknown {
  if (Array.isArray(s)) return s.map(convert);
  if (s === null || typeof s !== 'object') return s;
  const o = s as Record<string, unknown>;
  if (typeof o.$ref === 'string') {
    // draft 4 ignores the siblings of $ref (definitions stay: they are only a place to refer to)
    const ref = { $ref: o.$ref.replace(/^#\/definitions\//, '#/$defs/').replace(/^#\/items\//, '#/prefixItems/') };
    return 'definitions' in o ? { ...ref, $defs: convertMap(o.definitions) } : ref;
  }
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) {
    if (k === '$schema' || k === 'additionalItems' || k === 'exclusiveMaximum' || k === 'exclusiveMinimum') continue;
    if (k === 'definitions') out.$defs = convertMap(v);
    else if (k === 'properties' || k === 'patternProperties' || k === 'dependencies') out[k] = convertMap(v);
    else if (k === 'items' && Array.isArray(v)) {
      out.prefixItems = v.map(convert);
      if ('additionalItems' in o) out.items = convert(o.additionalItems);
    } else if (k === 'maximum' && o.exclusiveMaximum === true) out.exclusiveMaximum = v;
    else if (k === 'minimum' && o.exclusiveMinimum === true) out.exclusiveMinimum = v;
    else if (k === 'id') out.$id = v;
    else out[k] = convert(v);
  }
  return out;
}

function convertMap(v: unknown): unknown {
  if (v === null || typeof v !== 'object') return v;
  return Object.fromEntries(Object.entries(v as object).map(([k, x]) => [k, convert(x)]));
}

// refRemote.json fetches schemas over the network; definitions.json validates against the draft-04
// meta-schema by its URL (also remote): neither has a local 2020-12 counterpart.
const FILES = readdirSync(DIR).filter((f) => f.endsWith('.json') && f !== 'refRemote.json' && f !== 'definitions.json').concat(['optional/format.json']);

describe('JSON-Schema-Test-Suite (draft 4 groups of unchanged keywords, converted)', () => {
  let supportedGroups = 0;
  let refusedGroups = 0;
  let validParsed = 0;
  let validByPolicy = 0;
  let invalidRefused = 0;
  for (const file of FILES) {
    const groups = JSON.parse(readFileSync(join(DIR, file), 'utf8')) as Group[];
    for (const g of groups) {
      it(`${file}: ${g.description}`, () => {
        const schema = convert(g.schema);
        let gen;
        try {
          gen = generate(schema);
        } catch (e) {
          if (!(e instanceof SchemaError)) throw e;
          // refused: a located message naming a JSON path of the schema
          expect(e.message).toMatch(/^<schema>:\d+:\d+: error: #/);
          refusedGroups++;
          return;
        }
        supportedGroups++;
        const validate = referenceValidator().compile(schema as object);
        for (const t of g.tests) expect(validate(t.data), `ajv on ${t.description} (conversion check)`).toBe(t.valid);
        for (const t of g.tests) {
          const texts = canonicalTexts(t.data as never, schema as never, schema as never);
          const ok = texts.some((x) => parses(gen, x));
          if (t.valid) {
            if (ok) validParsed++;
            else {
              const why = policyReason(t.data as never, schema as never, schema as never);
              expect(why, `valid document ${JSON.stringify(t.data)} (${t.description}) refused as ${texts.join(' | ')}\n${gen.text}`).not.toBeNull();
              validByPolicy++;
              if (process.env.SHOW_POLICY) console.log(`policy: ${file}: ${g.description}: ${JSON.stringify(t.data)}: ${why}`);
            }
          } else {
            expect(ok, `invalid document ${JSON.stringify(t.data)} (${t.description}) parsed as ${texts.find((x) => parses(gen, x))}`).toBe(false);
            invalidRefused++;
          }
        }
      });
    }
  }
  it('covers the suite', () => {
    // printed so the README figures come from a run
    console.log(`suite: ${supportedGroups} groups generated, ${refusedGroups} refused; valid parsed ${validParsed}, valid outside by policy ${validByPolicy}, invalid refused ${invalidRefused}`);
    expect(supportedGroups).toBeGreaterThan(20);
    expect(invalidRefused).toBeGreaterThan(50);
  });
});
