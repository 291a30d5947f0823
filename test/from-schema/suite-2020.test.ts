/**
 * JSON Schema Test Suite cases for keywords new in (or changed by) draft 2020-12 — const,
 * prefixItems, items after prefixItems, numeric exclusiveMinimum/exclusiveMaximum, $defs and $ref
 * (escaped pointers, recursion), string lengths in code points, the date, date-time and email
 * formats, and `pattern` (pattern.json, and optional/ecmascript-regex.json on ECMA-262 semantics) —
 * written out from the suite's tests/draft2020-12 files (typed from memory; source file
 * named in each group of test/cases/from-schema/suite-2020-12.json). Because they are typed from
 * memory, ajv's draft 2020-12 validator (with ajv-formats) must agree with every "valid" flag
 * first. Then, as in suite.test.ts: valid documents parse in canonical key order unless a
 * documented policy explains why not; invalid documents are refused.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { SchemaError } from '../../src/from-schema/index.ts';
import { canonicalTexts, generate, parses, policyReason, referenceValidator } from './support.ts';

type Group = { file: string; description: string; schema: unknown; tests: { description: string; data: unknown; valid: boolean }[] };
const { groups } = JSON.parse(readFileSync(new URL('../cases/from-schema/suite-2020-12.json', import.meta.url), 'utf8')) as { groups: Group[] };

// ajv-formats accepts a leap second only at 23:59:60 UTC, as the suite does; the description writes
// seconds 00–59 (policy), so that valid document is outside by policy, named here.
const LEAP_SECOND = '1998-12-31T23:59:60Z';

describe('JSON-Schema-Test-Suite draft 2020-12 (written out from memory)', () => {
  it.each(groups.map((g) => [`${g.file}: ${g.description}`, g] as const))('%s', (_name, g) => {
    const validate = referenceValidator().compile(g.schema as object);
    for (const t of g.tests) expect(validate(t.data), `ajv on ${t.description} (check of the written-out case)`).toBe(t.valid);
    let gen;
    try {
      gen = generate(g.schema);
    } catch (e) {
      if (e instanceof SchemaError) throw new Error(`refused: ${e.message}`);
      throw e;
    }
    for (const t of g.tests) {
      const texts = canonicalTexts(t.data as never, g.schema as never, g.schema as never);
      const ok = texts.some((x) => parses(gen, x));
      if (t.valid && !ok) {
        const why = t.data === LEAP_SECOND ? 'leap second' : policyReason(t.data as never, g.schema as never, g.schema as never);
        expect(why, `valid ${JSON.stringify(t.data)} (${t.description}) refused as ${texts.join(' | ')}\n${gen.text}`).not.toBeNull();
      }
      if (!t.valid) expect(ok, `invalid ${JSON.stringify(t.data)} (${t.description}) parsed`).toBe(false);
    }
  });
});
