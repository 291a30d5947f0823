/**
 * String `pattern` (JSON Schema 2020-12 Validation §6.3.3, ECMA-262 regexes per Core §6.4; section
 * numbers from memory): a string is valid when the regex finds a match *somewhere* in it — the
 * keyword is not anchored — and minLength/maxLength count code points (Validation §6.3.1–2).
 *
 * Reference: ajv 8's draft 2020-12 validator (it runs `new RegExp(pattern, "u")`). For each schema
 * below, the generated description must accept the JSON.stringify spelling of a string exactly when
 * ajv accepts the string: checked on random strings (fast-check) over an alphabet made of the
 * pattern's own characters plus characters JSON must escape (`"`, `\`, controls), white space,
 * non-ASCII and astral characters, and on every sampled program (which must also satisfy
 * JSON.parse). Unsupported regex features fail with the JSON path of the `pattern` keyword.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { fromSchema, SchemaError } from '../../src/from-schema/index.ts';
import { createSampler, printTree } from '../../src/tree/index.ts';
import { generate, parses, referenceValidator } from './support.ts';

interface Case {
  readonly pattern: string;
  readonly minLength?: number;
  readonly maxLength?: number;
}

const CASES: readonly Case[] = [
  { pattern: '^LOT-[0-9]{4}$' },
  { pattern: 'a+' },
  { pattern: '^a*$' },
  { pattern: '@', maxLength: 8 },
  { pattern: '@', minLength: 3, maxLength: 6 },
  { pattern: '^[a-z][a-z0-9_]*$', minLength: 2, maxLength: 12 },
  { pattern: '^(a|bc)*$', minLength: 2, maxLength: 5 },
  { pattern: 'x$|^y' },
  { pattern: '^(?:north|south)-[a-z]+', maxLength: 10 },
  { pattern: '[0-9]{2}$', minLength: 4 },
  { pattern: '"\\\\\\n' },
  { pattern: '^[^"\\\\]{2,4}$' },
  { pattern: '^.{3}$' },
  { pattern: '\\s' },
  { pattern: '^\\S+$', maxLength: 4 },
  { pattern: '😀|é' },
  { pattern: '^(?:[A-Z]{2}-)?\\d{3}(?:\\.\\d)?$' },
  { pattern: '(a?b?)*c', maxLength: 4 },
  { pattern: '' },
  { pattern: '^$' },
  { pattern: '[\\u0000-\\u001f]' },
  { pattern: '^\\w+@\\w+\\.(?:com|org)$', minLength: 7 },
];

const schemaOf = (c: Case) => ({ type: 'string', ...c });

/** Characters the pattern mentions, and characters that test escaping, white space and code points. */
function alphabet(pattern: string): string[] {
  const own = [...pattern.replace(/\\[dDwWsS]|[\\^$.*+?()[\]{}|]/g, '')];
  return [...new Set([...own, 'a', 'b', 'c', 'x', 'y', '@', '-', '0', '7', 'Z', ' ', '"', '\\', '/', '\n', '\t', '\u0001', '\u001f', '\u007f', '\u00a0', 'é', '\u2028', '😀', '𝔸'])];
}

describe('pattern: the description accepts exactly what ajv accepts (random strings and samples)', () => {
  it.each(CASES.map((c) => [JSON.stringify(c), c] as const))('%s', (_name, c) => {
    const schema = schemaOf(c);
    const gen = generate(schema);
    const validate = referenceValidator(true).compile(schema);
    const chars = alphabet(c.pattern);
    let valid = 0;
    fc.assert(
      fc.property(fc.array(fc.constantFrom(...chars), { maxLength: 14 }), (units) => {
        const s = units.join('');
        const ok = validate(s);
        if (ok) valid++;
        expect(parses(gen, JSON.stringify(s)), `${JSON.stringify(s)}: ajv says ${ok}\n${gen.text}`).toBe(ok);
      }),
      { numRuns: 400, seed: 16 },
    );
    // programs sampled from the description: JSON texts (JSON.parse) of strings ajv accepts; and
    // near misses (one character inserted, dropped or replaced) decided as ajv decides them
    const sampler = createSampler(gen.grammar, { seed: 3 });
    let rand = 12345;
    const next = (n: number) => ((rand = (rand * 1103515245 + 12345) % 2147483648), rand % n);
    let nearValid = 0;
    for (let i = 0; i < 60; i++) {
      const text = printTree(gen.grammar, sampler.next());
      const value = JSON.parse(text) as unknown;
      expect(value).toBeTypeOf('string');
      expect(validate(value), `${text} sampled, refused by ajv`).toBe(true);
      expect(text).toBe(JSON.stringify(value));
      const units = [...(value as string)];
      for (let m = 0; m < 4; m++) {
        const u = [...units];
        const at = next(u.length + 1);
        const ch = chars[next(chars.length)]!;
        const op = next(3);
        if (op === 0) u.splice(at, 0, ch);
        else if (op === 1) u.splice(at, 1);
        else u.splice(at, 1, ch);
        const s = u.join('');
        const ok = validate(s);
        if (ok) nearValid++;
        expect(parses(gen, JSON.stringify(s)), `near miss ${JSON.stringify(s)}: ajv says ${ok}`).toBe(ok);
      }
    }
    if (process.env.SHOW_PATTERN) console.log(`${JSON.stringify(c)}: random strings ${valid}/400 valid, near misses ${nearValid}/240 valid`);
  }, 120_000);
});

describe('pattern: written spelling and errors', () => {
  it('an anchored pattern stays readable; lengths become counts', () => {
    const lot = fromSchema(JSON.stringify({ type: 'string', pattern: '^LOT-[0-9]{4}$' }), { name: 'lot' }).text;
    expect(lot).toContain('token Lot = /"LOT-\\d{4}"/u as json-string');
    const name = fromSchema(JSON.stringify({ type: 'string', pattern: '^[a-z][a-z0-9_]*$', minLength: 2, maxLength: 12 }), { name: 'n' }).text;
    expect(name).toContain('/"[a-z][0-9_a-z]{1,11}"/u');
  });

  const refused = (schema: object): string => {
    try {
      fromSchema(JSON.stringify(schema, null, 1), { name: 'g' });
    } catch (e) {
      if (e instanceof SchemaError) return e.message;
      throw e;
    }
    throw new Error('accepted');
  };

  it('unsupported regex features fail loudly with the JSON path and the place in the pattern', () => {
    const look = refused({ type: 'object', properties: { code: { type: 'string', pattern: '^(?=AB)[A-Z]+$' } } });
    expect(look).toContain('error: #/properties/code/pattern: not supported: a lookahead group is not supported in token patterns');
    expect(look).toContain('(at character 2 of the pattern)');
    expect(refused({ type: 'string', pattern: '(a)\\1' })).toContain('#/pattern: not supported: a back-reference');
    expect(refused({ type: 'string', pattern: '\\bfig' })).toContain('#/pattern: not supported: the assertion \\b');
    expect(refused({ type: 'string', pattern: '\\p{Letter}' })).toContain('#/pattern: not supported: the property escape');
    expect(refused({ type: 'string', pattern: '(^a)b' })).toContain('#/pattern: not supported: the anchor ^ here');
    expect(refused({ type: 'string', pattern: '[' })).toMatch(/#\/pattern: not an ECMAScript regular expression/);
    expect(refused({ type: 'string', pattern: 5 })).toContain('#/pattern must be a string');
    expect(refused({ type: 'string', format: 'date', pattern: '^2' })).toContain('#/pattern: pattern together with format cannot be expressed');
  });

  it('a pattern too large for one token class is an error naming it, not a hang', () => {
    // an unanchored pattern under a long length bound: one copy per start position
    const big = refused({ type: 'string', pattern: '(ab|cd|ef)+x', maxLength: 200 });
    expect(big).toMatch(/#\/pattern is too large to write as one token class/);
    // the classic exponential automaton: the 20th character from the end
    expect(refused({ type: 'string', pattern: 'a[ab]{20}$' })).toMatch(/#\/pattern is too large to write as one token class/);
  }, 120_000);

  it('enum values are checked against the pattern with the automaton (no backtracking on a hostile pattern)', () => {
    const text = fromSchema(JSON.stringify({ enum: ['a'.repeat(40), 'a'.repeat(39) + 'b'], pattern: '^(a+)+$' }), { name: 'e' }).text;
    expect(text).toContain(`"${'a'.repeat(40)}"`);
    expect(text).not.toContain(`${'a'.repeat(39)}b`);
  });
});
